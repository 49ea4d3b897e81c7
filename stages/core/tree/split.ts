/**
 * Best split of a node from its histogram. The only place where minimum leaf size and minimum
 * gain are enforced, so every tree-shaped learner gets the same rules.
 *
 * A candidate split of column c at bin b sends codes <= b left. When the node has rows with a
 * missing value, both placements of the missing slot are tried and the better one is learned;
 * "all non-missing left, missing right" is also a candidate. Without missing rows at the node,
 * future missing values follow the child with more fit rows (ties: left) — common practice, no
 * source. A histogram without row counts (boosting, see histogram.ts) measures "more" and "empty"
 * by hessian sum (cover) instead, and then supports no row-count minimum beyond 1.
 *
 * Ties are broken by a fixed rule, never randomly: a candidate replaces the incumbent only
 * with a strictly larger gain, scanning columns in ascending index order, bins in ascending
 * order, and "missing right" before "missing left".
 */
import { STATS, type HistogramLayout } from './histogram.js';
import { TreeParamError } from './errors.js';

/**
 * `gini`: gradient = weighted event indicator, hessian = weight; gain is the decrease of
 *   weight-times-Gini impurity, W·2p(1−p) summed over children.
 * `gradient`: gain = ½ [G_L²/(H_L+λ) + G_R²/(H_R+λ) − G²/(H+λ)] (Chen & Guestrin 2016,
 *   "XGBoost: A Scalable Tree Boosting System", eq. 7, without the γ term, which is `minGain`).
 */
export type Criterion = 'gini' | 'gradient';

export interface SplitParams {
  readonly criterion: Criterion;
  /** Minimum rows in each child, >= 1 (a count; fractions are resolved at the boundary). */
  readonly minLeafCount: number;
  /** Minimum hessian sum (sample weight for Gini) in each child. */
  readonly minLeafHess: number;
  /** Minimum gain, in the criterion's own units; a split also needs a strictly positive gain. */
  readonly minGain: number;
  /** L2 penalty on leaf values (gradient criterion only). */
  readonly lambda: number;
}

/** The node's totals and the winning split; reused across nodes so search allocates nothing. */
export class SplitResult {
  feature = -1;
  bin = -1;
  missingLeft = false;
  gain = 0;
  leftGrad = 0;
  leftHess = 0;
  leftCount = 0;

  reset(): void {
    this.feature = -1;
    this.bin = -1;
    this.missingLeft = false;
    this.gain = 0;
    this.leftGrad = 0;
    this.leftHess = 0;
    this.leftCount = 0;
  }
}

/** Weighted Gini impurity times weight: 2·g·(h−g)/h, 0 for an empty child. */
function giniMass(g: number, h: number): number {
  return h > 0 ? (2 * g * (h - g)) / h : 0;
}

function score(criterion: Criterion, g: number, h: number, lambda: number): number {
  return criterion === 'gini' ? -giniMass(g, h) : (g * g) / (h + lambda) / 2;
}

/**
 * Writes the best split over columns cols[0..nCols) into `out` (out.feature = -1 when no split
 * passes the rules). `totGrad/totHess/totCount` are the node's totals.
 */
export function findBestSplit(
  hist: Float64Array,
  layout: HistogramLayout,
  cols: Int32Array,
  nCols: number,
  totGrad: number,
  totHess: number,
  totCount: number,
  p: SplitParams,
  out: SplitResult,
): void {
  out.reset();
  const crit = p.criterion;
  if (crit === 'gini' && (totGrad <= 0 || totGrad >= totHess)) return;
  const S = layout.stats;
  const counted = S === STATS;
  if (!counted && p.minLeafCount > 1) throw new TreeParamError('a histogram without row counts cannot enforce minLeafCount > 1', 'minLeafCount', p.minLeafCount);
  const lambda = p.lambda;
  const minN = p.minLeafCount;
  const minH = p.minLeafHess;
  const parent = score(crit, totGrad, totHess, lambda);
  let best = Math.max(p.minGain, 0);
  let found = false;
  for (let k = 0; k < nCols; k++) {
    const c = cols[k];
    const nb = layout.nBins[c];
    const base = layout.offset[c] * S;
    const mAt = base + nb * S;
    const mg = hist[mAt];
    const mh = hist[mAt + 1];
    // rows with a missing value at this node (without counts: any hessian mass)
    const mn = counted ? hist[mAt + 2] : mh > 0 ? 1 : 0;
    // without counts, a child is empty when no filled bin lies on its side
    let lastFilled = nb - 1;
    if (!counted) while (lastFilled >= 0 && hist[base + lastFilled * S + 1] === 0) lastFilled--;
    let lg = 0;
    let lh = 0;
    let ln = 0;
    const lastBin = mn > 0 ? nb - 1 : nb - 2;
    for (let b = 0; b <= lastBin; b++) {
      const at = base + b * S;
      lg += hist[at];
      lh += hist[at + 1];
      // an empty bin gives the same partition as the bin before it (or an empty left child)
      if (counted) {
        ln += hist[at + 2];
        if (hist[at + 2] === 0) continue;
      } else if (hist[at + 1] === 0) continue;
      const valuesRight = b < lastFilled;
      // missing right
      let rn = totCount - ln;
      const sizedR = counted ? ln >= minN && rn >= minN : valuesRight || mn > 0;
      if (sizedR && lh >= minH && totHess - lh >= minH) {
        const gain = score(crit, lg, lh, lambda) + score(crit, totGrad - lg, totHess - lh, lambda) - parent;
        if (gain > best || (!found && gain === best && gain > 0)) {
          best = gain;
          found = true;
          out.feature = c;
          out.bin = b;
          out.missingLeft = mn > 0 ? false : counted ? ln >= rn : lh >= totHess - lh;
          out.gain = gain;
          out.leftGrad = lg;
          out.leftHess = lh;
          out.leftCount = counted ? ln : NaN;
        }
      }
      if (mn === 0 || b === nb - 1) continue;
      // missing left
      const ln2 = ln + mn;
      rn = totCount - ln2;
      const lg2 = lg + mg;
      const lh2 = lh + mh;
      const sizedL = counted ? ln2 >= minN && rn >= minN : valuesRight;
      if (sizedL && lh2 >= minH && totHess - lh2 >= minH) {
        const gain = score(crit, lg2, lh2, lambda) + score(crit, totGrad - lg2, totHess - lh2, lambda) - parent;
        if (gain > best || (!found && gain === best && gain > 0)) {
          best = gain;
          found = true;
          out.feature = c;
          out.bin = b;
          out.missingLeft = true;
          out.gain = gain;
          out.leftGrad = lg2;
          out.leftHess = lh2;
          out.leftCount = counted ? ln2 : NaN;
        }
      }
    }
  }
}
