/**
 * The `select` and `forest-leaves` stages on generated data with known signal columns.
 */
import { describe, expect, it } from 'vitest';
import { numeric, type Column, type NumericColumn } from '../pipeline/frame.js';
import { auc } from '../pipeline/metrics/auc.js';
import { forestLeaves } from '../stages/forest-leaves.js';
import { select } from '../stages/select.js';
import { testRng, iota } from './helpers/seeded.js';

/** 20 numeric columns (some missing values); only c3, c11 and c17 move the target. */
function signalData(n: number, seed: number) {
  const rng = testRng(seed);
  const cols: NumericColumn[] = Array.from({ length: 20 }, (_, j) => numeric(`c${j}`, new Float64Array(n)));
  const y = new Uint8Array(n);
  for (let i = 0; i < n; i++) {
    for (const c of cols) c.values[i] = rng.next() < 0.05 ? NaN : rng.next() * 2 - 1;
    const v = (j: number) => (Number.isNaN(cols[j].values[i]) ? 0 : cols[j].values[i]);
    const z = 1.5 * v(3) - 1.2 * v(11) + (v(17) > 0.3 ? 1.4 : 0) - 0.4;
    y[i] = rng.next() < 1 / (1 + Math.exp(-2 * z)) ? 1 : 0;
  }
  return { columns: new Map<string, Column>(cols.map((c) => [c.name, c])), all: cols as Column[], y };
}

describe('select', () => {
  it('keeps exactly the 3 signal columns of 20 with keep = 3, values unchanged and in input order', () => {
    const d = signalData(4000, 1);
    const config = select.resolveConfig({ keep: 3 });
    const inputs = select.selectInputs(config, d.all);
    expect(inputs.length).toBe(20);
    const rows = iota(3000);
    const state = select.fit({ view: { columns: d.columns, rows }, target: d.y, inputs, config, rng: testRng(2) });
    expect(state.keep).toEqual(['c3', 'c11', 'c17']);
    const applyRows = Uint32Array.from({ length: 1000 }, (_, i) => 3000 + i);
    const out = select.apply(state, { columns: d.columns, rows: applyRows }, inputs);
    expect(out.map((c) => c.name)).toEqual(['c3', 'c11', 'c17']);
    const kept = (out[1] as NumericColumn).values;
    const source = (d.columns.get('c11') as NumericColumn).values;
    for (let i = 0; i < applyRows.length; i++) expect(Object.is(kept[i], source[applyRows[i]])).toBe(true);
    const table = select.describe!(state).tables!.select_importance;
    expect(table.rows.filter((r) => r[3] === 1).map((r) => r[0])).toEqual(['c3', 'c11', 'c17']);
    expect(table.rows.reduce((s, r) => s + (r[1] as number), 0)).toBeCloseTo(1, 12);
  });

  it('breaks ties by column order (all-constant columns have zero importance)', () => {
    const n = 500;
    const cols: Column[] = Array.from({ length: 5 }, (_, j) => numeric(`k${j}`, new Float64Array(n).fill(j)));
    const y = Uint8Array.from({ length: n }, (_, i) => i % 3 === 0 ? 1 : 0);
    const config = select.resolveConfig({ keep: 2, trees: 5 });
    const state = select.fit({ view: { columns: new Map(cols.map((c) => [c.name, c])), rows: iota(n) }, target: y, inputs: cols.map((c) => c.name), config, rng: testRng(1) });
    expect(state.keep).toEqual(['k0', 'k1']);
  });

  it('rejects an unknown ranking and a bad keep', () => {
    expect(() => select.resolveConfig({ by: 'gain' })).toThrow(/by/);
    expect(() => select.resolveConfig({ keep: 0 })).toThrow(/keep/);
  });
});

describe('forest-leaves', () => {
  it('emits one smoothed leaf-rate column per tree that carries the signal to unseen rows', () => {
    const d = signalData(4000, 3);
    const config = forestLeaves.resolveConfig({});
    expect(config).toEqual({ trees: 10, max_depth: 3, min_leaf: 0.05, smoothing: 20 });
    const inputs = forestLeaves.selectInputs(config, d.all);
    const fitRows = iota(3000);
    const state = forestLeaves.fit({ view: { columns: d.columns, rows: fitRows }, target: d.y, inputs, config, rng: testRng(4) });
    const test = Uint32Array.from({ length: 1000 }, (_, i) => 3000 + i);
    const out = forestLeaves.apply(state, { columns: d.columns, rows: test }, inputs) as NumericColumn[];
    expect(out.map((c) => c.name)).toEqual(Array.from({ length: 10 }, (_, t) => `forest_leaf_${t + 1}`));
    const yTest = Uint8Array.from(test, (r) => d.y[r]);
    const mean = new Float64Array(test.length);
    for (const c of out) {
      // depth 3: at most 8 leaves, so at most 8 distinct rates per column
      expect(new Set(c.values).size).toBeLessThanOrEqual(8);
      for (let i = 0; i < test.length; i++) {
        expect(c.values[i]).toBeGreaterThan(0);
        expect(c.values[i]).toBeLessThan(1);
        mean[i] += c.values[i] / out.length;
      }
    }
    expect(auc(yTest, mean)).toBeGreaterThan(0.7); // the planted signal is found (common practice, no source)
  });

  it('shrinks every leaf to the fit rows\' rate as smoothing grows (m-estimate, Cestnik 1990) and is deterministic per seed', () => {
    const d = signalData(2000, 5);
    const rows = iota(2000);
    let events = 0;
    for (const r of rows) events += d.y[r];
    const inputs = forestLeaves.selectInputs(forestLeaves.resolveConfig({}), d.all);
    const fitWith = (o: Record<string, unknown>, seed: number) => {
      const config = forestLeaves.resolveConfig(o);
      const st = forestLeaves.fit({ view: { columns: d.columns, rows }, target: d.y, inputs, config, rng: testRng(seed) });
      return forestLeaves.apply(st, { columns: d.columns, rows }, inputs) as NumericColumn[];
    };
    for (const c of fitWith({ smoothing: 1e12, trees: 3 }, 1)) for (const v of c.values) expect(v).toBeCloseTo(events / 2000, 8);
    const a = fitWith({ trees: 3 }, 7);
    const b = fitWith({ trees: 3 }, 7);
    const c = fitWith({ trees: 3 }, 8);
    expect(a.map((x) => Array.from(x.values))).toEqual(b.map((x) => Array.from(x.values)));
    expect(a.map((x) => Array.from(x.values))).not.toEqual(c.map((x) => Array.from(x.values)));
  });
});
