/**
 * The ranking summary behind the ROC, gains, KS and precision-recall metrics: rows grouped into
 * tie blocks (one per distinct score), highest score first, with cumulative event and non-event
 * counts after each block. Every threshold metric reads its operating points from here, so a tie
 * block is never split and each metric costs one sort.
 */
import { checkScores } from './input.js';

export interface ScoreCurve {
  readonly n: number;
  readonly nPos: number;
  readonly nNeg: number;
  /** Number of distinct scores. */
  readonly blocks: number;
  /** Score of block k (k = 0 .. blocks-1), strictly descending. */
  readonly score: Float64Array;
  /** Events selected after taking blocks 0..k-1; index 0 is the empty selection (length blocks+1). */
  readonly cumPos: Float64Array;
  /** Non-events selected after taking blocks 0..k-1 (length blocks+1). */
  readonly cumNeg: Float64Array;
}

/**
 * Events and non-events are sorted separately with the native numeric typed-array sort (much
 * faster than an index sort with a comparator) and merged from the top.
 */
export function scoreCurve(y: Uint8Array, p: Float64Array, metric = 'scoreCurve'): ScoreCurve {
  const n = y.length;
  const nPos = checkScores(metric, y, p);
  const nNeg = n - nPos;
  const pos = new Float64Array(nPos);
  const neg = new Float64Array(nNeg);
  for (let i = 0, a = 0, b = 0; i < n; i++) {
    if (y[i] === 1) pos[a++] = p[i];
    else neg[b++] = p[i];
  }
  pos.sort();
  neg.sort();
  const score = new Float64Array(n);
  const cumPos = new Float64Array(n + 1);
  const cumNeg = new Float64Array(n + 1);
  let i = nPos - 1;
  let j = nNeg - 1;
  let k = 0;
  while (i >= 0 || j >= 0) {
    const v = i < 0 ? neg[j] : j < 0 ? pos[i] : Math.max(pos[i], neg[j]);
    let dp = 0;
    let dn = 0;
    while (i >= 0 && pos[i] === v) {
      i--;
      dp++;
    }
    while (j >= 0 && neg[j] === v) {
      j--;
      dn++;
    }
    score[k] = v;
    cumPos[k + 1] = cumPos[k] + dp;
    cumNeg[k + 1] = cumNeg[k] + dn;
    k++;
  }
  return { n, nPos, nNeg, blocks: k, score: score.subarray(0, k), cumPos: cumPos.subarray(0, k + 1), cumNeg: cumNeg.subarray(0, k + 1) };
}
