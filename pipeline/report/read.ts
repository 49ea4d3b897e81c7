/**
 * Everything the report shows comes from the run folder's own files, so a report can be rebuilt
 * (or audited) long after the run, on another machine, without the data or the cache.
 */
import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { EXIT, FoldstackError } from '../errors.js';
import { readCsv } from '../io/csv-reader.js';
import type { Manifest, Metrics } from '../runner.js';

export class ReportInputError extends FoldstackError {
  constructor(
    message: string,
    readonly runDir: string,
    readonly file: string,
  ) {
    super(message, 'point foldstack report at a finished run folder (runs/<timestamp>-<name>)', EXIT.data);
  }
}

/** Scores of one evaluation sample, columnar: `models` are the learners in file order, then `stack`. */
export interface ScoreSample {
  /** `holdout` or, when the run kept no holdout, `oof`. */
  readonly part: 'holdout' | 'oof';
  readonly target: Uint8Array;
  readonly models: readonly string[];
  readonly scores: readonly Float64Array[];
}

export interface BinRow {
  readonly column: string;
  readonly bin: string;
  readonly interval: string;
  readonly n: number;
  readonly events: number;
  readonly eventRate: number;
  readonly woe: number;
  readonly iv: number;
}

export interface RunFiles {
  readonly manifest: Manifest;
  readonly metrics: Metrics;
  readonly sample: ScoreSample;
  /** null when tree-bins did not run. */
  readonly bins: readonly BinRow[] | null;
}

export async function readRunFiles(runDir: string): Promise<RunFiles> {
  const manifest = readJson(runDir, 'manifest.json') as Manifest;
  const metrics = readJson(runDir, 'metrics.json') as Metrics;
  const useHoldout = manifest.split.holdout_rows > 0;
  const sample = await readScores(runDir, useHoldout ? 'holdout' : 'oof', useHoldout ? manifest.split.holdout_rows : manifest.split.dev_rows);
  const bins = existsSync(join(runDir, 'bins.csv')) ? await readBins(runDir) : null;
  return { manifest, metrics, sample, bins };
}

function readJson(runDir: string, file: string): unknown {
  const p = join(runDir, file);
  if (!existsSync(p)) throw new ReportInputError(`${p} does not exist`, runDir, file);
  try {
    return JSON.parse(readFileSync(p, 'utf8'));
  } catch (err) {
    throw new ReportInputError(`${p} is not valid JSON: ${(err as Error).message}`, runDir, file);
  }
}

/** Columns that are not model scores in oof.csv / holdout.csv. */
const NON_SCORE = new Set(['id', 'fold', 'target']);

async function readScores(runDir: string, part: 'holdout' | 'oof', rows: number): Promise<ScoreSample> {
  const file = `${part}.csv`;
  const p = join(runDir, file);
  if (!existsSync(p)) throw new ReportInputError(`${p} does not exist`, runDir, file);
  const target = new Uint8Array(rows);
  let models: string[] = [];
  let modelIndex: number[] = [];
  let targetIndex = -1;
  let scores: Float64Array[] = [];
  let r = -1;
  for await (const rec of readCsv(p)) {
    if (r < 0) {
      targetIndex = rec.fields.indexOf('target');
      modelIndex = rec.fields.flatMap((h, j) => (NON_SCORE.has(h) ? [] : [j]));
      models = modelIndex.map((j) => rec.fields[j]);
      scores = models.map(() => new Float64Array(rows));
      if (targetIndex < 0 || !models.includes('stack')) throw new ReportInputError(`${p}: the header needs target and stack columns`, runDir, file);
    } else {
      if (r >= rows) throw new ReportInputError(`${p} has more rows than the manifest's ${rows}`, runDir, file);
      const t = rec.fields[targetIndex];
      if (t !== '0' && t !== '1') throw new ReportInputError(`${p}:${rec.line}: target must be 0 or 1, found "${t}"`, runDir, file);
      target[r] = t === '1' ? 1 : 0;
      for (let m = 0; m < modelIndex.length; m++) scores[m][r] = Number(rec.fields[modelIndex[m]]);
    }
    r++;
  }
  if (r !== rows) throw new ReportInputError(`${p} has ${Math.max(r, 0)} rows, the manifest says ${rows}`, runDir, file);
  return { part, target, models, scores };
}

const BIN_HEADER = ['column', 'bin', 'interval', 'n', 'events', 'event_rate', 'rate', 'woe', 'iv'];

async function readBins(runDir: string): Promise<BinRow[]> {
  const p = join(runDir, 'bins.csv');
  const out: BinRow[] = [];
  let at: Record<string, number> | null = null;
  for await (const rec of readCsv(p)) {
    if (at === null) {
      const missing = BIN_HEADER.filter((h) => !rec.fields.includes(h));
      if (missing.length > 0) throw new ReportInputError(`${p}: header lacks ${missing.join(', ')}`, runDir, 'bins.csv');
      at = Object.fromEntries(BIN_HEADER.map((h) => [h, rec.fields.indexOf(h)]));
      continue;
    }
    const f = rec.fields;
    // Empty cells are undefined values (e.g. an infinite WoE); NaN renders as a dash.
    const num = (h: string) => (f[at![h]] === '' ? NaN : Number(f[at![h]]));
    out.push({ column: f[at.column], bin: f[at.bin], interval: f[at.interval], n: num('n'), events: num('events'), eventRate: num('event_rate'), woe: num('woe'), iv: num('iv') });
  }
  return out;
}
