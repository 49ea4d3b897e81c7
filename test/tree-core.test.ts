import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { DecisionTreeClassifier } from 'ml-cart';
import { describe, expect, it } from 'vitest';
import {
  allocCodes,
  binThresholds,
  encodeCategorical,
  encodeNumeric,
  fitCategoricalBins,
  fitNumericBins,
  MAX_UINT16_BINS,
  valueBinCount,
  type BinCodes,
} from '../stages/core/tree/bin.js';
import { TreeParamError } from '../stages/core/tree/errors.js';
import { growTree, type GrowOptions } from '../stages/core/tree/grow.js';
import { accumulate, histogramLayout, STATS, STATS_NO_COUNT, subtractInPlace } from '../stages/core/tree/histogram.js';
import { leafIndexBinned, leafIndexRaw, predictRaw, treeFromJson, treeToJson, type FlatTree } from '../stages/core/tree/predict.js';
import { findBestSplit, SplitResult, type SplitParams } from '../stages/core/tree/split.js';
import { testRng, iota } from './helpers/seeded.js';

const REF = fileURLToPath(new URL('./reference/', import.meta.url));

const GINI: SplitParams = { criterion: 'gini', minLeafCount: 1, minLeafHess: 0, minGain: 0, lambda: 0 };

/** Bins every column exactly (up to 65,535 distinct values) and returns grow inputs. */
function binAll(cols: readonly Float64Array[], rows: Uint32Array, maxBins = MAX_UINT16_BINS) {
  const mappers = cols.map((x) => fitNumericBins(x, rows, maxBins));
  const nBins = Int32Array.from(mappers, valueBinCount);
  const codes: BinCodes[] = mappers.map((m, c) => {
    const out = allocCodes(rows.length, nBins[c]);
    encodeNumeric(m, cols[c], rows, out);
    return out;
  });
  return { mappers, nBins, codes, thresholds: mappers.map(binThresholds) };
}

describe('bin', () => {
  it('uses every distinct value as a bin with scikit-learn-style midpoints when there are few', () => {
    const x = Float64Array.of(3, 1, NaN, 2, 2, 10, 1);
    const m = fitNumericBins(x, iota(x.length), 255);
    expect(m.edges).toEqual([1.5, 2.5, 6.5]);
    const codes = allocCodes(x.length, valueBinCount(m));
    expect(codes).toBeInstanceOf(Uint8Array);
    encodeNumeric(m, x, iota(x.length), codes);
    // NaN gets the dedicated missing code = number of value bins (4)
    expect(Array.from(codes)).toEqual([2, 0, 4, 1, 1, 3, 0]);
  });

  it('groups many distinct values into at most maxBins quantile bins consistent with the edges', () => {
    const rng = testRng(7);
    const n = 5000;
    const x = new Float64Array(n);
    for (let i = 0; i < n; i++) x[i] = i % 10 === 0 ? 42 : rng.next() * 100;
    const m = fitNumericBins(x, iota(n), 50);
    expect(valueBinCount(m)).toBeLessThanOrEqual(50);
    expect(valueBinCount(m)).toBeGreaterThanOrEqual(45);
    const codes = allocCodes(n, valueBinCount(m));
    encodeNumeric(m, x, iota(n), codes);
    const counts = new Array<number>(valueBinCount(m)).fill(0);
    for (let i = 0; i < n; i++) {
      const c = codes[i];
      counts[c]++;
      if (c > 0) expect(x[i]).toBeGreaterThan(m.edges[c - 1]);
      if (c < m.edges.length) expect(x[i]).toBeLessThanOrEqual(m.edges[c]);
    }
    // the heavy value 42 (10% of rows) keeps a bin of its own
    const c42 = codes[0];
    expect(counts[c42]).toBe(n / 10);
  });

  it('orders categorical levels by training event rate, pools rare levels, sends unseen levels to the pool', () => {
    // levels: 0 rate 0.5 (n 4), 1 rate 0.0 (n 3), 2 rate 1.0 (n 2), 3 rare (n 1, event), 4 never seen
    const codes = Int32Array.of(0, 0, 0, 0, 1, 1, 1, 2, 2, 3, -1);
    const y = Uint8Array.of(1, 0, 1, 0, 0, 0, 0, 1, 1, 1, 0);
    const m = fitCategoricalBins(codes, 5, iota(codes.length), y, 255, 2);
    // rates: level1 0 < level0 0.5 < level2 1 = rare 1 (tie: real level first)
    expect(m.levelBin[1]).toBe(0);
    expect(m.levelBin[0]).toBe(1);
    expect(m.levelBin[2]).toBe(2);
    expect(m.rareBin).toBe(3);
    expect(m.levelBin[3]).toBe(3);
    expect(m.levelBin[4]).toBe(3);
    const out = new Uint8Array(3);
    encodeCategorical(m, Int32Array.of(-1, 4, 7), iota(3), out);
    expect(Array.from(out)).toEqual([4, 3, 3]);
  });

  it('rejects bad parameters with a typed error', () => {
    expect(() => fitNumericBins(new Float64Array(3), iota(3), 1)).toThrow(TreeParamError);
  });
});

describe('histogram', () => {
  it('subtraction equals direct accumulation of the larger child', () => {
    const rng = testRng(3);
    const n = 3000;
    const nBins = Int32Array.of(7, 255, 30);
    const codes = Array.from(nBins, (nb) => {
      const c = new Uint8Array(n);
      for (let i = 0; i < n; i++) c[i] = rng.int(nb + 1);
      return c;
    });
    const gradInt = Float64Array.from({ length: n }, () => rng.int(2));
    const gradReal = Float64Array.from({ length: n }, () => rng.next() - 0.5);
    const hess = Float64Array.from({ length: n }, () => 0.5 + rng.int(3));
    const layout = histogramLayout(nBins);
    const cols = Int32Array.of(0, 1, 2);
    const order = iota(n);
    const mid = 1200;
    for (const grad of [gradInt, gradReal]) {
      const parent = new Float64Array(layout.size);
      const small = new Float64Array(layout.size);
      const direct = new Float64Array(layout.size);
      accumulate(parent, layout, codes, cols, 3, order, 0, n, grad, hess);
      accumulate(small, layout, codes, cols, 3, order, 0, mid, grad, hess);
      accumulate(direct, layout, codes, cols, 3, order, mid, n, grad, hess);
      subtractInPlace(parent, small, layout, cols, 3);
      for (let i = 0; i < layout.size; i++) {
        // integer-valued statistics are exact; real-valued ones differ only by rounding
        if (grad === gradInt || i % STATS !== 0) expect(parent[i]).toBe(direct[i]);
        else expect(parent[i]).toBeCloseTo(direct[i], 10);
      }
    }
  });
});

describe('histograms without row counts (boosting)', () => {
  it('give the same gradient split as counted histograms, and the same sums after subtraction', () => {
    // An internal identity (no external reference): dropping the count must not move a split.
    const rng = testRng(11);
    const n = 4000;
    const nBins = Int32Array.of(5, 255, 40, 12, 3, 9, 200, 17, 2, 64);
    const codes = Array.from(nBins, (nb, c) => {
      const x = new Uint8Array(n);
      // every third column has missing codes; column 8 has two values only, one of them rare
      for (let i = 0; i < n; i++) x[i] = c === 8 ? (rng.next() < 0.01 ? 1 : 0) : rng.int(c % 3 === 0 ? nb + 1 : nb);
      return x;
    });
    const cols = Int32Array.from(nBins, (_, c) => c);
    for (let trial = 0; trial < 20; trial++) {
      const grad = Float64Array.from({ length: n }, () => rng.next() - 0.4);
      const hess = Float64Array.from({ length: n }, () => 0.05 + rng.next() * 0.2);
      const order = Uint32Array.from({ length: n }, (_, i) => i).filter(() => rng.next() < 0.7);
      const params: SplitParams = { criterion: 'gradient', minLeafCount: 1, minLeafHess: trial % 2 ? 1 : 0, minGain: 0, lambda: 1 };
      let g = 0;
      let h = 0;
      for (const r of order) {
        g += grad[r];
        h += hess[r];
      }
      const results = [STATS, STATS_NO_COUNT].map((stats) => {
        const layout = histogramLayout(nBins, stats);
        const hist = new Float64Array(layout.size);
        accumulate(hist, layout, codes, cols, cols.length, order, 0, order.length, grad, hess);
        const out = new SplitResult();
        findBestSplit(hist, layout, cols, cols.length, g, h, order.length, params, out);
        return out;
      });
      const [withCount, without] = results;
      expect(without.feature).toBe(withCount.feature);
      expect(without.bin).toBe(withCount.bin);
      expect(without.gain).toBe(withCount.gain);
      expect(without.leftGrad).toBe(withCount.leftGrad);
      expect(without.leftHess).toBe(withCount.leftHess);
      // nodes here always have missing rows on the split column or learn the side from the data
      if (withCount.feature % 3 === 0) expect(without.missingLeft).toBe(withCount.missingLeft);
    }
    const layout = histogramLayout(nBins, STATS_NO_COUNT);
    const [parent, small, direct] = [0, 1, 2].map(() => new Float64Array(layout.size));
    const grad = Float64Array.from({ length: n }, () => rng.int(3) - 1);
    const hess = Float64Array.from({ length: n }, () => 1 + rng.int(2));
    const order = Uint32Array.from({ length: n }, (_, i) => i);
    accumulate(parent, layout, codes, cols, cols.length, order, 0, n, grad, hess);
    accumulate(small, layout, codes, cols, cols.length, order, 0, 1500, grad, hess);
    accumulate(direct, layout, codes, cols, cols.length, order, 1500, n, grad, hess);
    subtractInPlace(parent, small, layout, cols, cols.length);
    expect(Array.from(parent)).toEqual(Array.from(direct));
  });

  it('refuse a row-count minimum they cannot check', () => {
    const layout = histogramLayout(Int32Array.of(3), STATS_NO_COUNT);
    const hist = new Float64Array(layout.size);
    const params: SplitParams = { criterion: 'gradient', minLeafCount: 5, minLeafHess: 0, minGain: 0, lambda: 1 };
    expect(() => findBestSplit(hist, layout, Int32Array.of(0), 1, 0, 1, 10, params, new SplitResult())).toThrow(TreeParamError);
  });
});

describe('split', () => {
  const layoutOf = (nb: number[]) => histogramLayout(Int32Array.from(nb));
  function hist(layout: ReturnType<typeof histogramLayout>, perCol: [number, number][][]): Float64Array {
    // perCol[c][b] = [events, rows] with unit weights; the last entry is the missing slot
    const h = new Float64Array(layout.size);
    perCol.forEach((bins, c) =>
      bins.forEach(([e, n], b) => {
        const at = (layout.offset[c] + b) * STATS;
        h[at] = e;
        h[at + 1] = n;
        h[at + 2] = n;
      }),
    );
    return h;
  }

  it('finds the Gini-optimal cut and learns the missing side', () => {
    const layout = layoutOf([4]);
    // bins: 10 rows 0 events, 10 rows 1 event, 10 rows 9 events, 10 rows 10 events; missing 5 rows 5 events
    const h = hist(layout, [[[0, 10], [1, 10], [9, 10], [10, 10], [5, 5]]]);
    const out = new SplitResult();
    findBestSplit(h, layout, Int32Array.of(0), 1, 25, 45, 45, GINI, out);
    expect(out.feature).toBe(0);
    expect(out.bin).toBe(1);
    expect(out.missingLeft).toBe(false);
    expect(out.leftCount).toBe(20);
    // Gini gain by hand: parent 2·25·20/45, children 2·1·19/20 and 2·24·1/25
    expect(out.gain).toBeCloseTo((2 * 25 * 20) / 45 - (2 * 1 * 19) / 20 - (2 * 24 * 1) / 25, 12);
  });

  it('sends missing rows left when they behave like the low bins', () => {
    const layout = layoutOf([4]);
    const h = hist(layout, [[[0, 10], [1, 10], [9, 10], [10, 10], [0, 5]]]);
    const out = new SplitResult();
    findBestSplit(h, layout, Int32Array.of(0), 1, 20, 45, 45, GINI, out);
    expect(out.bin).toBe(1);
    expect(out.missingLeft).toBe(true);
    expect(out.leftCount).toBe(25);
  });

  it('enforces the minimum leaf size and breaks exact ties by the lowest column', () => {
    const layout = layoutOf([2, 2]);
    const same: [number, number][] = [[0, 10], [10, 10], [0, 0]];
    const h = hist(layout, [same, same]);
    const out = new SplitResult();
    findBestSplit(h, layout, Int32Array.of(0, 1), 2, 10, 20, 20, GINI, out);
    expect(out.feature).toBe(0);
    findBestSplit(h, layout, Int32Array.of(0, 1), 2, 10, 20, 20, { ...GINI, minLeafCount: 11 }, out);
    expect(out.feature).toBe(-1);
  });

  it('does not split a pure node', () => {
    const layout = layoutOf([2]);
    const h = hist(layout, [[[0, 10], [0, 10], [0, 0]]]);
    const out = new SplitResult();
    findBestSplit(h, layout, Int32Array.of(0), 1, 0, 20, 20, GINI, out);
    expect(out.feature).toBe(-1);
  });
});

/** Leaf of one row in an ml-cart model (its rule: x < splitValue goes left). */
interface CartNode {
  splitColumn?: number;
  splitValue?: number;
  left?: CartNode;
  right?: CartNode;
  distribution?: unknown;
}
function cartLeaf(node: CartNode, row: number[], path = ''): string {
  if (node.left && node.right && node.splitColumn !== undefined && node.splitValue !== undefined) {
    return row[node.splitColumn] < node.splitValue ? cartLeaf(node.left, row, path + 'L') : cartLeaf(node.right, row, path + 'R');
  }
  return path;
}

/** Partition of rows induced by leaf labels, as a canonical list of sorted row groups. */
function partitionOf(labels: ArrayLike<number | string>): string {
  const groups = new Map<number | string, number[]>();
  for (let i = 0; i < labels.length; i++) {
    const g = groups.get(labels[i]) ?? [];
    g.push(i);
    groups.set(labels[i], g);
  }
  return JSON.stringify([...groups.values()].map((g) => g.join(',')).sort());
}

describe('grow', () => {
  // Continuous features without ties: there the Gini-optimal cut lies between two rows of
  // different labels (Fayyad & Irani 1992, "On the handling of continuous-valued attributes in
  // decision tree generation", Machine Learning 8, cited from memory), which are the only cuts
  // ml-cart 2.1.1 tries, so both searches see the same optimum. What differs and is set equal
  // here: ml-cart has no minimum leaf size (min_leaf 1 here), stops at nodes of <= minNumSamples
  // rows (minSplit = minNumSamples + 1 here), needs gain > gainThreshold (0 here) and also stops
  // when a child's best gain equals its parent's exactly (never met with continuous data).
  it('matches ml-cart 2.1.1 partitions on 1,000 rows of continuous data', () => {
    const rng = testRng(11);
    const n = 1000;
    const p = 3;
    const cols = Array.from({ length: p }, () => new Float64Array(n));
    const y = new Uint8Array(n);
    const matrix: number[][] = [];
    for (let i = 0; i < n; i++) {
      for (let c = 0; c < p; c++) cols[c][i] = rng.next() * 10 - 5;
      const z = 1.2 * cols[0][i] - 0.8 * cols[1][i] * cols[1][i] / 5 + 0.5 * cols[2][i] + (rng.next() - 0.5) * 6;
      y[i] = z > 0 ? 1 : 0;
      matrix.push([cols[0][i], cols[1][i], cols[2][i]]);
    }
    const rows = iota(n);
    const b = binAll(cols, rows);
    for (const [maxDepth, minNum] of [
      [1, 3],
      [2, 3],
      [3, 50],
    ] as const) {
      const cart = new DecisionTreeClassifier({ maxDepth, minNumSamples: minNum, gainThreshold: 0 });
      cart.train(matrix, Array.from(y));
      const model = cart.toJSON() as { root: CartNode };
      const tree = growTree(
        { codes: b.codes, nBins: b.nBins, thresholds: b.thresholds, grad: Float64Array.from(y), hess: new Float64Array(n).fill(1), rows },
        { maxDepth, minSplit: minNum + 1, split: GINI, leafValue: 'ratio' },
      );
      expect(tree.feature[0]).toBe(model.root.splitColumn);
      expect(tree.threshold[0]).toBeCloseTo(model.root.splitValue as number, 12);
      const ours = new Int32Array(n);
      leafIndexRaw(tree, cols, rows, ours);
      const theirs = matrix.map((r) => cartLeaf(model.root, r));
      expect(partitionOf(ours)).toBe(partitionOf(theirs));
    }
  });

  it('grows the first XGBoost 1.7.4 tree (gradient criterion) on the breast cancer train split', () => {
    // Source: xgboost 1.7.4 binary:logistic, exact, depth 3, lambda 1, min_child_weight 1,
    // base_score 0.5, eta 0.1 (test/reference/xgboost_breast_cancer.json, first_tree).
    const ref = JSON.parse(readFileSync(REF + 'xgboost_breast_cancer.json', 'utf8'));
    const lines = readFileSync(REF + 'breast_cancer.csv', 'utf8').trim().split('\n');
    const header = lines[0].split(',');
    const split = readFileSync(REF + 'breast_cancer_split.csv', 'utf8').trim().split('\n').slice(1);
    const train = split.map((l) => l.split(',')).filter((f) => f[1] === '0').map((f) => Number(f[0]));
    const featureNames = header.slice(0, 30);
    const data = lines.slice(1).map((l) => l.split(',').map(Number));
    const cols = featureNames.map((_, c) => Float64Array.from(data, (r) => r[c]));
    const yCol = header.indexOf('malignant');
    const rows = Uint32Array.from(train);
    const b = binAll(cols, rows);
    // local row index i = train[i]: re-index the codes' rows 0..n-1 to gradients in the same order
    const n = rows.length;
    const grad = Float64Array.from(train, (r) => 0.5 - data[r][yCol]);
    const hess = new Float64Array(n).fill(0.25);
    const tree = growTree(
      { codes: b.codes, nBins: b.nBins, thresholds: b.thresholds, grad, hess, rows: iota(n) },
      { maxDepth: 3, minSplit: 2, split: { criterion: 'gradient', minLeafCount: 1, minLeafHess: 1, minGain: 0, lambda: 1 }, leafValue: 'newton' },
    );
    const eta = 0.1;
    type XNode = { split?: string; split_condition?: number; gain?: number; cover: number; leaf?: number; children?: XNode[] };
    const walk = (x: XNode, id: number): void => {
      expect(tree.hessSum[id]).toBeCloseTo(x.cover, 6);
      if (x.leaf !== undefined) {
        expect(tree.feature[id]).toBe(-1);
        expect(eta * tree.value[id]).toBeCloseTo(x.leaf, 6);
        return;
      }
      expect(featureNames[tree.feature[id]].replace(/ /g, '_')).toBe(x.split);
      // xgboost's dump gain omits the 1/2 of eq. 7 and is printed from float32
      expect(2 * (tree.hessSum[id] > 0 ? gainOf(tree, id) : 0)).toBeCloseTo(x.gain as number, 3);
      // Thresholds: xgboost cuts at the midpoint of the node's own neighbouring values (x < split),
      // this core at the first bin edge above the left child's largest value (x <= threshold);
      // both must send every training row of the node the same way.
      const f = tree.feature[id];
      for (let i = 0; i < n; i++) {
        if (!reaches(tree, cols, train[i], id)) continue;
        const v = cols[f][train[i]];
        expect(v <= tree.threshold[id]).toBe(v < Math.fround(x.split_condition as number));
      }
      const [yes, no] = x.children as XNode[];
      walk(yes, tree.left[id]);
      walk(no, tree.right[id]);
    };
    walk(ref.expected.first_tree, 0);
  });

  it('is deterministic and applies the same way on raw values, bin codes and after a JSON round trip', () => {
    const rng = testRng(5);
    const n = 4000;
    const cols = Array.from({ length: 4 }, () => Float64Array.from({ length: n }, () => (rng.next() < 0.1 ? NaN : Math.round(rng.next() * 300) / 10)));
    const y = Uint8Array.from({ length: n }, (_, i) => (cols[0][i] !== cols[0][i] || cols[1][i] > 15 ? 1 : 0) ^ (rng.next() < 0.1 ? 1 : 0));
    const rows = iota(n);
    const b = binAll(cols, rows, 255);
    const opts: GrowOptions = { maxDepth: 4, minSplit: 2, split: { ...GINI, minLeafCount: 20 }, leafValue: 'ratio' };
    const data = { codes: b.codes, nBins: b.nBins, thresholds: b.thresholds, grad: Float64Array.from(y), hess: new Float64Array(n).fill(1), rows };
    const t1 = growTree(data, opts);
    const t2 = growTree(data, opts);
    expect(treeToJson(t1)).toEqual(treeToJson(t2));
    const json = JSON.parse(JSON.stringify(treeToJson(t1)));
    const t3: FlatTree = treeFromJson(json);
    const raw = new Int32Array(n);
    const binned = new Int32Array(n);
    const back = new Int32Array(n);
    leafIndexRaw(t1, cols, rows, raw);
    leafIndexBinned(t1, b.codes, n, binned);
    leafIndexRaw(t3, cols, rows, back);
    expect(Array.from(raw)).toEqual(Array.from(binned));
    expect(Array.from(back)).toEqual(Array.from(raw));
    // leaves' stored counts and events equal a recount of the rows that reach them
    const cnt = new Map<number, [number, number]>();
    for (let i = 0; i < n; i++) {
      const c = cnt.get(raw[i]) ?? [0, 0];
      c[0]++;
      c[1] += y[i];
      cnt.set(raw[i], c);
    }
    for (const [leaf, [cn, ev]] of cnt) {
      expect(t1.count[leaf]).toBe(cn);
      expect(t1.gradSum[leaf]).toBe(ev);
      expect(cn).toBeGreaterThanOrEqual(20);
    }
    const pred = new Float64Array(n);
    predictRaw(t1, cols, rows, pred);
    for (let i = 0; i < n; i++) expect(pred[i]).toBe(t1.value[raw[i]]);
  });

  it('samples columns per split from the seeded rng only', () => {
    const rng = testRng(9);
    const n = 2000;
    const cols = Array.from({ length: 6 }, () => Float64Array.from({ length: n }, () => rng.next()));
    const y = Uint8Array.from({ length: n }, (_, i) => (cols[2][i] + cols[4][i] > 1 ? 1 : 0));
    const rows = iota(n);
    const b = binAll(cols, rows, 64);
    const data = { codes: b.codes, nBins: b.nBins, thresholds: b.thresholds, grad: Float64Array.from(y), hess: new Float64Array(n).fill(1), rows };
    const grow = (seed: number) =>
      treeToJson(growTree(data, { maxDepth: 3, minSplit: 2, split: GINI, leafValue: 'ratio', featuresPerSplit: 2, rng: testRng(seed) }));
    expect(grow(1)).toEqual(grow(1));
    const a = grow(1);
    expect(a.feature.filter((f) => f >= 0).length).toBeGreaterThan(0);
    expect(() => growTree(data, { maxDepth: 3, minSplit: 2, split: GINI, leafValue: 'ratio', featuresPerSplit: 2 })).toThrow(TreeParamError);
  });
});

/** True when raw row r passes through node `target` of the tree. */
function reaches(t: FlatTree, cols: readonly Float64Array[], r: number, target: number): boolean {
  let node = 0;
  while (node !== target && t.feature[node] >= 0) node = cols[t.feature[node]][r] <= t.threshold[node] ? t.left[node] : t.right[node];
  return node === target;
}

/** Gain of node id's split recomputed from the finished tree's children (gradient criterion, λ = 1). */
function gainOf(t: FlatTree, id: number): number {
  const s = (g: number, h: number): number => (g * g) / (h + 1);
  const l = t.left[id];
  const r = t.right[id];
  return (s(t.gradSum[l], t.hessSum[l]) + s(t.gradSum[r], t.hessSum[r]) - s(t.gradSum[id], t.hessSum[id])) / 2;
}
