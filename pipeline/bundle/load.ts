/**
 * Finds and reads a bundle: from a run folder path, a `bundle.json` path, a run id under the runs
 * folder, or the champion pointer of a config name (pipeline/runs/champion.ts).
 */
import { existsSync, readFileSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { EXIT } from '../errors.js';
import { BUNDLE_FORMAT, type Bundle } from './types.js';
import { BundleError } from './errors.js';
import { checkRunnable } from './score.js';
import { championFile, readChampion } from '../run-ledger/champion.js';

export function bundlePathOf(run: string, runsDir: string): string {
  const candidates = [run, join(runsDir, run)];
  for (const c of candidates) {
    if (!existsSync(c)) continue;
    const file = statSync(c).isDirectory() ? join(c, 'bundle.json') : c;
    if (existsSync(file)) return file;
    throw new BundleError(c, 'the run folder has no bundle.json', 'runs made before scoring existed have none: re-run the config');
  }
  throw new BundleError(run, `no such run folder (looked here and under ${runsDir})`, 'give a run folder path or a run id as listed in the runs folder');
}

export function championRun(name: string, runsDir: string): string {
  const pointer = readChampion(runsDir, name);
  if (pointer === null) throw new BundleError(championFile(runsDir, name), `no champion named ${name}`, 'promote a run first, or score a run by its id');
  return pointer.run;
}

export function readBundle(file: string): Bundle {
  let parsed: unknown;
  try {
    parsed = JSON.parse(readFileSync(file, 'utf8'));
  } catch (err) {
    throw new BundleError(file, `cannot read the bundle (${(err as Error).message})`, 'the run folder may be damaged; re-run the config', EXIT.data);
  }
  const format = (parsed as { format?: unknown } | null)?.format;
  if (format !== BUNDLE_FORMAT) throw new BundleError(file, `bundle format ${String(format)}, this code reads format ${BUNDLE_FORMAT}`, 'score with the foldstack version that made the run, or re-run the config', EXIT.config);
  const bundle = parsed as Bundle;
  checkRunnable(bundle, file);
  return bundle;
}
