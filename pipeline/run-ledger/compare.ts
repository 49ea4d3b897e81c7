/**
 * Two runs side by side: every learner's and the stack's metrics (holdout and out-of-fold) with
 * the difference B − A. When both runs scored the very same holdout rows — same data file digest,
 * same split digest, and holdout.csv lists the same ids with the same targets in the same order —
 * the comparison is paired, and the stack is also compared by tests that use the pairing: the
 * DeLong test of the two correlated AUCs and a paired stratified bootstrap CI of the capture
 * difference. Otherwise only the figures each run reported are set side by side, because a
 * paired test on different rows would be meaningless.
 */
import { delongTest } from '../metrics/delong.js';
import { pairedBootstrapCi } from '../metrics/bootstrap.js';
import { budgetMetrics } from '../metrics/budget.js';
import { MetricInputError } from '../metrics/input.js';
import type { MetricSet } from '../metrics/evaluate.js';
import { createRng } from '../rng.js';
import { budgetOf, type HoldoutScores, type RunRecord } from './read.js';

export const COMPARED_METRICS = ['auc', 'pauc', 'capture', 'precision', 'lift', 'ks', 'logloss', 'brier'] as const;
export type ComparedMetric = (typeof COMPARED_METRICS)[number];

export const COMPARE_REPLICATES = 1000;

export interface MetricRow {
  readonly part: 'holdout' | 'oof';
  /** A learner name or `stack`. */
  readonly model: string;
  readonly metric: ComparedMetric;
  /** null when the run has no such model or the metric is undefined for it. */
  readonly a: number | null;
  readonly b: number | null;
  /** b − a. */
  readonly delta: number | null;
}

export interface RunSide {
  readonly id: string;
  readonly dir: string;
  readonly name: string;
  readonly created: string;
  readonly config_digest: string;
  readonly data_digest: string;
  readonly split_digest: string;
  readonly budget: number;
}

export interface Pairing {
  readonly paired: boolean;
  /** Why the runs are not paired; null when they are. */
  readonly reason: string | null;
}

export interface DelongComparison {
  readonly auc_a: number;
  readonly auc_b: number;
  /** auc_b − auc_a. */
  readonly diff: number;
  readonly z: number;
  /** Two-sided. */
  readonly p: number;
}

export interface CaptureComparison {
  readonly budget: number;
  /** capture_b − capture_a on the holdout rows. */
  readonly estimate: number | null;
  readonly low: number;
  readonly high: number;
  readonly level: number;
  readonly replicates: number;
}

export interface PairedTests {
  /** null with `delong_note` when the test is undefined (e.g. identical rankings). */
  readonly delong: DelongComparison | null;
  readonly delong_note: string | null;
  readonly capture: CaptureComparison | null;
}

export interface Comparison {
  readonly a: RunSide;
  readonly b: RunSide;
  readonly pairing: Pairing;
  /** Set when the runs were evaluated at different budgets (capture figures then differ in meaning). */
  readonly budget_note: string | null;
  readonly rows: readonly MetricRow[];
  /** Present only for paired runs. */
  readonly tests: PairedTests | null;
}

export function pairingOf(a: RunRecord, ha: HoldoutScores, b: RunRecord, hb: HoldoutScores): Pairing {
  const no = (reason: string): Pairing => ({ paired: false, reason });
  if (a.manifest.data.digest !== b.manifest.data.digest) return no('the runs read different data files (data digests differ)');
  if (a.manifest.split.digest !== b.manifest.split.digest) return no('the runs split the rows differently (split digests differ)');
  if (ha.ids.length !== hb.ids.length) return no(`the holdouts differ in size (${ha.ids.length} vs ${hb.ids.length} rows)`);
  for (let i = 0; i < ha.ids.length; i++) {
    if (ha.ids[i] !== hb.ids[i]) return no(`the holdout rows differ (row ${i + 1}: id ${ha.ids[i]} vs ${hb.ids[i]})`);
    if (ha.target[i] !== hb.target[i]) return no(`the holdout targets differ (id ${ha.ids[i]})`);
  }
  return { paired: true, reason: null };
}

export function compareRuns(a: RunRecord, ha: HoldoutScores, b: RunRecord, hb: HoldoutScores): Comparison {
  const sideA = sideOf(a);
  const sideB = sideOf(b);
  const pairing = pairingOf(a, ha, b, hb);
  return {
    a: sideA,
    b: sideB,
    pairing,
    budget_note: sideA.budget === sideB.budget ? null : `budgets differ (A ${sideA.budget}, B ${sideB.budget}): each run's capture, precision, lift and pAUC are at its own budget; paired figures use A's`,
    rows: [...metricRows('holdout', a, b), ...metricRows('oof', a, b)],
    tests: pairing.paired ? pairedTests(ha.target, stackOf(ha), stackOf(hb), sideA.budget, a.manifest.seed) : null,
  };
}

function sideOf(r: RunRecord): RunSide {
  return {
    id: r.id,
    dir: r.dir,
    name: r.manifest.name,
    created: r.manifest.created,
    config_digest: r.manifest.config_digest,
    data_digest: r.manifest.data.digest,
    split_digest: r.manifest.split.digest,
    budget: budgetOf(r),
  };
}

/** Models in A's order, then B's extra ones; `stack` last. */
function metricRows(part: 'holdout' | 'oof', a: RunRecord, b: RunRecord): MetricRow[] {
  const setsA = a.metrics[part];
  const setsB = b.metrics[part];
  const learners = [...new Set([...Object.keys(setsA), ...Object.keys(setsB)])].filter((m) => m !== 'stack');
  const rows: MetricRow[] = [];
  for (const model of [...learners, 'stack']) {
    for (const metric of COMPARED_METRICS) {
      const va = valueOf(setsA[model], metric);
      const vb = valueOf(setsB[model], metric);
      rows.push({ part, model, metric, a: va, b: vb, delta: va === null || vb === null ? null : vb - va });
    }
  }
  return rows;
}

function valueOf(set: MetricSet | undefined, metric: ComparedMetric): number | null {
  const v = set?.[metric];
  return typeof v === 'number' ? v : null;
}

function stackOf(h: HoldoutScores): Float64Array {
  const s = h.scores.get('stack');
  if (!s) throw new Error('internal: holdout scores without a stack column');
  return s;
}

/** The capture at the budget as a bootstrap statistic. */
export function captureAt(budget: number): (y: Uint8Array, p: Float64Array) => number | null {
  return (y, p) => budgetMetrics(y, p, budget)?.capture ?? null;
}

function pairedTests(y: Uint8Array, stackA: Float64Array, stackB: Float64Array, budget: number, seed: number): PairedTests {
  let delong: DelongComparison | null = null;
  let note: string | null = null;
  try {
    // Argument order B, A so that diff and z have the sign of B − A, like every delta here.
    const t = delongTest(y, stackB, stackA);
    delong = { auc_a: t.auc2, auc_b: t.auc1, diff: t.diff, z: t.z, p: t.p };
  } catch (err) {
    if (!(err instanceof MetricInputError)) throw err;
    note = `DeLong test undefined: ${err.message}`;
  }
  const ci = pairedBootstrapCi(y, stackB, stackA, captureAt(budget), createRng(seed, 'compare', 'capture'), { replicates: COMPARE_REPLICATES });
  return {
    delong,
    delong_note: note,
    capture: ci ? { budget, estimate: ci.estimate, low: ci.low, high: ci.high, level: ci.level, replicates: ci.replicates } : null,
  };
}
