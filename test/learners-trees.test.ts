/**
 * The `tree` and `forest` learners: exact cross-checks against ml-cart 2.1.1 and
 * ml-random-forest 2.1.0 where the algorithms coincide, statistical checks where their random
 * streams differ, peer AUCs from scikit-learn 1.2.1, determinism, and a full pipeline run.
 */
import { fileURLToPath } from 'node:url';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { DecisionTreeClassifier } from 'ml-cart';
import { RandomForestClassifier } from 'ml-random-forest';
import { describe, expect, it } from 'vitest';
import { auc } from '../pipeline/metrics/auc.js';
import { forest, type ForestConfig } from '../stages/learners/forest.js';
import { tree } from '../stages/learners/tree.js';
import { leafIndexRaw } from '../stages/core/tree/predict.js';
import { loadCompactTree } from '../stages/core/tree/compact.js';
import { generateDemo } from '../data-demo/generate.js';
import { runYaml, tempDir } from './helpers/run-fixture.js';
import { readCsv, type CsvTable } from './helpers/read-csv.js';
import { testRng, iota } from './helpers/seeded.js';

const REF = fileURLToPath(new URL('./reference/', import.meta.url));

/** Continuous columns without ties and a noisy non-linear target. */
function synthetic(n: number, p: number, seed: number) {
  const rng = testRng(seed);
  const cols = Array.from({ length: p }, () => new Float64Array(n));
  const y = new Uint8Array(n);
  const matrix: number[][] = [];
  for (let i = 0; i < n; i++) {
    for (let c = 0; c < p; c++) cols[c][i] = rng.next() * 10 - 5;
    const z = 1.2 * cols[0][i] - (0.8 * cols[1][i] * cols[1][i]) / 5 + 0.5 * cols[2 % p][i] + (rng.next() - 0.5) * 6;
    y[i] = z > 0 ? 1 : 0;
    matrix.push(cols.map((c) => c[i]));
  }
  return { cols, y, matrix };
}

interface CartNode {
  splitColumn?: number;
  splitValue?: number;
  left?: CartNode;
  right?: CartNode;
}
/** ml-cart's rule: x < splitValue goes left. `colMap` maps the tree's columns to the row's. */
function cartLeaf(node: CartNode, row: number[], colMap: readonly number[], path = ''): string {
  if (node.left && node.right && node.splitColumn !== undefined && node.splitValue !== undefined) {
    return row[colMap[node.splitColumn]] < node.splitValue ? cartLeaf(node.left, row, colMap, path + 'L') : cartLeaf(node.right, row, colMap, path + 'R');
  }
  return path;
}

function partitionOf(labels: ArrayLike<number | string>): string {
  const groups = new Map<number | string, number[]>();
  for (let i = 0; i < labels.length; i++) {
    const g = groups.get(labels[i]) ?? [];
    g.push(i);
    groups.set(labels[i], g);
  }
  return JSON.stringify([...groups.values()].map((g) => g.join(',')).sort());
}

const forestCfg = (o: Record<string, unknown>): ForestConfig => forest.resolveConfig(o);

describe('tree learner', () => {
  // ml-cart 2.1.1 tries every cut between rows of different labels; without ties the Gini optimum
  // is such a cut, so with exact bins (max_bins ≥ distinct values), min_leaf 1 (ml-cart has no
  // leaf minimum) and minNumSamples 1 (our minimum split size is 2·min_leaf = 2) both grow the same tree.
  it('partitions rows exactly like ml-cart 2.1.1 on 1,000 continuous rows', () => {
    const { cols, y, matrix } = synthetic(1000, 3, 11);
    const rows = iota(1000);
    for (const depth of [1, 2, 4]) {
      const cart = new DecisionTreeClassifier({ maxDepth: depth, minNumSamples: 1, gainThreshold: 0 });
      cart.train(matrix, Array.from(y));
      const root = (cart.toJSON() as { root: CartNode }).root;
      const model = tree.fit({ features: cols, names: ['a', 'b', 'c'], rows, target: y, config: tree.resolveConfig({ max_depth: depth, min_leaf: 1, max_bins: 65535 }), rng: testRng(1) });
      const leaf = new Int32Array(1000);
      leafIndexRaw(loadCompactTree(model.tree), cols, rows, leaf);
      expect(partitionOf(leaf), `depth ${depth}`).toBe(partitionOf(matrix.map((r) => cartLeaf(root, r, [0, 1, 2]))));
      // the probability is the leaf's event rate (smoothing 0)
      const p = tree.predict(model, cols, rows);
      const byLeaf = new Map<number, [number, number]>();
      leaf.forEach((l, i) => {
        const s = byLeaf.get(l) ?? [0, 0];
        byLeaf.set(l, [s[0] + y[i], s[1] + 1]);
      });
      for (let i = 0; i < 1000; i++) expect(p[i]).toBeCloseTo(byLeaf.get(leaf[i])![0] / byLeaf.get(leaf[i])![1], 12);
    }
  });

  it('sends missing values to the learned side and smooths leaves toward the prior', () => {
    const n = 400;
    const x = new Float64Array(n);
    const y = new Uint8Array(n);
    for (let i = 0; i < n; i++) {
      x[i] = i % 4 === 0 ? NaN : i;
      // missing rows behave like high x (events)
      y[i] = i % 4 === 0 || i > 200 ? 1 : 0;
    }
    const m = tree.fit({ features: [x], names: ['x'], rows: iota(n), target: y, config: tree.resolveConfig({ max_depth: 1, min_leaf: 10 }), rng: testRng(1) });
    const p = tree.predict(m, [Float64Array.of(NaN, 10, 300)], iota(3));
    expect(p[0]).toBe(p[2]);
    expect(p[0]).toBeGreaterThan(0.9);
    expect(p[1]).toBe(0);
    // m-estimate (Cestnik 1990) with m = 1e9: every leaf's rate is the prior
    const s = tree.fit({ features: [x], names: ['x'], rows: iota(n), target: y, config: tree.resolveConfig({ max_depth: 2, min_leaf: 10, smoothing: 1e9 }), rng: testRng(1) });
    for (const v of tree.predict(s, [x], iota(n))) expect(v).toBeCloseTo(m.prior, 6);
  });

  it('rejects bad options with the key named', () => {
    expect(() => tree.resolveConfig({ min_leaf: 2.5 })).toThrow(/min_leaf/);
    expect(() => tree.resolveConfig({ depth: 3 })).toThrow(/depth/);
    expect(() => forest.resolveConfig({ max_features: 1.5 })).toThrow(/max_features/);
  });
});

describe('forest learner', () => {
  it('with one tree, no bootstrap and every column per split, equals the tree learner and ml-random-forest 2.1.0', () => {
    // 250 tie-free rows: each value is its own uint8 bin, so the forest's binning is exact too.
    const { cols, y, matrix } = synthetic(250, 4, 5);
    const rows = iota(250);
    const cfgF = forestCfg({ trees: 1, bootstrap: false, sample: 1, max_features: 4, max_depth: 3, min_leaf: 1, permutation_rows: 0 });
    const f = forest.fit({ features: cols, names: ['a', 'b', 'c', 'd'], rows, target: y, config: cfgF, rng: testRng(3) });
    const t = tree.fit({ features: cols, names: ['a', 'b', 'c', 'd'], rows, target: y, config: tree.resolveConfig({ max_depth: 3, min_leaf: 1 }), rng: testRng(3) });
    expect(Array.from(forest.predict(f, cols, rows))).toEqual(Array.from(tree.predict(t, cols, rows)));
    // ml-random-forest 2.1.0 with one estimator, no sample bagging and all features (it bags
    // features per tree, not per split, so this is the only setting where the trees coincide).
    const rf = new RandomForestClassifier({ nEstimators: 1, maxFeatures: 4, replacement: false, useSampleBagging: false, seed: 1, noOOB: true, treeOptions: { maxDepth: 3, minNumSamples: 1, gainThreshold: 0 } });
    rf.train(matrix, Array.from(y));
    const est = (rf as unknown as { estimators: { toJSON(): { root: CartNode } }[]; indexes: number[][] });
    const root = est.estimators[0].toJSON().root;
    const leaf = new Int32Array(250);
    leafIndexRaw(loadCompactTree(f.trees[0]), cols, rows, leaf);
    expect(partitionOf(leaf)).toBe(partitionOf(matrix.map((r) => cartLeaf(root, r, est.indexes[0]))));
  });

  it('lands near ml-random-forest 2.1.0 in test AUC on the breast cancer split (different bootstrap streams)', () => {
    const bc = breastCancer();
    const ours = forest.fit({ features: bc.cols, names: bc.names, rows: bc.train, target: bc.y, config: forestCfg({ trees: 100, max_depth: 10, min_leaf: 1 }), rng: testRng(9) });
    const oursAuc = auc(pick(bc.y, bc.test), forest.predict(ours, bc.cols, bc.test)) as number;
    const rf = new RandomForestClassifier({ nEstimators: 100, maxFeatures: 0.5, replacement: false, useSampleBagging: true, seed: 3, noOOB: true, treeOptions: { maxDepth: 10, minNumSamples: 1, gainThreshold: 0 } });
    rf.train(Array.from(bc.train, (r) => bc.matrix[r]), Array.from(bc.train, (r) => bc.y[r]));
    const theirs = Float64Array.from(rf.predictProbability(Array.from(bc.test, (r) => bc.matrix[r]), 1) as number[]);
    const theirAuc = auc(pick(bc.y, bc.test), theirs) as number;
    // tolerance: ~4 Hanley–McNeil standard errors of a test AUC near 0.99 on 171 rows (0.005 each,
    // from stacking_peer_auc.json); the two forests differ in feature bagging (per split vs per tree)
    expect(Math.abs(oursAuc - theirAuc)).toBeLessThan(0.02);
  });

  describe('peer AUCs from scikit-learn 1.2.1 (test/reference/stacking_peer_auc.json)', () => {
    const peer = JSON.parse(readFileSync(REF + 'stacking_peer_auc.json', 'utf8')).expected;
    it('breast cancer: tree (depth 4, min leaf 20) and forest (500 trees, min leaf 5, unlimited depth, √p)', () => {
      const bc = breastCancer();
      const yt = pick(bc.y, bc.test);
      const t = tree.fit({ features: bc.cols, names: bc.names, rows: bc.train, target: bc.y, config: tree.resolveConfig({ max_depth: 4, min_leaf: 20 }), rng: testRng(1) });
      const tAuc = auc(yt, tree.predict(t, bc.cols, bc.test)) as number;
      expect(Math.abs(tAuc - peer.breast_cancer.base.cart.test_auc)).toBeLessThan(0.03);
      const f = forest.fit({ features: bc.cols, names: bc.names, rows: bc.train, target: bc.y, config: forestCfg({ trees: 500, max_depth: 32, min_leaf: 5 }), rng: testRng(2) });
      const fAuc = auc(yt, forest.predict(f, bc.cols, bc.test)) as number;
      console.log(`breast cancer test AUC: tree ${tAuc.toFixed(4)} (sklearn ${peer.breast_cancer.base.cart.test_auc.toFixed(4)}), forest ${fAuc.toFixed(4)} (sklearn ${peer.breast_cancer.base.rf.test_auc.toFixed(4)})`);
      expect(Math.abs(fAuc - peer.breast_cancer.base.rf.test_auc)).toBeLessThan(0.02);
    });

    it('credit_data: same hyper-parameters; missing numerics kept as missing (sklearn: median + indicator)', () => {
      const cd = creditData();
      const yt = pick(cd.y, cd.test);
      const t = tree.fit({ features: cd.cols, names: cd.names, rows: cd.train, target: cd.y, config: tree.resolveConfig({ max_depth: 4, min_leaf: 20 }), rng: testRng(1) });
      const tAuc = auc(yt, tree.predict(t, cd.cols, cd.test)) as number;
      const f = forest.fit({ features: cd.cols, names: cd.names, rows: cd.train, target: cd.y, config: forestCfg({ trees: 500, max_depth: 32, min_leaf: 5 }), rng: testRng(2) });
      const fAuc = auc(yt, forest.predict(f, cd.cols, cd.test)) as number;
      console.log(`credit_data test AUC: tree ${tAuc.toFixed(4)} (sklearn ${peer.credit_data.base.cart.test_auc.toFixed(4)}), forest ${fAuc.toFixed(4)} (sklearn ${peer.credit_data.base.rf.test_auc.toFixed(4)})`);
      expect(Math.abs(tAuc - peer.credit_data.base.cart.test_auc)).toBeLessThan(0.03);
      expect(Math.abs(fAuc - peer.credit_data.base.rf.test_auc)).toBeLessThan(0.02);
    });
  });

  it('is deterministic per seed, differs across seeds, and tree t does not depend on how many trees are grown', () => {
    const { cols, y } = synthetic(2000, 6, 21);
    const rows = iota(2000);
    const names = cols.map((_, j) => `x${j}`);
    const fit = (trees: number, seed: number) => forest.fit({ features: cols, names, rows, target: y, config: forestCfg({ trees, min_leaf: 5 }), rng: testRng(seed) });
    const a = fit(20, 4);
    const b = fit(20, 4);
    const c = fit(20, 5);
    expect(Array.from(forest.predict(b, cols, rows))).toEqual(Array.from(forest.predict(a, cols, rows)));
    expect(Array.from(forest.predict(c, cols, rows))).not.toEqual(Array.from(forest.predict(a, cols, rows)));
    expect(fit(5, 4).trees).toEqual(a.trees.slice(0, 5));
    expect(JSON.parse(JSON.stringify(a))).toEqual(a);
  });

  it('ranks the signal columns first by impurity and by out-of-bag permutation AUC drop', () => {
    const n = 3000;
    const rng = testRng(8);
    const cols = Array.from({ length: 8 }, () => new Float64Array(n));
    const y = new Uint8Array(n);
    for (let i = 0; i < n; i++) {
      for (const c of cols) c[i] = rng.next();
      y[i] = rng.next() < 0.15 + 0.7 * (cols[2][i] > 0.5 ? 1 : 0) * cols[5][i] ? 1 : 0;
    }
    const names = cols.map((_, j) => `x${j}`);
    const m = forest.fit({ features: cols, names, rows: iota(n), target: y, config: forestCfg({ trees: 60, min_leaf: 20 }), rng: testRng(1) });
    const table = forest.describe!(m).tables!.forest_importance;
    expect(table.header).toEqual(['feature', 'impurity', 'permutation']);
    const imp = table.rows.map((r) => r[1] as number);
    const perm = table.rows.map((r) => r[2] as number);
    expect(imp.reduce((s, v) => s + v, 0)).toBeCloseTo(1, 12);
    const top2 = (v: number[]) => v.map((x, j) => [x, j]).sort((p, q) => q[0] - p[0]).slice(0, 2).map((p) => p[1]).sort();
    expect(top2(imp)).toEqual([2, 5]);
    expect(top2(perm)).toEqual([2, 5]);
    for (const j of [0, 1, 3, 4, 6, 7]) expect(Math.abs(perm[j])).toBeLessThan(0.02);
    // A fit nobody describes (a fold context) skips the permutation pass and grows the same trees.
    const quiet = forest.fit({ features: cols, names, rows: iota(n), target: y, config: forestCfg({ trees: 60, min_leaf: 20 }), rng: testRng(1), report: false });
    expect(quiet.permutation).toBeNull();
    expect(quiet.trees).toEqual(m.trees);
    expect(quiet.impurity).toEqual(m.impurity);
  });

  // Timing only (printed, not asserted): 200 trees, depth 8, min leaf 20 on 200k × 30 rows.
  // Slow, so it runs when FOLDSTACK_BENCH is set: FOLDSTACK_BENCH=1 npx vitest run test/learners-trees.test.ts
  it.runIf(process.env.FOLDSTACK_BENCH)('times 200 trees on 200,000 × 30 generated rows', () => {
    const { cols, y } = synthetic(200000, 30, 77);
    const names = cols.map((_, j) => `x${j}`);
    const rows = iota(200000);
    const t0 = performance.now();
    const m = forest.fit({ features: cols, names, rows, target: y, config: forestCfg({ trees: 200, max_depth: 8, min_leaf: 20, permutation_rows: 0 }), rng: testRng(1) });
    const t1 = performance.now();
    const p = forest.predict(m, cols, rows);
    const t2 = performance.now();
    console.log(`forest 200 trees, 200k x 30: fit ${((t1 - t0) / 1000).toFixed(2)} s, predict ${((t2 - t1) / 1000).toFixed(2)} s`);
    expect(auc(y, p)).toBeGreaterThan(0.7);
  }, 600_000);
});

describe('pipeline with tree and forest learners', () => {
  it('runs end to end and reports both learners with stack weights', async () => {
    const dir = tempDir('trees-pipeline');
    const csv = join(dir, 'data.csv');
    await generateDemo({ rows: 2000, seed: 13, out: csv });
    const out = await runYaml(
      dir,
      `name: trees
seed: 4
data:
  file: ${csv}
  target: missed_payment_90d
  positive: "yes"
  id: application_id
  columns: {applied_on: date, registered_on: date, owner_age_band: protected}
split: {folds: 3, inner_folds: 3, holdout: {fraction: 0.25}}
features:
  rate-encode: {smoothing: 10}
  forest-leaves: {trees: 4}
  select: {keep: 8, trees: 20}
learners:
  lr: {kind: logistic}
  cart: {kind: tree, max_depth: 4, min_leaf: 40}
  rf: {kind: forest, trees: 40, min_leaf: 20}
stack: {nonnegative: true}
`,
      { workers: 2 },
    );
    for (const part of ['oof', 'holdout'] as const) {
      for (const who of ['cart', 'rf', 'stack']) {
        expect(out.metrics[part][who].auc, `${part} ${who}`).toBeGreaterThan(0.55); // the planted signal is found (common practice, no source)
      }
    }
    expect(Object.keys(out.metrics.stack.weights).sort()).toEqual(['cart', 'lr', 'rf']);
    for (const w of Object.values(out.metrics.stack.weights)) expect(Number.isFinite(w)).toBe(true);
    const select = readFileSync(join(out.runDir, 'select_importance.csv'), 'utf8').trim().split('\n');
    expect(select[0]).toBe('feature,impurity,rank,kept');
    expect(select.slice(1).filter((l) => l.endsWith(',1')).length).toBe(8);
  }, 300_000);
});

function pick(y: Uint8Array, rows: Uint32Array): Uint8Array {
  return Uint8Array.from(rows, (r) => y[r]);
}

function splitRows(file: string): { train: Uint32Array; test: Uint32Array } {
  const t = readCsv(REF + file);
  const row = t.fields[0].map(Number);
  const isTest = t.fields[1].map(Number);
  return { train: Uint32Array.from(row.filter((_, i) => isTest[i] === 0)), test: Uint32Array.from(row.filter((_, i) => isTest[i] === 1)) };
}

/** WDBC (python3-sklearn 1.2.1 load_breast_cancer), y = malignant; split from the oracle. */
function breastCancer() {
  const t = readCsv(REF + 'breast_cancer.csv');
  const names = t.header.slice(0, 30) as string[];
  const cols = names.map((_, j) => Float64Array.from(t.fields[j], Number));
  const y = Uint8Array.from(t.fields[t.header.indexOf('malignant')], Number);
  const matrix = Array.from({ length: t.nRows }, (_, i) => cols.map((c) => c[i]));
  return { names, cols, y, matrix, ...splitRows('breast_cancer_split.csv') };
}

/** modeldata 1.1.0 credit_data, y = Status 'bad'; categoricals one-hot with missing as its own level (as the oracle did). */
function creditData() {
  const t: CsvTable = readCsv(REF + 'credit_data.csv');
  const names: string[] = [];
  const cols: Float64Array[] = [];
  t.header.forEach((h, j) => {
    if (h === 'Status') return;
    const raw = t.fields[j];
    if (raw.some((s) => s !== '' && Number.isNaN(Number(s)))) {
      for (const level of [...new Set(raw.map((s) => (s === '' ? '__MISSING__' : s)))].sort()) {
        names.push(`${h}_${level}`);
        cols.push(Float64Array.from(raw, (s) => ((s === '' ? '__MISSING__' : s) === level ? 1 : 0)));
      }
    } else {
      names.push(h);
      cols.push(Float64Array.from(raw, (s) => (s === '' ? NaN : Number(s))));
    }
  });
  const y = Uint8Array.from(t.fields[t.header.indexOf('Status')], (s) => (s === 'bad' ? 1 : 0));
  return { names, cols, y, ...splitRows('credit_data_split.csv') };
}
