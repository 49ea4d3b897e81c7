/**
 * Row splits: the holdout and the stratified outer and inner folds. Pure functions of the rows,
 * the target and a seed, so the same data and seed always give the same split.
 */
import type { Rng } from '../stages/types.js';
import { shuffleInPlace } from './rng.js';

/**
 * Stratified K-fold assignment of `rows` (indices into `target`). Each class is shuffled and dealt
 * round-robin, with the dealing of the second class continuing where the first stopped, so fold sizes
 * differ by at most one row and every fold's event rate is as close to the overall rate as counts allow.
 * Returns the fold number (0..k-1) per position of `rows`.
 */
export function stratifiedFolds(rows: Uint32Array, target: Uint8Array, k: number, rng: Rng): Uint8Array {
  const pos: number[] = [];
  const neg: number[] = [];
  for (let i = 0; i < rows.length; i++) (target[rows[i]] === 1 ? pos : neg).push(i);
  const fold = new Uint8Array(rows.length);
  let dealt = 0;
  for (const group of [pos, neg]) {
    const idx = Uint32Array.from(group);
    shuffleInPlace(idx, rng);
    for (let j = 0; j < idx.length; j++) fold[idx[j]] = (dealt + j) % k;
    dealt += idx.length;
  }
  return fold;
}

/** Stratified random holdout: a `fraction` of each class, rounded to whole rows. */
export function stratifiedHoldout(nRows: number, target: Uint8Array, fraction: number, rng: Rng): Uint8Array {
  const isHoldout = new Uint8Array(nRows);
  for (const cls of [1, 0]) {
    const idx: number[] = [];
    for (let i = 0; i < nRows; i++) if (target[i] === cls) idx.push(i);
    const a = Uint32Array.from(idx);
    shuffleInPlace(a, rng);
    const take = Math.round(a.length * fraction);
    for (let j = 0; j < take; j++) isHoldout[a[j]] = 1;
  }
  return isHoldout;
}

/** Out-of-time holdout: rows dated on or after `fromDay` (epoch days). Rows without a date stay in training. */
export function timeHoldout(days: Float64Array, fromDay: number): Uint8Array {
  const isHoldout = new Uint8Array(days.length);
  for (let i = 0; i < days.length; i++) if (days[i] >= fromDay) isHoldout[i] = 1;
  return isHoldout;
}

/** Rows of `rows` whose fold is (or is not) `k`, in ascending order of position. */
export function foldRows(rows: Uint32Array, fold: Uint8Array, k: number, inFold: boolean): Uint32Array {
  let n = 0;
  for (let i = 0; i < rows.length; i++) if ((fold[i] === k) === inFold) n++;
  const out = new Uint32Array(n);
  let j = 0;
  for (let i = 0; i < rows.length; i++) if ((fold[i] === k) === inFold) out[j++] = rows[i];
  return out;
}
