/**
 * The stored form of a fitted tree inside a learner's or stage's state: only what applying it to
 * raw values needs (split column, threshold, missing side, children, leaf value), as plain number
 * arrays. A forest keeps hundreds of these, so the training statistics of FlatTreeJson stay out.
 */
import { TreeParamError } from './errors.js';
import type { FlatTree, RawTree } from './predict.js';

export interface CompactTree {
  readonly feature: number[];
  /** null = +Infinity (only missing values go right). */
  readonly threshold: (number | null)[];
  readonly missingLeft: number[];
  readonly left: number[];
  readonly right: number[];
  readonly value: number[];
}

/** `value` replaces the tree's own leaf values when given (e.g. smoothed rates). */
export function compactTree(t: FlatTree, value: ArrayLike<number> = t.value): CompactTree {
  return {
    feature: Array.from(t.feature),
    threshold: Array.from(t.threshold, (v) => (Number.isFinite(v) ? v : null)),
    missingLeft: Array.from(t.missingLeft),
    left: Array.from(t.left),
    right: Array.from(t.right),
    value: Array.from(value),
  };
}

export function loadCompactTree(c: CompactTree): RawTree {
  const n = c.feature.length;
  for (const [k, v] of Object.entries(c)) {
    if (!Array.isArray(v) || v.length !== n) throw new TreeParamError('compact tree arrays must all have the node count', k, n);
  }
  return {
    feature: Int32Array.from(c.feature),
    threshold: Float64Array.from(c.threshold, (v) => (v === null ? Infinity : v)),
    missingLeft: Uint8Array.from(c.missingLeft),
    left: Int32Array.from(c.left),
    right: Int32Array.from(c.right),
    value: Float64Array.from(c.value),
  };
}
