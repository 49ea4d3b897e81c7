/**
 * Runs the whole stage chain and every learner inside one fit context (train rows, apply rows).
 * This is where the leakage rules of DESIGN.md live: a supervised stage's train-row outputs come
 * from inner cross-fitting, its apply-row outputs from a fit on all the context's train rows.
 * Stages themselves never see folds or the cache.
 */
import { performance } from 'node:perf_hooks';
import { categorical, numeric, type Column, type NumericColumn } from './frame.js';
import { Cache, bytesOf, float64From, int32From } from './cache.js';
import { createRng } from './rng.js';
import { foldRows, stratifiedFolds } from './folds.js';
import type { Json, Learner, Stage } from '../stages/types.js';
import { learnerRegistry, stageRegistry } from '../stages/index.js';
import { stageKey, learnerKey } from './keys.js';
import { balanceRows, priorCorrect } from '../stages/balance.js';
import { StackPassthroughConfigError } from '../stages/stack.js';

export interface ContextSpec {
  readonly name: string;
  /** Ascending row indices. */
  readonly train: Uint32Array;
  readonly apply: Uint32Array;
}

export interface StagePlanItem {
  readonly kind: string;
  readonly config: Json;
}

export interface LearnerPlanItem {
  readonly name: string;
  readonly kind: string;
  readonly config: Json;
}

export interface ContextTask {
  readonly context: ContextSpec;
  readonly columns: ReadonlyMap<string, Column>;
  /** Feature and date columns, in file order: what the first stage may consume. */
  readonly inputColumns: readonly string[];
  readonly target: Uint8Array;
  readonly stages: readonly StagePlanItem[];
  readonly learners: readonly LearnerPlanItem[];
  readonly innerFolds: number;
  /** Downsample non-events inside each learner fit to this event share (null = off). */
  readonly balance: { readonly ratio: number } | null;
  readonly seed: number;
  readonly dataKey: string;
  readonly cacheDir: string;
  /** Keep fitted states and models in the result (the final context: they go to the bundle). */
  readonly keepStates: boolean;
  /** `stack.passthrough`: learner feature columns whose apply-row values go to the stack (absent = none). */
  readonly stackPassthrough?: readonly string[];
}

export interface StepFailureInfo {
  readonly name: string;
  readonly message: string;
  /** e.g. `tree-bins@fold-2`. */
  readonly step: string;
  readonly stack: string;
}

export type ContextOutcome = { readonly ok: true; readonly result: ContextResult } | { readonly ok: false; readonly failure: StepFailureInfo };

export interface StepRecord {
  readonly step: string;
  readonly key: string;
  readonly hit: boolean;
  readonly seconds: number;
}

export interface ContextResult {
  readonly context: string;
  readonly steps: StepRecord[];
  /** Per learner, predictions for the apply rows in ascending row order. */
  readonly predictions: Map<string, Float64Array>;
  readonly learnerKeys: Map<string, string>;
  readonly states: { kind: string; state: Json }[];
  readonly models: { name: string; model: Json }[];
  /** Columns the learners saw, in order. */
  readonly featureNames: string[];
  /** Non-numeric columns left unencoded at the end of the chain, so not seen by any learner. */
  readonly dropped: string[];
  /** With `keepStates`: each stage's resolved input columns, parallel to `states` (the bundle replays them). */
  readonly stageInputs: string[][];
  /** With `keepStates`: the columns each learner was given, in order, parallel to `models`. */
  readonly learnerFeatures: string[][];
  /** With `keepStates`: per learner, the balance sample's (tau, ybar) its predictions were corrected with, or null. */
  readonly learnerPriors: ({ tau: number; ybar: number } | null)[];
  /** Per `stackPassthrough` column, its (post-impute) values on the apply rows in ascending row order. */
  readonly passthrough: Map<string, Float64Array>;
}

interface StageOutput {
  columns: Column[];
  state: Json;
}

export function runContext(task: ContextTask): ContextResult {
  const cache = new Cache(task.cacheDir);
  const { context } = task;
  const nRows = task.target.length;
  const ctxRows = concatRows(context.train, context.apply);
  const columns = new Map(task.columns);
  let available = task.inputColumns.slice();
  let upstream = task.dataKey;
  const steps: StepRecord[] = [];
  const states: { kind: string; state: Json }[] = [];
  const stageInputs: string[][] = [];

  // The numeric features as they stand before imputation: for learners that take missing values.
  // Arrays, not names: impute re-emits the same names with filled values.
  let beforeImpute: { names: string[]; values: Float64Array[] } | undefined;
  for (const item of task.stages) {
    if (item.kind === 'impute') {
      const names = available.filter((n) => mustGet(columns, n).type === 'numeric');
      beforeImpute = { names, values: names.map((n) => (mustGet(columns, n) as NumericColumn).values) };
    }
    const stage = stageRegistry.get(item.kind) as Stage<unknown, Json> | undefined;
    if (!stage) throw new Error(`unknown stage kind ${item.kind}`);
    const config = atStep(`${stage.kind}@${context.name}`, () => stage.resolveConfig(item.config));
    const inputs = atStep(`${stage.kind}@${context.name}`, () => stage.selectInputs(config, available.map((n) => mustGet(columns, n))));
    const key = stageKey({ kind: stage.kind, version: stage.version, config: item.config, upstream, context, seed: task.seed, innerFolds: task.innerFolds });
    const t0 = performance.now();
    const cached = cache.get(key);
    let out: StageOutput;
    if (cached) {
      out = decodeStageOutput(cached, ctxRows, nRows);
    } else {
      out = atStep(`${stage.kind}@${context.name}`, () => fitStageInContext(stage, config, inputs, columns, task));
      cache.put(key, encodeStageOutput(out, ctxRows));
    }
    steps.push({ step: `${stage.kind}@${context.name}`, key, hit: cached !== undefined, seconds: (performance.now() - t0) / 1000 });
    if (task.keepStates) {
      states.push({ kind: stage.kind, state: out.state });
      stageInputs.push(inputs);
    }
    const removed = new Set(stage.replacedInputs ? stage.replacedInputs(inputs) : stage.replacesInputs ? inputs : []);
    available = available.filter((n) => !removed.has(n));
    // No later stage or learner can select a replaced column, so this context lets go of it
    // (learners that take missing values keep their pre-impute arrays through beforeImpute).
    for (const n of removed) columns.delete(n);
    for (const c of out.columns) {
      if (!columns.has(c.name) || !available.includes(c.name)) available.push(c.name);
      columns.set(c.name, c);
    }
    upstream = key;
  }

  // Categorical or date columns that no stage encoded cannot reach a learner; the runner reports them.
  const dropped = available.filter((n) => mustGet(columns, n).type !== 'numeric');
  available = available.filter((n) => mustGet(columns, n).type === 'numeric');
  const features = available.map((n) => (mustGet(columns, n) as NumericColumn).values);
  const passthrough = atStep(`stack-passthrough@${context.name}`, () => passthroughValues(task.stackPassthrough ?? [], available, features, context.apply));
  const rawNames = beforeImpute?.names ?? available;
  const rawFeatures = beforeImpute?.values ?? features;
  const predictions = new Map<string, Float64Array>();
  const learnerKeys = new Map<string, string>();
  const models: { name: string; model: Json }[] = [];
  const learnerFeatures: string[][] = [];
  const learnerPriors: ({ tau: number; ybar: number } | null)[] = [];
  for (const item of task.learners) {
    const learner = learnerRegistry.get(item.kind) as Learner<unknown, Json> | undefined;
    if (!learner) throw new Error(`unknown learner kind ${item.kind}`);
    const config = atStep(`learner:${item.name}@${context.name}`, () => learner.resolveConfig(item.config));
    // Only the final context's models are described in the run folder; fold models just predict.
    const report = task.keepStates;
    const key = learnerKey({ kind: learner.kind, version: learner.version, config: { options: item.config, balance: task.balance, report }, upstream, context, seed: task.seed, name: item.name });
    const t0 = performance.now();
    const cached = cache.get(key);
    let pred: Float64Array;
    let model: Json;
    if (cached) {
      pred = float64From(mustGet(cached, 'pred.f64'));
      model = JSON.parse(Buffer.from(mustGet(cached, 'model.json')).toString('utf8')) as Json;
    } else {
      [model, pred] = atStep(`learner:${item.name}@${context.name}`, () => {
        const [X, names] = learner.handlesMissing ? [rawFeatures, rawNames] : [features, available];
        if (!task.balance) {
          const m = learner.fit({ features: X, names, rows: context.train, target: task.target, config, rng: createRng(task.seed, 'learner', item.name, context.name), report });
          return [m, learner.predict(m, X, context.apply)] as const;
        }
        // The fit sees a downsampled sample; its predictions are moved back to the population's base rate.
        const sample = balanceRows(context.train, task.target, task.balance.ratio, createRng(task.seed, 'balance', item.name, context.name));
        const m = learner.fit({ features: X, names, rows: sample.rows, target: task.target, config, rng: createRng(task.seed, 'learner', item.name, context.name), report });
        return [m, priorCorrect(learner.predict(m, X, context.apply), sample.tau, sample.ybar)] as const;
      });
      cache.put(key, new Map([['pred.f64', bytesOf(pred)], ['model.json', Buffer.from(JSON.stringify(model))]]));
    }
    steps.push({ step: `learner:${item.name}@${context.name}`, key, hit: cached !== undefined, seconds: (performance.now() - t0) / 1000 });
    predictions.set(item.name, pred);
    learnerKeys.set(item.name, key);
    if (task.keepStates) {
      models.push({ name: item.name, model });
      learnerFeatures.push(learner.handlesMissing ? rawNames : available);
      // Redrawn rather than cached: the draw is seeded, so it is the sample the fit used (a cache hit has no sample).
      const sample = task.balance ? balanceRows(context.train, task.target, task.balance.ratio, createRng(task.seed, 'balance', item.name, context.name)) : undefined;
      learnerPriors.push(sample ? { tau: sample.tau, ybar: sample.ybar } : null);
    }
  }
  return { context: context.name, steps, predictions, learnerKeys, states, models, featureNames: available, dropped, stageInputs, learnerFeatures, learnerPriors, passthrough };
}

/** The stack's passthrough columns on the apply rows, read from the learners' (post-impute) features so they hold no NaN. */
function passthroughValues(names: readonly string[], available: readonly string[], features: readonly Float64Array[], apply: Uint32Array): Map<string, Float64Array> {
  const out = new Map<string, Float64Array>();
  for (const name of names) {
    const j = available.indexOf(name);
    if (j < 0) throw new StackPassthroughConfigError(name, available);
    const v = new Float64Array(apply.length);
    for (let i = 0; i < apply.length; i++) v[i] = features[j][apply[i]];
    out.set(name, v);
  }
  return out;
}

/** Fit one stage in a context, cross-fitting it when it reads the target. Outputs cover the context's rows. */
export function fitStageInContext(stage: Stage<unknown, Json>, config: unknown, inputs: string[], columns: ReadonlyMap<string, Column>, task: ContextTask): StageOutput {
  const { context } = task;
  const nRows = task.target.length;
  const fitOn = (rows: Uint32Array, tag: string): Json =>
    stage.fit({ view: { columns, rows }, target: task.target, inputs, config, rng: createRng(task.seed, 'stage', stage.kind, context.name, tag) });
  let merged: Column[] | undefined;
  const applyTo = (rows: Uint32Array, fitted: Json): void => {
    const cols = stage.apply(fitted, { columns, rows }, inputs);
    if (merged === undefined) merged = cols.map((c) => scatter(c, rows, nRows));
    else writeRows(merged, cols, rows, stage.kind);
  };
  let state: Json;
  if (stage.supervised) {
    const fold = stratifiedFolds(context.train, task.target, task.innerFolds, createRng(task.seed, 'inner-folds', context.name));
    for (let k = 0; k < task.innerFolds; k++) {
      const fitRows = foldRows(context.train, fold, k, false);
      const applyRows = foldRows(context.train, fold, k, true);
      applyTo(applyRows, fitOn(fitRows, `inner-${k}`));
    }
    state = fitOn(context.train, 'full');
    applyTo(context.apply, state);
  } else {
    state = fitOn(context.train, 'full');
    applyTo(concatRows(context.train, context.apply), state);
  }
  return { columns: merged ?? [], state };
}

/** Spread a column computed for `rows` into a full-length column (other rows missing). */
function scatter(c: Column, rows: Uint32Array, nRows: number): Column {
  switch (c.type) {
    case 'numeric': {
      const v = new Float64Array(nRows).fill(NaN);
      for (let i = 0; i < rows.length; i++) v[rows[i]] = c.values[i];
      return numeric(c.name, v);
    }
    case 'categorical': {
      const v = new Int32Array(nRows).fill(-1);
      for (let i = 0; i < rows.length; i++) v[rows[i]] = c.codes[i];
      return categorical(c.name, v, c.levels);
    }
    case 'date': {
      const v = new Float64Array(nRows).fill(NaN);
      for (let i = 0; i < rows.length; i++) v[rows[i]] = c.days[i];
      return { type: 'date', name: c.name, days: v };
    }
  }
}

/** Write a later fit's outputs (computed for `rows`) into the full-length columns of the first fit. */
function writeRows(into: Column[], cols: Column[], rows: Uint32Array, kind: string): void {
  if (cols.length !== into.length) throw new Error(`stage ${kind} returned a different number of columns between fits`);
  for (let j = 0; j < cols.length; j++) {
    const a = into[j];
    const b = cols[j];
    if (a.name !== b.name || a.type !== b.type) throw new Error(`stage ${kind} returned column ${b.name} where an earlier fit returned ${a.name}`);
    if (a.type === 'numeric' && b.type === 'numeric') for (let i = 0; i < rows.length; i++) a.values[rows[i]] = b.values[i];
    else if (a.type === 'date' && b.type === 'date') for (let i = 0; i < rows.length; i++) a.days[rows[i]] = b.days[i];
    else if (a.type === 'categorical' && b.type === 'categorical') {
      if (a.levels.join('\u0000') !== b.levels.join('\u0000')) throw new Error(`stage ${kind}: categorical output ${a.name} has different levels between fits`);
      for (let i = 0; i < rows.length; i++) a.codes[rows[i]] = b.codes[i];
    }
  }
}

/**
 * Stored form: `columns.json` (names, types, levels) and one raw little-endian file per column
 * holding the values of the context's rows in `ctxRows` order.
 */
function encodeStageOutput(out: StageOutput, ctxRows: Uint32Array): Map<string, Uint8Array> {
  const files = new Map<string, Uint8Array>();
  const meta = out.columns.map((c, i) => {
    if (c.type === 'categorical') {
      const v = new Int32Array(ctxRows.length);
      for (let j = 0; j < ctxRows.length; j++) v[j] = c.codes[ctxRows[j]];
      files.set(`c${i}.i32`, bytesOf(v));
      return { name: c.name, type: c.type, levels: c.levels };
    }
    const src = c.type === 'numeric' ? c.values : c.days;
    const v = new Float64Array(ctxRows.length);
    for (let j = 0; j < ctxRows.length; j++) v[j] = src[ctxRows[j]];
    files.set(`c${i}.f64`, bytesOf(v));
    return { name: c.name, type: c.type };
  });
  files.set('columns.json', Buffer.from(JSON.stringify(meta)));
  files.set('state.json', Buffer.from(JSON.stringify(out.state)));
  return files;
}

function decodeStageOutput(files: ReadonlyMap<string, Uint8Array>, ctxRows: Uint32Array, nRows: number): StageOutput {
  const meta = JSON.parse(Buffer.from(mustGet(files, 'columns.json')).toString('utf8')) as { name: string; type: Column['type']; levels?: string[] }[];
  const columns = meta.map((m, i): Column => {
    if (m.type === 'categorical') {
      return scatter(categorical(m.name, int32From(mustGet(files, `c${i}.i32`)), m.levels ?? []), ctxRows, nRows);
    }
    const v = float64From(mustGet(files, `c${i}.f64`));
    return scatter(m.type === 'numeric' ? numeric(m.name, v) : { type: 'date', name: m.name, days: v }, ctxRows, nRows);
  });
  const state = JSON.parse(Buffer.from(mustGet(files, 'state.json')).toString('utf8')) as Json;
  return { columns, state };
}

/** Run `fn`, marking any error it throws with the step it happened in. */
function atStep<T>(step: string, fn: () => T): T {
  try {
    return fn();
  } catch (err) {
    if (err instanceof Error && (err as { step?: unknown }).step === undefined) Object.assign(err, { step });
    throw err;
  }
}

export function concatRows(a: Uint32Array, b: Uint32Array): Uint32Array {
  const out = new Uint32Array(a.length + b.length);
  out.set(a, 0);
  out.set(b, a.length);
  return out;
}

function mustGet<K, V>(m: ReadonlyMap<K, V>, k: K): V {
  const v = m.get(k);
  if (v === undefined) throw new Error(`internal: ${String(k)} is missing`);
  return v;
}
