/**
 * The boosting fast path of the tree core: growTree reporting each grown row's leaf (leafOf) and
 * reusing buffers across trees (GrowWorkspace). Both must leave the trees exactly as a fresh,
 * buffer-free call grows them; leafOf is checked against an independent traversal of the
 * finished tree on the bin codes (leafIndexBinned).
 */
import { describe, expect, it } from 'vitest';
import { allocCodes, binThresholds, encodeNumeric, fitNumericBins, valueBinCount, type BinCodes } from '../stages/core/tree/bin.js';
import { growTree, GrowWorkspace, type GrowOptions } from '../stages/core/tree/grow.js';
import { leafIndexBinned, treeToJson } from '../stages/core/tree/predict.js';
import { testRng } from './helpers/seeded.js';

function problem(n: number, p: number, seed: number) {
  const rng = testRng(seed);
  const cols = Array.from({ length: p }, (_, j) => Float64Array.from({ length: n }, () => (j % 3 === 0 && rng.next() < 0.1 ? NaN : rng.next() * 10)));
  const y = Uint8Array.from({ length: n }, (_, i) => (rng.next() < (cols[1][i] > 5 ? 0.7 : 0.2) + (cols[0][i] !== cols[0][i] ? 0.2 : 0) ? 1 : 0));
  const all = Uint32Array.from({ length: n }, (_, i) => i);
  const mappers = cols.map((x) => fitNumericBins(x, all, 255));
  const nBins = Int32Array.from(mappers, valueBinCount);
  const codes: BinCodes[] = mappers.map((m, c) => {
    const out = allocCodes(n, nBins[c]);
    encodeNumeric(m, cols[c], all, out);
    return out;
  });
  // log-loss gradients at margin 0 with a row-specific offset, so gradients vary across rows
  const grad = Float64Array.from(y, (v, i) => 1 / (1 + Math.exp(-(i % 7) / 7)) - v);
  const hess = Float64Array.from(grad, (g, i) => (g + y[i]) * (1 - g - y[i]));
  return { n, codes, nBins, thresholds: mappers.map(binThresholds), grad, hess, rng };
}

const BOOST: GrowOptions = {
  maxDepth: 4,
  minSplit: 2,
  split: { criterion: 'gradient', minLeafCount: 1, minLeafHess: 0.5, minGain: 0, lambda: 1 },
  leafValue: 'newton',
};

describe('growTree leafOf and workspace reuse', () => {
  it('fills leafOf with the leaf each grown row reaches, and only for grown rows', () => {
    const d = problem(3000, 6, 3);
    const rows = Uint32Array.from({ length: d.n }, (_, i) => i).filter(() => d.rng.next() < 0.7);
    const leafOf = new Int32Array(d.n).fill(-7);
    const tree = growTree({ ...d, rows, leafOf }, BOOST);
    expect(tree.feature.filter((f) => f >= 0).length).toBeGreaterThan(3);
    const walked = new Int32Array(d.n);
    leafIndexBinned(tree, d.codes, d.n, walked);
    const grown = new Uint8Array(d.n);
    for (const r of rows) grown[r] = 1;
    for (let r = 0; r < d.n; r++) {
      if (grown[r]) {
        expect(leafOf[r]).toBe(walked[r]);
        expect(tree.feature[leafOf[r]]).toBe(-1);
      } else expect(leafOf[r]).toBe(-7);
    }
  });

  it('grows identical trees with one reused workspace as with fresh buffers, across changing row sets and modes', () => {
    const d = problem(2500, 7, 11);
    const ws = new GrowWorkspace();
    const draw = testRng(5);
    for (let t = 0; t < 8; t++) {
      const rows = Uint32Array.from({ length: d.n }, (_, i) => i).filter(() => draw.next() < 0.5 + 0.05 * t);
      // odd trees draw columns per split (the forest's mode), even trees use a fixed candidate set
      const opts: GrowOptions =
        t % 2 === 1 ? { ...BOOST, featuresPerSplit: 3, rng: testRng(100 + t) } : { ...BOOST, candidates: Int32Array.of(0, 1, 2, 4, 6) };
      const again: GrowOptions = t % 2 === 1 ? { ...opts, rng: testRng(100 + t) } : opts;
      const fresh = treeToJson(growTree({ ...d, rows }, opts));
      const reused = treeToJson(growTree({ ...d, rows, workspace: ws }, again));
      expect(reused).toEqual(fresh);
    }
  });
});
