/**
 * Scores a CSV file with a bundle, chunk by chunk: read rows (input.ts), replay the run's chain
 * (score.ts), pick reasons (reasons.ts), append to a temporary output file, and count drift
 * (drift.ts). The output appears under its name only when every row is written (temp + fsync +
 * rename); `drift.json` is written after it. Text cells are neutralized against spreadsheet
 * formula injection (OWASP "CSV Injection"); numbers are written with `formatNumber`.
 */
import { open, rename, unlink, writeFile, type FileHandle } from 'node:fs/promises';
import { formatNumber, neutralizeFormula, quoteField } from '../io/csv-writer.js';
import type { CategoricalColumn, Column } from '../frame.js';
import type { Bundle } from './types.js';
import { readScoringInput } from './input.js';
import { scoreColumns } from './score.js';
import { REASON_COUNT, reasonSource, topReasons } from './reasons.js';
import { DriftAccumulator, type DriftReport } from './drift.js';
import { BundleError, ScoreInputError } from './errors.js';
import { EXIT } from '../errors.js';

export const DEFAULT_CHUNK_ROWS = 65_536;

export const OUTPUT_HEADER: readonly string[] = ['id', 'score', 'decision', ...Array.from({ length: REASON_COUNT }, (_, k) => `reason_${k + 1}`)];

export interface ScoreFileOptions {
  readonly input: string;
  readonly out: string;
  /** Default `<out>.drift.json`. */
  readonly drift?: string;
  readonly chunkRows?: number;
}

export interface ScoreFileResult {
  readonly rows: number;
  readonly driftFile: string;
  readonly drift: DriftReport;
  /** Rows with a categorical level not seen in training (scored with the stage's prior), per column. */
  readonly unseen: readonly { readonly name: string; readonly rows: number }[];
}

export async function scoreFile(bundle: Bundle, opts: ScoreFileOptions): Promise<ScoreFileResult> {
  const chunkRows = opts.chunkRows ?? DEFAULT_CHUNK_ROWS;
  const driftFile = opts.drift ?? `${opts.out}.drift.json`;
  const tmp = `${opts.out}.tmp-${process.pid}`;
  const source = reasonSource(bundle);
  const drift = new DriftAccumulator(bundle.drift);
  const cut = bundle.decision.cut;
  let handle: FileHandle | undefined;
  let rows = 0;
  try {
    for await (const chunk of readScoringInput(opts.input, bundle.data, chunkRows)) {
      // Opened only once the header has passed its checks, so a bad input leaves no file at all.
      if (!handle) {
        handle = await open(tmp, 'w');
        await writeAll(handle, OUTPUT_HEADER.join(',') + '\n');
      }
      const n = chunk.nRows;
      if (n === 0) continue;
      const scored = scoreColumns(bundle, chunk.columns, n, opts.input);
      const reasons = topReasons(source, bundle, scored.columns, n);
      let text = '';
      for (let i = 0; i < n; i++) {
        const s = scored.score[i];
        text += `${cell(chunk.ids[i])},${formatNumber(s)},${s >= cut ? 1 : 0}`;
        for (let k = 0; k < REASON_COUNT; k++) text += `,${cell(reasons[k][i])}`;
        text += '\n';
      }
      await writeAll(handle, text);
      drift.add(n, scored.score, (name) => numericOf(scored.columns, name), (name) => categoricalOf(chunk.columns, name));
      rows += n;
    }
    if (rows === 0 || !handle) throw new ScoreInputError(opts.input, 'the file has a header but no rows to score', [], 'check that --input points at the intended file');
    await handle.sync();
    await handle.close();
    handle = undefined;
    await rename(tmp, opts.out);
  } catch (err) {
    if (handle) await handle.close();
    await unlink(tmp).catch(() => undefined);
    throw err;
  }
  const report = drift.report();
  const driftTmp = `${driftFile}.tmp-${process.pid}`;
  await writeFile(driftTmp, JSON.stringify({ ...report, unseen: drift.unseen() }, null, 2) + '\n');
  await rename(driftTmp, driftFile);
  return { rows, driftFile, drift: report, unseen: drift.unseen() };
}

function cell(s: string): string {
  return quoteField(neutralizeFormula(s));
}

async function writeAll(handle: FileHandle, text: string): Promise<void> {
  const bytes = Buffer.from(text, 'utf8');
  let offset = 0;
  while (offset < bytes.length) offset += (await handle.write(bytes, offset, bytes.length - offset)).bytesWritten;
}

function numericOf(columns: ReadonlyMap<string, Column>, name: string): Float64Array {
  const c = columns.get(name);
  if (!c || c.type !== 'numeric') throw new BundleError('bundle.json', `drift feature ${name} is not a number column after the stage chain`, 'the bundle does not match this code; re-run the config', EXIT.config);
  return c.values;
}

function categoricalOf(columns: ReadonlyMap<string, Column>, name: string): CategoricalColumn {
  const c = columns.get(name);
  if (!c || c.type !== 'categorical') throw new BundleError('bundle.json', `drift column ${name} is not a categorical input`, 'the bundle does not match this code; re-run the config', EXIT.config);
  return c;
}
