/**
 * Reading a finished run folder. Listing, comparing and promoting use only what the run wrote
 * (manifest.json, metrics.json, holdout.csv), so they work without the data or the cache. A
 * folder that is not a finished run gets a RunReadError that says which file is wrong and why.
 */
import { existsSync, readFileSync, statSync } from 'node:fs';
import { basename, join, resolve } from 'node:path';
import { EXIT, FoldstackError } from '../errors.js';
import { readCsv } from '../io/csv-reader.js';
import type { Manifest, Metrics } from '../runner.js';

export class RunReadError extends FoldstackError {
  constructor(
    message: string,
    hint: string,
    readonly runDir: string,
    readonly file: string,
  ) {
    super(message, hint, EXIT.data);
  }
}

export interface RunRecord {
  /** The folder name: `<UTC stamp>-<config name>`. */
  readonly id: string;
  readonly dir: string;
  readonly manifest: Manifest;
  readonly metrics: Metrics;
}

/** Holdout rows as the run scored them, columnar, in file order. */
export interface HoldoutScores {
  readonly ids: readonly string[];
  readonly target: Uint8Array;
  /** Learner names in file order, then `stack`. */
  readonly models: readonly string[];
  readonly scores: ReadonlyMap<string, Float64Array>;
}

const FINISHED_HINT = 'point at a finished run folder (runs/<timestamp>-<name>); `foldstack runs` lists them';

/** A path to a run folder, or a run id (a folder name) under runsDir. */
export function resolveRunRef(ref: string, runsDir: string): string {
  const underRuns = join(runsDir, ref);
  if (!ref.includes('/') && !ref.includes('\\') && existsSync(underRuns)) return resolve(underRuns);
  const asPath = resolve(ref);
  if (existsSync(asPath)) return asPath;
  throw new RunReadError(`no run "${ref}": neither a folder nor a run id under ${runsDir}`, FINISHED_HINT, asPath, '');
}

export function readRun(dir: string): RunRecord {
  if (!existsSync(dir) || !statSync(dir).isDirectory()) throw new RunReadError(`${dir} is not a folder`, FINISHED_HINT, dir, '');
  const id = basename(dir);
  if (id.startsWith('.partial-')) throw new RunReadError(`${dir} is an unfinished run (still running, or crashed)`, FINISHED_HINT, dir, '');
  const manifest = readJson(dir, 'manifest.json') as Partial<Manifest> | null;
  if (manifest === null || typeof manifest !== 'object' || manifest.complete !== true || typeof manifest.name !== 'string' || !manifest.data || !manifest.split) {
    throw new RunReadError(`${join(dir, 'manifest.json')} is not a complete run manifest`, FINISHED_HINT, dir, 'manifest.json');
  }
  const metrics = readJson(dir, 'metrics.json') as Partial<Metrics> | null;
  if (metrics === null || typeof metrics !== 'object' || !metrics.holdout || !metrics.oof || !metrics.stack) {
    throw new RunReadError(`${join(dir, 'metrics.json')} lacks the holdout/oof/stack blocks`, FINISHED_HINT, dir, 'metrics.json');
  }
  return { id, dir, manifest: manifest as Manifest, metrics: metrics as Metrics };
}

function readJson(dir: string, file: string): unknown {
  const p = join(dir, file);
  if (!existsSync(p)) throw new RunReadError(`${p} does not exist, so ${dir} is not a finished run`, FINISHED_HINT, dir, file);
  try {
    return JSON.parse(readFileSync(p, 'utf8'));
  } catch (err) {
    throw new RunReadError(`${p} is not valid JSON: ${(err as Error).message}`, FINISHED_HINT, dir, file);
  }
}

export async function readHoldout(run: RunRecord): Promise<HoldoutScores> {
  const file = join(run.dir, 'holdout.csv');
  if (!existsSync(file)) throw new RunReadError(`${file} does not exist`, FINISHED_HINT, run.dir, 'holdout.csv');
  const rows = run.manifest.split.holdout_rows;
  const ids: string[] = [];
  const target = new Uint8Array(rows);
  let models: string[] = [];
  let at: number[] = [];
  let scores: Float64Array[] = [];
  let r = -1;
  for await (const rec of readCsv(file)) {
    const f = rec.fields;
    if (r < 0) {
      if (f[0] !== 'id' || f[1] !== 'target' || f[f.length - 1] !== 'stack') {
        throw new RunReadError(`${file}: the header must be id,target,<learners…>,stack, found ${f.join(',')}`, FINISHED_HINT, run.dir, 'holdout.csv');
      }
      models = f.slice(2);
      at = models.map((_, j) => j + 2);
      scores = models.map(() => new Float64Array(rows));
    } else {
      if (r >= rows) throw new RunReadError(`${file} has more rows than the manifest's ${rows}`, FINISHED_HINT, run.dir, 'holdout.csv');
      if (f[1] !== '0' && f[1] !== '1') throw new RunReadError(`${file}:${rec.line}: target must be 0 or 1, found "${f[1]}"`, FINISHED_HINT, run.dir, 'holdout.csv');
      ids.push(f[0]);
      target[r] = f[1] === '1' ? 1 : 0;
      for (let m = 0; m < at.length; m++) {
        const v = Number(f[at[m]]);
        if (f[at[m]] === '' || Number.isNaN(v)) throw new RunReadError(`${file}:${rec.line}: ${models[m]} is not a number: "${f[at[m]]}"`, FINISHED_HINT, run.dir, 'holdout.csv');
        scores[m][r] = v;
      }
    }
    r++;
  }
  if (r !== rows) throw new RunReadError(`${file} has ${Math.max(r, 0)} rows, the manifest says ${rows}`, FINISHED_HINT, run.dir, 'holdout.csv');
  return { ids, target, models, scores: new Map(models.map((m, j) => [m, scores[j]])) };
}

/** The review budget the run evaluated at (from its resolved config). */
export function budgetOf(run: RunRecord): number {
  const config = run.manifest.config as { evaluate?: { budget?: unknown } } | null;
  const b = config?.evaluate?.budget;
  if (typeof b !== 'number') throw new RunReadError(`${join(run.dir, 'manifest.json')} has no evaluate.budget in its config`, FINISHED_HINT, run.dir, 'manifest.json');
  return b;
}
