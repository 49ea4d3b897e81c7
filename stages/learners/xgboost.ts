/**
 * The `xgboost` learner: boosted trees from the ml-xgboost 1.1.2 WebAssembly build, run in a
 * separate process per fit or predict (xgboost-host.ts) so that an abort inside the engine fails
 * this learner with an XgboostCrashError and never takes down the pipeline's process or worker.
 *
 * The engine sees the tree core's bin codes (≤ 255 quantile bins fitted on the fit rows), never
 * raw values: the codes are small non-negative integers, exactly representable in float32, and a
 * missing value becomes −1, which this build reads as missing (it aborts on NaN). Its parameter
 * setter accepts misspelled names silently, so options are validated here and passed under names
 * fixed in this file. The objective is binary:logistic with the engine's base_score 0.5 pinned.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { edgeSampleRows, encodeNumeric, fitNumericBins, MAX_UINT8_BINS, type NumericBinMapper } from '../core/tree/bin.js';
import type { Learner, LearnerFitInput } from '../types.js';
import type { HostRequest } from './xgboost-host.js';

export interface XgboostConfig {
  readonly rounds: number;
  readonly learning_rate: number;
  readonly max_depth: number;
  readonly min_child_weight: number;
  readonly l2: number;
  readonly subsample: number;
  readonly colsample: number;
  /** The engine's seed; null = drawn from the learner's rng (so it differs per context). */
  readonly seed: number | null;
}

export interface XgboostModel {
  readonly names: readonly string[];
  /** Bin edges per column; predict encodes new rows with them. */
  readonly edges: readonly (readonly number[])[];
  /** The engine's serialised booster, base64. */
  readonly booster: string;
  readonly seed: number;
}

export class XgboostConfigError extends Error {
  constructor(
    message: string,
    readonly key: string,
    readonly value: unknown,
  ) {
    super(`xgboost: ${message} (got ${key} = ${JSON.stringify(value)})`);
    this.name = 'XgboostConfigError';
  }
}

/** Feature columns that do not match the fitted model or each other. */
export class XgboostInputError extends Error {
  constructor(
    message: string,
    readonly expected: number,
    readonly got: number,
  ) {
    super(`xgboost: ${message}`);
    this.name = 'XgboostInputError';
  }
}

/** The engine's process failed (an abort inside the WebAssembly module, a crash, a kill). */
export class XgboostCrashError extends Error {
  constructor(
    readonly phase: 'fit' | 'predict',
    readonly exitCode: number | null,
    readonly signal: string | null,
    readonly stderrTail: string,
  ) {
    const how = signal ? `was killed by ${signal}` : `exited with code ${exitCode}`;
    super(`xgboost: the engine process ${how} during ${phase}${stderrTail ? `: ${stderrTail}` : ''}`);
    this.name = 'XgboostCrashError';
  }
}

const DEFAULTS: XgboostConfig = {
  rounds: 300,
  learning_rate: 0.05,
  max_depth: 5,
  min_child_weight: 1,
  l2: 1,
  subsample: 0.8,
  colsample: 0.8,
  seed: null,
};

const MISSING = -1;

export const xgboost: Learner<XgboostConfig, XgboostModel> = {
  kind: 'xgboost',
  version: 1,
  handlesMissing: true,

  resolveConfig(raw: unknown): XgboostConfig {
    return resolveXgboostConfig(raw);
  },

  fit({ features, names, rows, target, config, rng }: LearnerFitInput<XgboostConfig>): XgboostModel {
    if (features.length !== names.length) throw new XgboostInputError(`${features.length} feature columns but ${names.length} names`, names.length, features.length);
    const sampled = edgeSampleRows(rows);
    const mappers = features.map((x) => fitNumericBins(x, rows, MAX_UINT8_BINS, sampled));
    const labels = Float32Array.from(rows, (r) => target[r]);
    const seed = config.seed ?? rng.int(2147483647);
    const params: [string, string][] = [
      ['objective', 'binary:logistic'],
      ['base_score', '0.5'],
      ['booster', 'gbtree'],
      ['tree_method', 'exact'],
      ['silent', '1'],
      ['nthread', '1'],
      ['eta', String(config.learning_rate)],
      ['max_depth', String(config.max_depth)],
      ['min_child_weight', String(config.min_child_weight)],
      ['lambda', String(config.l2)],
      ['subsample', String(config.subsample)],
      ['colsample_bytree', String(config.colsample)],
      ['seed', String(seed)],
    ];
    const reply = runHost(
      'fit',
      { op: 'fit', rows: rows.length, cols: features.length, rounds: config.rounds, params },
      { 'data.f32': encodeRows(mappers, features, rows), 'labels.f32': labels },
      'model.bin',
    );
    return { names: [...names], edges: mappers.map((m) => m.edges.slice()), booster: reply.toString('base64'), seed };
  },

  predict(model: XgboostModel, features: readonly Float64Array[], rows: Uint32Array): Float64Array {
    if (features.length !== model.names.length) {
      throw new XgboostInputError(`model has ${model.names.length} features, got ${features.length} columns`, model.names.length, features.length);
    }
    const mappers: NumericBinMapper[] = model.edges.map((e) => ({ type: 'numeric', edges: e }));
    const reply = runHost(
      'predict',
      { op: 'predict', rows: rows.length, cols: features.length },
      { 'data.f32': encodeRows(mappers, features, rows), 'model.bin': Buffer.from(model.booster, 'base64') },
      'pred.f32',
    );
    const p = new Float32Array(reply.buffer.slice(reply.byteOffset, reply.byteOffset + reply.byteLength));
    if (p.length !== rows.length) throw new XgboostCrashError('predict', 0, null, `expected ${rows.length} predictions, got ${p.length}`);
    return Float64Array.from(p);
  },
};

export function resolveXgboostConfig(raw: unknown): XgboostConfig {
  if (raw === undefined || raw === null) return DEFAULTS;
  if (typeof raw !== 'object' || Array.isArray(raw)) throw new XgboostConfigError('config must be a mapping', '', raw);
  const r = raw as Record<string, unknown>;
  for (const key of Object.keys(r)) {
    if (!(key in DEFAULTS)) throw new XgboostConfigError(`unknown option (known: ${Object.keys(DEFAULTS).join(', ')})`, key, r[key]);
  }
  const num = (key: keyof XgboostConfig, ok: (v: number) => boolean, expected: string): number => {
    const v = r[key] === undefined ? DEFAULTS[key] : r[key];
    if (typeof v !== 'number' || !Number.isFinite(v) || !ok(v)) throw new XgboostConfigError(`${key} must be ${expected}`, key, v);
    return v;
  };
  const seedRaw = r.seed;
  if (seedRaw !== undefined && seedRaw !== null && (typeof seedRaw !== 'number' || !Number.isInteger(seedRaw) || seedRaw < 0 || seedRaw > 2147483646)) {
    throw new XgboostConfigError('seed must be an integer in [0, 2147483646]', 'seed', seedRaw);
  }
  return {
    rounds: num('rounds', (v) => Number.isInteger(v) && v >= 1 && v <= 100_000, 'an integer in [1, 100000]'),
    learning_rate: num('learning_rate', (v) => v > 0 && v <= 1, 'in (0, 1]'),
    max_depth: num('max_depth', (v) => Number.isInteger(v) && v >= 1 && v <= 16, 'an integer in [1, 16]'),
    min_child_weight: num('min_child_weight', (v) => v >= 0, '≥ 0'),
    l2: num('l2', (v) => v >= 0, '≥ 0'),
    subsample: num('subsample', (v) => v > 0 && v <= 1, 'in (0, 1]'),
    colsample: num('colsample', (v) => v > 0 && v <= 1, 'in (0, 1]'),
    seed: typeof seedRaw === 'number' ? seedRaw : null,
  };
}

/** Row-major float32 bin codes of `rows`, −1 where the value is missing. */
function encodeRows(mappers: readonly NumericBinMapper[], features: readonly Float64Array[], rows: Uint32Array): Float32Array {
  const n = rows.length;
  const p = features.length;
  const out = new Float32Array(n * p);
  const codes = new Uint16Array(n);
  for (let c = 0; c < p; c++) {
    encodeNumeric(mappers[c], features[c], rows, codes);
    const missing = mappers[c].edges.length + 1;
    for (let i = 0; i < n; i++) out[i * p + c] = codes[i] === missing ? MISSING : codes[i];
  }
  return out;
}

/** Under vitest this module is TypeScript; compiled, it is JavaScript. Pick the host to match. */
function hostCommand(): { args: string[]; cwd: string } {
  const here = import.meta.url;
  if (here.endsWith('.ts')) {
    // `--import tsx` resolves from the working directory: use the project root, where tsx is installed.
    return { args: ['--import', 'tsx', fileURLToPath(new URL('./xgboost-host.ts', here))], cwd: fileURLToPath(new URL('../../', here)) };
  }
  return { args: [fileURLToPath(new URL('./xgboost-host.js', here))], cwd: process.cwd() };
}

/** Lines of the child's stderr worth showing: the engine's own start-up notices are noise. */
function stderrTail(text: string): string {
  const lines = text
    .split('\n')
    .map((l) => l.trim())
    .filter((l) => l.length > 0 && !/wasm streaming compile failed|falling back to ArrayBuffer/.test(l));
  return lines.slice(0, 3).join(' | ').slice(0, 500);
}

/** Runs one host request synchronously (learners are synchronous) and returns its reply file. */
function runHost(phase: 'fit' | 'predict', req: HostRequest, files: Record<string, Float32Array | Buffer>, replyFile: string): Buffer {
  const dir = mkdtempSync(join(tmpdir(), 'foldstack-xgboost-'));
  try {
    writeFileSync(join(dir, 'request.json'), JSON.stringify(req));
    for (const [name, data] of Object.entries(files)) writeFileSync(join(dir, name), new Uint8Array(data.buffer, data.byteOffset, data.byteLength));
    const { args, cwd } = hostCommand();
    const res = spawnSync(process.execPath, [...args, dir], { cwd, stdio: ['ignore', 'ignore', 'pipe'], encoding: 'utf8', maxBuffer: 4 * 1024 * 1024 });
    if (res.error) throw new XgboostCrashError(phase, null, null, res.error.message);
    if (res.status !== 0 || res.signal !== null || !existsSync(join(dir, 'done.json'))) {
      throw new XgboostCrashError(phase, res.status, res.signal, stderrTail(res.stderr ?? ''));
    }
    return readFileSync(join(dir, replyFile));
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}
