/**
 * Block scoring of many trees (addTreeValuesRaw, used by the forest and boosted learners) against
 * the plain one-row-at-a-time walk (leafIndexRaw), which tree-core.test.ts checks against
 * scikit-learn and ml-cart. The two must reach the same leaf for every row, missing values
 * included, and add the trees' values in the same order (so sums are bit-identical).
 */
import { describe, expect, it } from 'vitest';
import { addTreeValuesRaw, leafIndexRaw, type RawTree } from '../stages/core/tree/predict.js';
import { binMatrix, growForest } from '../stages/core/tree/forest.js';
import { iota, testRng } from './helpers/seeded.js';

function data(n: number, p: number, seed: number) {
  const rng = testRng(seed);
  const columns = Array.from({ length: p }, (_, j) => Float64Array.from({ length: n }, () => (j % 3 === 0 && rng.next() < 0.15 ? NaN : Math.round(rng.next() * 50))));
  const y = Uint8Array.from({ length: n }, (_, i) => (rng.next() < (columns[1][i] > 25 ? 0.6 : 0.2) + (columns[0][i] !== columns[0][i] ? 0.3 : 0) ? 1 : 0));
  return { columns, y, rng };
}

function oneByOne(trees: readonly RawTree[], columns: readonly Float64Array[], rows: Uint32Array, start: number): Float64Array {
  const acc = new Float64Array(rows.length).fill(start);
  const leaf = new Int32Array(rows.length);
  for (const t of trees) {
    leafIndexRaw(t, columns, rows, leaf);
    for (let i = 0; i < rows.length; i++) acc[i] += t.value[leaf[i]];
  }
  return acc;
}

describe('addTreeValuesRaw', () => {
  it('equals tree-at-a-time scoring bit for bit on grown forests with missing values, over unordered rows and a partial last block', () => {
    const n = 3000;
    const { columns, y, rng } = data(n, 9, 4);
    const forest = growForest(
      binMatrix(columns, iota(n)),
      y,
      { trees: 30, maxDepth: 7, minLeafCount: 5, featuresPerSplit: 3, sample: 1, bootstrap: true, permutationRows: 0 },
      testRng(8),
    );
    expect(forest.trees.some((t) => t.missingLeft.some((v, k) => v === 1 && t.feature[k] >= 0))).toBe(true);
    // rows in a scrambled order, not a multiple of the block or of four
    const rows = Uint32Array.from({ length: 1999 }, () => rng.int(n));
    const got = new Float64Array(rows.length).fill(0.25);
    addTreeValuesRaw(forest.trees, columns, rows, got);
    expect(Array.from(got)).toEqual(Array.from(oneByOne(forest.trees, columns, rows, 0.25)));
  });

  it('handles a single-leaf tree, an unbalanced tree, and columns no tree uses', () => {
    const columns = [Float64Array.from([1, 5, NaN, 9, 3, NaN, 7]), Float64Array.from([0, 0, 0, 0, 0, 0, 0]), Float64Array.from([2, NaN, 8, 4, 6, 1, NaN])];
    const leafOnly: RawTree = { feature: Int32Array.from([-1]), threshold: Float64Array.from([0]), missingLeft: Uint8Array.from([0]), left: Int32Array.from([-1]), right: Int32Array.from([-1]), value: Float64Array.from([0.5]) };
    // node 0: x0 <= 4 (missing right) → leaf 1 | node 2: x2 <= 5 (missing left) → leaf 3 | node 4: x0 <= 8 → leaves 5, 6
    const unbalanced: RawTree = {
      feature: Int32Array.from([0, -1, 2, -1, 0, -1, -1]),
      threshold: Float64Array.from([4, 0, 5, 0, 8, 0, 0]),
      missingLeft: Uint8Array.from([0, 0, 1, 0, 0, 0, 0]),
      left: Int32Array.from([1, -1, 3, -1, 5, -1, -1]),
      right: Int32Array.from([2, -1, 4, -1, 6, -1, -1]),
      value: Float64Array.from([0, 10, 0, 20, 0, 30, 40]),
    };
    const rows = iota(7);
    const got = new Float64Array(7);
    addTreeValuesRaw([leafOnly, unbalanced], columns, rows, got);
    // by hand: x0 = 1 → 10; 5 (x2 NaN → left) → 20; NaN (x2 8 → right; x0 NaN → right) → 40;
    // 9 (x2 4 → left) → 20; 3 → 10; NaN (x2 1 → left) → 20; 7 (x2 NaN → left) → 20
    expect(Array.from(got)).toEqual([10.5, 20.5, 40.5, 20.5, 10.5, 20.5, 20.5]);
    expect(Array.from(got)).toEqual(Array.from(oneByOne([leafOnly, unbalanced], columns, rows, 0)));
  });
});
