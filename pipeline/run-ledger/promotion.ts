/**
 * The promotion rule of `foldstack run --promote-if-better`: should a new run replace the champion
 * of its config name?
 *
 * - No champion yet: promote.
 * - The runs did not score the same holdout rows (see compare.ts `pairingOf`): never promote.
 *   Figures from different rows differ by sampling alone, and no test here can separate that from
 *   a real gain; a person can still promote by hand with `foldstack promote`.
 * - Otherwise the gain (challenger − champion, on the holdout rows, at the champion's budget)
 *   must be at least `min_gain`, and the evidence must reach `max_p`:
 *   - auc: the two-sided DeLong p of the paired AUC test must be ≤ max_p (two-sided is the
 *     conservative choice: with a positive gain the one-sided p would be half of it).
 *   - capture, pauc: a one-sided paired percentile-bootstrap test (stratified, 1,000 replicates,
 *     seeded): the max_p-quantile of the replicate gains must be above 0. That is the same as
 *     "the one-sided percentile-bootstrap p ≤ max_p", read from the interval of the replicate
 *     distribution rather than reported as a p-value; with max_p = 1 there is nothing to test.
 */
import type { PromoteConfig } from '../config/types.js';
import { pairedBootstrapCi } from '../metrics/bootstrap.js';
import { delongTest } from '../metrics/delong.js';
import { MetricInputError } from '../metrics/input.js';
import { partialAuc } from '../metrics/partial-auc.js';
import { createRng } from '../rng.js';
import { captureAt, COMPARE_REPLICATES, pairingOf } from './compare.js';
import { budgetOf, type HoldoutScores, type RunRecord } from './read.js';

export interface PromotionDecision {
  readonly promote: boolean;
  readonly metric: PromoteConfig['metric'];
  readonly challenger: string;
  /** The champion run id before the decision; null when there was none. */
  readonly champion: string | null;
  readonly paired: boolean | null;
  /** challenger − champion on the rule's metric; null when not computed. */
  readonly gain: number | null;
  /** auc: the two-sided DeLong p. */
  readonly p: number | null;
  /** capture/pauc: the max_p-quantile of the bootstrap replicate gains. */
  readonly quantile: number | null;
  /** One line a person can read. */
  readonly reason: string;
}

export interface Contender {
  readonly run: RunRecord;
  readonly holdout: HoldoutScores;
}

/** `champion` is null when the name has none. */
export function decidePromotion(challenger: Contender, champion: Contender | null, rule: PromoteConfig): PromotionDecision {
  const base = { metric: rule.metric, challenger: challenger.run.id, champion: champion?.run.id ?? null };
  const none = { gain: null, p: null, quantile: null };
  if (!champion) return { ...base, ...none, promote: true, paired: null, reason: 'no champion yet' };
  if (champion.run.id === challenger.run.id) return { ...base, ...none, promote: false, paired: true, reason: 'the run is already the champion' };
  const pairing = pairingOf(champion.run, champion.holdout, challenger.run, challenger.holdout);
  if (!pairing.paired) {
    return { ...base, ...none, promote: false, paired: false, reason: `not promoted: ${pairing.reason}, so the comparison is unpaired; promote by hand with foldstack promote if intended` };
  }
  const y = champion.holdout.target;
  const pA = stackScores(champion.holdout);
  const pB = stackScores(challenger.holdout);
  const budget = budgetOf(champion.run);
  const gainText = (g: number) => `${rule.metric} gain ${signed(g)} (min_gain ${rule.minGain})`;

  if (rule.metric === 'auc') {
    let t;
    try {
      t = delongTest(y, pB, pA);
    } catch (err) {
      if (!(err instanceof MetricInputError)) throw err;
      return { ...base, ...none, promote: false, paired: true, gain: 0, reason: `not promoted: the DeLong test is undefined (${err.message})` };
    }
    const promote = t.diff >= rule.minGain && t.p <= rule.maxP;
    const why = `${gainText(t.diff)}, DeLong two-sided p ${t.p.toPrecision(3)} (max_p ${rule.maxP})`;
    return { ...base, promote, paired: true, gain: t.diff, p: t.p, quantile: null, reason: `${promote ? 'promoted' : 'not promoted'}: ${why}` };
  }

  const metric = rule.metric === 'capture' ? captureAt(budget) : (yy: Uint8Array, pp: Float64Array) => partialAuc(yy, pp, budget)?.mcclish ?? null;
  const a = metric(y, pA);
  const b = metric(y, pB);
  if (a === null || b === null) return { ...base, ...none, promote: false, paired: true, reason: `not promoted: ${rule.metric} is undefined on the holdout` };
  const gain = b - a;
  if (gain < rule.minGain) return { ...base, ...none, promote: false, paired: true, gain, reason: `not promoted: ${gainText(gain)}` };
  if (rule.maxP >= 1) return { ...base, ...none, promote: true, paired: true, gain, reason: `promoted: ${gainText(gain)}, max_p 1 (no test)` };
  const q = gainQuantile(y, pB, pA, metric, rule.maxP, createRng(champion.run.manifest.seed, 'promote', rule.metric));
  const promote = q !== null && q > 0;
  const why = `${gainText(gain)}, one-sided paired bootstrap: ${rule.maxP}-quantile of the gain ${q === null ? 'undefined' : signed(q)} ${promote ? '> 0' : '≤ 0'}`;
  return { ...base, promote, paired: true, gain, p: null, quantile: q, reason: `${promote ? 'promoted' : 'not promoted'}: ${why}` };
}

/**
 * The alpha-quantile of the paired replicate differences, read from a percentile interval: the
 * interval at level 1 − 2·alpha has it as its lower end (alpha < 1/2), the one at level
 * 2·alpha − 1 as its upper end (alpha > 1/2). At alpha = 1/2 a vanishing level gives the median.
 */
function gainQuantile(y: Uint8Array, pB: Float64Array, pA: Float64Array, metric: (y: Uint8Array, p: Float64Array) => number | null, alpha: number, rng: ReturnType<typeof createRng>): number | null {
  const level = Math.max(Math.abs(1 - 2 * alpha), 1e-12);
  const ci = pairedBootstrapCi(y, pB, pA, metric, rng, { replicates: COMPARE_REPLICATES, level });
  if (!ci) return null;
  return alpha < 0.5 ? ci.low : ci.high;
}

function stackScores(h: HoldoutScores): Float64Array {
  const s = h.scores.get('stack');
  if (!s) throw new Error('internal: holdout scores without a stack column');
  return s;
}

function signed(x: number): string {
  return `${x >= 0 ? '+' : ''}${x.toFixed(4)}`;
}
