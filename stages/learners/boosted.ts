/**
 * The `boosted` learner: gradient-boosted trees for log loss on the shared histogram tree core
 * (second-order gain and Newton leaf values, Chen & Guestrin 2016, "XGBoost: A Scalable Tree
 * Boosting System", eqs. 5–7). Every column is binned once per fit (≤ 255 quantile bins, uint8
 * codes, a missing code whose side each split learns); each round draws a row subsample and a
 * column subset from the given rng, grows one depth-wise tree and adds only that tree to the
 * running margins. With early stopping, a seeded stratified slice of the fit rows is held back,
 * scored after every round, and the model keeps the trees up to the round with the lowest
 * held-back log loss.
 *
 * The base margin defaults to the log-odds of the fit rows' event rate (the prior), not a fixed
 * 0.5: boosting then starts from the right calibration and the first trees model structure, not
 * the base rate. `base_score` overrides it (0.5 reproduces XGBoost ≤ 1.7's default).
 */
import { allocCodes, edgeSampleRows, encodeNumeric, fitNumericBins, MAX_UINT8_BINS, type BinCodes } from '../core/tree/bin.js';
import { growTree, GrowWorkspace, liveHistograms, treeArenaBytes, type GrowOptions } from '../core/tree/grow.js';
import { STATS_NO_COUNT } from '../core/tree/histogram.js';
import { withKernelArena, type KernelArena } from '../core/kernel/arena.js';
import { addLeafValuesBinned, addTreeValuesRaw, treeFromJson, treeToJson, type FlatTreeJson } from '../core/tree/predict.js';
import type { Learner, LearnerFitInput, Rng } from '../types.js';

export interface EarlyStop {
  /** Stop after this many rounds without a lower held-back log loss. */
  readonly rounds: number;
  /** Share of each class held back for scoring. */
  readonly fraction: number;
}

export interface BoostedConfig {
  readonly rounds: number;
  readonly learning_rate: number;
  readonly max_depth: number;
  /** Minimum hessian sum in each child. */
  readonly min_child_weight: number;
  /** λ, the L2 penalty on leaf values. */
  readonly l2: number;
  /** Share of rows drawn (without replacement, one Bernoulli draw per row) for each tree. */
  readonly subsample: number;
  /** Share of columns a tree may split on, drawn per tree. */
  readonly colsample: number;
  /** Starting probability; null = the fit rows' event rate. */
  readonly base_score: number | null;
  readonly early_stop: EarlyStop | null;
}

export interface BoostedModel {
  readonly names: readonly string[];
  /** Bin edges per column (bin b holds (edges[b−1], edges[b]]); the trees' thresholds are these edges. */
  readonly edges: readonly (readonly number[])[];
  /** Log-odds every row starts from. */
  readonly baseMargin: number;
  /** Leaf values already include the learning rate. */
  readonly trees: readonly FlatTreeJson[];
  /** Trees kept (= trees.length): the round with the lowest held-back loss, or every round run. */
  readonly bestRound: number;
  readonly roundsRun: number;
  /** Mean log loss on the boosting rows with t trees at index t (index 0 = the base margin alone). */
  readonly trainLoss: readonly number[];
  /** Mean log loss on the held-back rows with t trees at index t (empty without early stopping). */
  readonly validLoss: readonly number[];
}

/** A config value of the wrong type or range; `key` names it. */
export class BoostedConfigError extends Error {
  constructor(
    message: string,
    readonly key: string,
    readonly value: unknown,
  ) {
    super(`boosted: ${message} (got ${key} = ${JSON.stringify(value)})`);
    this.name = 'BoostedConfigError';
  }
}

/** Feature columns that do not match the fitted model or each other. */
export class BoostedInputError extends Error {
  constructor(
    message: string,
    readonly expected: number,
    readonly got: number,
  ) {
    super(`boosted: ${message}`);
    this.name = 'BoostedInputError';
  }
}

const DEFAULTS: BoostedConfig = {
  rounds: 300,
  learning_rate: 0.05,
  max_depth: 5,
  min_child_weight: 1,
  l2: 1,
  subsample: 0.8,
  colsample: 0.8,
  base_score: null,
  early_stop: { rounds: 30, fraction: 0.1 },
};

/** Rows per logarithm in the train-loss sum (see gradientsAndLoss); 2^512 is far below the float64 limit. */
const LOSS_BLOCK = 512;

/** Hessian floor: p(1−p) underflows for confident rows, and a zero hessian would make a child free. */
const MIN_HESS = 1e-16;

export const boosted: Learner<BoostedConfig, BoostedModel> = {
  kind: 'boosted',
  version: 1,
  handlesMissing: true,

  resolveConfig(raw: unknown): BoostedConfig {
    return resolveBoostedConfig(raw);
  },

  fit(input: LearnerFitInput<BoostedConfig>): BoostedModel {
    return fitBoosted(input);
  },

  predict(model: BoostedModel, features: readonly Float64Array[], rows: Uint32Array): Float64Array {
    if (features.length !== model.names.length) {
      throw new BoostedInputError(`model has ${model.names.length} features, got ${features.length} columns`, model.names.length, features.length);
    }
    const margin = new Float64Array(rows.length).fill(model.baseMargin);
    addTreeValuesRaw(model.trees.map(treeFromJson), features, rows, margin);
    for (let i = 0; i < margin.length; i++) margin[i] = 1 / (1 + Math.exp(-margin[i]));
    return margin;
  },
};

export function resolveBoostedConfig(raw: unknown): BoostedConfig {
  if (raw === undefined || raw === null) return DEFAULTS;
  if (typeof raw !== 'object' || Array.isArray(raw)) throw new BoostedConfigError('config must be a mapping', '', raw);
  const r = raw as Record<string, unknown>;
  for (const key of Object.keys(r)) {
    if (!(key in DEFAULTS)) throw new BoostedConfigError(`unknown option (known: ${Object.keys(DEFAULTS).join(', ')})`, key, r[key]);
  }
  const num = (key: keyof BoostedConfig, ok: (v: number) => boolean, expected: string): number => {
    const v = r[key] === undefined ? DEFAULTS[key] : r[key];
    if (typeof v !== 'number' || !Number.isFinite(v) || !ok(v)) throw new BoostedConfigError(`${key} must be ${expected}`, key, v);
    return v;
  };
  const baseRaw = r.base_score;
  let base_score: number | null = null;
  if (baseRaw !== undefined && baseRaw !== null) {
    if (typeof baseRaw !== 'number' || !(baseRaw > 0 && baseRaw < 1)) throw new BoostedConfigError('base_score must be a probability in (0, 1)', 'base_score', baseRaw);
    base_score = baseRaw;
  }
  return {
    rounds: num('rounds', (v) => Number.isInteger(v) && v >= 1 && v <= 100_000, 'an integer in [1, 100000]'),
    learning_rate: num('learning_rate', (v) => v > 0 && v <= 1, 'in (0, 1]'),
    max_depth: num('max_depth', (v) => Number.isInteger(v) && v >= 1 && v <= 16, 'an integer in [1, 16]'),
    min_child_weight: num('min_child_weight', (v) => v >= 0, '≥ 0'),
    l2: num('l2', (v) => v >= 0, '≥ 0'),
    subsample: num('subsample', (v) => v > 0 && v <= 1, 'in (0, 1]'),
    colsample: num('colsample', (v) => v > 0 && v <= 1, 'in (0, 1]'),
    base_score,
    early_stop: resolveEarlyStop(r.early_stop === undefined ? DEFAULTS.early_stop : r.early_stop),
  };
}

/** null or `rounds: 0` turn early stopping off. */
function resolveEarlyStop(v: unknown): EarlyStop | null {
  if (v === null) return null;
  if (typeof v !== 'object' || Array.isArray(v)) throw new BoostedConfigError('early_stop must be a mapping {rounds, fraction} or null', 'early_stop', v);
  const o = v as Record<string, unknown>;
  for (const key of Object.keys(o)) {
    if (key !== 'rounds' && key !== 'fraction') throw new BoostedConfigError('unknown early_stop option (known: rounds, fraction)', `early_stop.${key}`, o[key]);
  }
  const rounds = o.rounds ?? 30;
  const fraction = o.fraction ?? 0.1;
  if (typeof rounds !== 'number' || !Number.isInteger(rounds) || rounds < 0) throw new BoostedConfigError('early_stop.rounds must be an integer ≥ 0', 'early_stop.rounds', rounds);
  if (typeof fraction !== 'number' || !(fraction > 0 && fraction <= 0.5)) throw new BoostedConfigError('early_stop.fraction must be in (0, 0.5]', 'early_stop.fraction', fraction);
  return rounds === 0 ? null : { rounds, fraction };
}

/**
 * Splits local rows 0..n−1 into boosting rows and held-back rows: per class, a seeded shuffle
 * and the first round(fraction · n_class) go to the held-back slice (at least one per class
 * when the class has two rows or more, so the slice sees both outcomes). Both lists ascending.
 */
function stratifiedSlice(y: Uint8Array, fraction: number, rng: Rng): { boost: Uint32Array; valid: Uint32Array } {
  const n = y.length;
  const held = new Uint8Array(n);
  for (const cls of [0, 1]) {
    const idx: number[] = [];
    for (let i = 0; i < n; i++) if (y[i] === cls) idx.push(i);
    const take = idx.length >= 2 ? Math.min(idx.length - 1, Math.max(1, Math.round(fraction * idx.length))) : 0;
    for (let k = 0; k < take; k++) {
      const j = k + rng.int(idx.length - k);
      const t = idx[k];
      idx[k] = idx[j];
      idx[j] = t;
      held[idx[k]] = 1;
    }
  }
  let nValid = 0;
  for (let i = 0; i < n; i++) nValid += held[i];
  const boost = new Uint32Array(n - nValid);
  const valid = new Uint32Array(nValid);
  for (let i = 0, b = 0, v = 0; i < n; i++) {
    if (held[i]) valid[v++] = i;
    else boost[b++] = i;
  }
  return { boost, valid };
}

/** Mean log loss of margins at local rows; softplus form so confident rows do not overflow. */
function meanLogLoss(margin: Float64Array, y: Uint8Array, rows: Uint32Array): number {
  let s = 0;
  for (let i = 0; i < rows.length; i++) {
    const r = rows[i];
    const z = y[r] === 1 ? -margin[r] : margin[r];
    s += z > 0 ? z + Math.log1p(Math.exp(-z)) : Math.log1p(Math.exp(z));
  }
  return rows.length > 0 ? s / rows.length : 0;
}

/**
 * Gradients and hessians of the log loss at local rows, and the rows' mean log loss, in one
 * pass sharing one exp per row: the loss after round t is taken from the same margins the
 * gradients of round t + 1 need. With e = exp(−|m|): p = 1/(1+e) or e/(1+e), p(1−p) =
 * e/(1+e)², and the loss is softplus(±m) = max(±m, 0) + log(1+e).
 *
 * The log(1+e) terms are summed as the log of running products of (1+e) ∈ (1, 2], one log per
 * LOSS_BLOCK rows: the log was half the cost of this pass. A block's product stays below
 * 2^LOSS_BLOCK, far from overflow, and its rounding error (≈ LOSS_BLOCK · 1.1e−16 relative)
 * moves the mean loss by ~1e−16, the same order as log(1+e) itself rounding for tiny e.
 */
function gradientsAndLoss(margin: Float64Array, y: Uint8Array, rows: Uint32Array, grad: Float64Array, hess: Float64Array): number {
  let s = 0;
  let prod = 1;
  let inBlock = 0;
  for (let i = 0; i < rows.length; i++) {
    const r = rows[i];
    const m = margin[r];
    const e = Math.exp(m >= 0 ? -m : m);
    const q = 1 / (1 + e);
    const pr = m >= 0 ? q : e * q;
    const h = e * q * q;
    const yr = y[r];
    grad[r] = pr - yr;
    hess[r] = h > MIN_HESS ? h : MIN_HESS;
    const z = yr === 1 ? -m : m;
    if (z > 0) s += z;
    prod *= 1 + e;
    if (++inBlock === LOSS_BLOCK) {
      s += Math.log(prod);
      prod = 1;
      inBlock = 0;
    }
  }
  s += Math.log(prod);
  return rows.length > 0 ? s / rows.length : 0;
}

function fitBoosted(input: LearnerFitInput<BoostedConfig>): BoostedModel {
  const bytes = treeArenaBytes(input.rows.length, input.features.length, STATS_NO_COUNT, liveHistograms(input.config.max_depth, false));
  return withKernelArena(bytes, (arena) => fitBoostedIn(input, arena));
}

/** Codes, gradients, hessians and tree buffers come from `arena` while it has room (see kernel/arena.ts). */
function fitBoostedIn({ features, names, rows, target, config, rng }: LearnerFitInput<BoostedConfig>, arena: KernelArena | null): BoostedModel {
  if (features.length !== names.length) throw new BoostedInputError(`${features.length} feature columns but ${names.length} names`, names.length, features.length);
  const n = rows.length;
  const p = features.length;
  const y = new Uint8Array(n);
  for (let i = 0; i < n; i++) y[i] = target[rows[i]];

  const es = config.early_stop;
  const { boost, valid } = es ? stratifiedSlice(y, es.fraction, rng) : { boost: Uint32Array.from({ length: n }, (_, i) => i), valid: new Uint32Array(0) };
  const useValid = es !== null && valid.length > 0;

  // Edges come from the boosting rows only, so the held-back slice is scored like unseen data.
  const boostGlobal = new Uint32Array(boost.length);
  for (let i = 0; i < boost.length; i++) boostGlobal[i] = rows[boost[i]];
  const edges: number[][] = [];
  const codes: BinCodes[] = [];
  const nBins = new Int32Array(p);
  const sampled = edgeSampleRows(boostGlobal);
  for (let c = 0; c < p; c++) {
    const m = fitNumericBins(features[c], boostGlobal, MAX_UINT8_BINS, sampled);
    edges.push(m.edges.slice());
    nBins[c] = m.edges.length + 1;
    const out = arena?.u8(n) ?? allocCodes(n, nBins[c]);
    encodeNumeric(m, features[c], rows, out);
    codes.push(out);
  }

  let events = 0;
  for (let i = 0; i < boost.length; i++) events += y[boost[i]];
  const prior = boost.length > 0 ? Math.min(1 - 1e-6, Math.max(1e-6, events / boost.length)) : 0.5;
  const base = config.base_score ?? prior;
  const baseMargin = Math.log(base / (1 - base));

  const margin = new Float64Array(n).fill(baseMargin);
  const grad = arena?.f64(n) ?? new Float64Array(n);
  const hess = arena?.f64(n) ?? new Float64Array(n);
  const sample = new Uint32Array(boost.length);
  const unsampled = new Uint32Array(boost.length);
  const leafOf = new Int32Array(n);
  const workspace = new GrowWorkspace(arena, n);
  const perm = Int32Array.from({ length: p }, (_, c) => c);
  const nCols = Math.max(1, Math.round(config.colsample * p));

  const opts: Omit<GrowOptions, 'candidates'> = {
    maxDepth: config.max_depth,
    minSplit: 2,
    split: { criterion: 'gradient', minLeafCount: 1, minLeafHess: config.min_child_weight, minGain: 0, lambda: config.l2 },
    leafValue: 'newton',
  };
  const trees: FlatTreeJson[] = [];
  const trainLoss: number[] = [gradientsAndLoss(margin, y, boost, grad, hess)];
  const validLoss: number[] = useValid ? [meanLogLoss(margin, y, valid)] : [];
  let bestLoss = useValid ? validLoss[0] : Infinity;
  let bestRound = 0;

  for (let t = 0; t < config.rounds; t++) {
    let m = 0;
    let u = 0;
    if (config.subsample < 1) {
      for (let i = 0; i < boost.length; i++) {
        if (rng.next() < config.subsample) sample[m++] = boost[i];
        else unsampled[u++] = boost[i];
      }
    }
    // An empty draw (tiny data) would give a tree with no rows; fall back to every boosting row.
    if (m === 0) {
      sample.set(boost);
      m = boost.length;
      u = 0;
    }
    const candidates = drawColumns(perm, nCols, rng);
    const grown = sample.subarray(0, m);
    const tree = growTree({ codes, nBins, thresholds: edges, grad, hess, rows: grown, leafOf, workspace }, { ...opts, candidates });
    const value = tree.value;
    for (let k = 0; k < value.length; k++) value[k] *= config.learning_rate;
    // rows the tree was grown on already know their leaf; only the rest are run through it
    for (let i = 0; i < m; i++) {
      const r = grown[i];
      margin[r] += value[leafOf[r]];
    }
    addLeafValuesBinned(tree, codes, unsampled.subarray(0, u), margin);
    trees.push(treeToJson(tree));
    trainLoss.push(gradientsAndLoss(margin, y, boost, grad, hess));
    if (!useValid) continue;
    addLeafValuesBinned(tree, codes, valid, margin);
    const loss = meanLogLoss(margin, y, valid);
    validLoss.push(loss);
    if (loss < bestLoss) {
      bestLoss = loss;
      bestRound = t + 1;
    } else if (t + 1 - bestRound >= (es as EarlyStop).rounds) break;
  }
  const kept = useValid ? bestRound : trees.length;
  return { names: [...names], edges, baseMargin, trees: trees.slice(0, kept), bestRound: kept, roundsRun: trees.length, trainLoss, validLoss };
}

/** Partial Fisher–Yates over a persistent permutation; the first k, ascending, are the tree's columns. */
function drawColumns(perm: Int32Array, k: number, rng: Rng): Int32Array {
  if (k >= perm.length) return Int32Array.from({ length: perm.length }, (_, c) => c);
  for (let i = 0; i < k; i++) {
    const j = i + rng.int(perm.length - i);
    const t = perm[i];
    perm[i] = perm[j];
    perm[j] = t;
  }
  return perm.slice(0, k).sort();
}
