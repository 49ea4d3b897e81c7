/**
 * report.html from a run folder's files alone. The page holds no clock reading and no path of
 * the folder itself (a run writes its report inside `.partial-…` before the rename), so building
 * it again from the finished folder gives the same bytes.
 */
import { closeSync, fsyncSync, openSync, renameSync, unlinkSync, writeFileSync } from 'node:fs';
import { escapeHtml } from './format.js';
import { page } from './html.js';
import { readRunFiles } from './read.js';
import { binsSection, chartsSection, dataSection, disparitySection, header, modelsSection, summarySection, timingsSection } from './sections.js';

export const REPORT_FILE = 'report.html';

export async function buildReport(runDir: string): Promise<string> {
  const run = await readRunFiles(runDir);
  const sections = [summarySection(run), dataSection(run), chartsSection(run), modelsSection(run), binsSection(run), disparitySection(run), timingsSection(run)];
  const footer = `<footer>Built by <code>foldstack report</code> from manifest.json, metrics.json, ${escapeHtml(run.sample.part)}.csv${run.bins ? ' and bins.csv' : ''} of run “${escapeHtml(run.manifest.name)}” started ${escapeHtml(run.manifest.created)} (foldstack ${escapeHtml(run.manifest.code_version)}).</footer>`;
  return page(`${run.manifest.name} — foldstack run report`, header(run), sections, footer);
}

/** Build and write atomically (temp file, fsync, rename), so a reader never sees half a page. */
export async function writeReport(runDir: string, out: string): Promise<void> {
  const html = await buildReport(runDir);
  const tmp = `${out}.tmp-${process.pid}`;
  try {
    writeFileSync(tmp, html);
    const fd = openSync(tmp, 'r');
    try {
      fsyncSync(fd);
    } finally {
      closeSync(fd);
    }
    renameSync(tmp, out);
  } catch (err) {
    try {
      unlinkSync(tmp);
    } catch {
      // The temp file may never have been created; the original error is the one to report.
    }
    throw err;
  }
}
