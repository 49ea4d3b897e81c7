import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { numeric, type Column, type FrameView, type NumericColumn } from '../pipeline/frame.js';
import { leafZ } from '../stages/leaf-z.js';
import { summaries } from '../stages/summaries.js';
import { treeBins } from '../stages/tree-bins.js';
import { numericColumnOf, readCsv, targetOf } from './helpers/read-csv.js';
import { iota, noDraws } from './helpers/seeded.js';

const REF = fileURLToPath(new URL('./reference/', import.meta.url));
const noRng = noDraws('no random draws expected');
const values = (c: Column | undefined): Float64Array => (c as NumericColumn).values;

describe('leaf-z', () => {
  it('pooled mean and sd over fit rows equal the leaf-count-weighted moments of the bin rates', () => {
    // credit_data (modeldata 1.1.0, test/reference/credit_data.csv): Income has 381 missing, Assets 47, Debt 18.
    const t = readCsv(REF + 'credit_data.csv');
    const target = targetOf(t, 'Status', 'bad');
    const names = ['Seniority', 'Income', 'Assets', 'Debt', 'Amount'];
    const columns = new Map<string, Column>(names.map((n) => [n, numericColumnOf(t, n)]));
    const rows = iota(target.length);
    const view: FrameView = { columns, rows };
    const tbCfg = treeBins.resolveConfig({ max_depth: 3, min_leaf: 0.05, smoothing: 20 });
    const tbInputs = treeBins.selectInputs(tbCfg, [...columns.values()]);
    const tbState = treeBins.fit({ view, target, inputs: tbInputs, config: tbCfg, rng: noRng });
    for (const c of treeBins.apply(tbState, view, tbInputs)) columns.set(c.name, c);

    const cfg = leafZ.resolveConfig(undefined);
    const inputs = leafZ.selectInputs(cfg, [...columns.values()]);
    expect(inputs).toEqual(names.flatMap((n) => [`${n}__bin`, n]));
    const state = leafZ.fit({ view, target, inputs, config: cfg, rng: noRng });

    // Direct computation from the leaves: weight each bin's rate by its fit rows; missing bins excluded.
    let w = 0;
    let s = 0;
    for (const col of tbState.columns) for (const b of col.bins) {
      w += b.n;
      s += b.n * b.rate;
    }
    const mean = s / w;
    let ss = 0;
    for (const col of tbState.columns) for (const b of col.bins) ss += b.n * (b.rate - mean) ** 2;
    const sd = Math.sqrt(ss / w);
    expect(state.n).toBe(w);
    expect(state.n).toBe(5 * 4454 - 381 - 47 - 18);
    expect(state.mean).toBeCloseTo(mean, 13);
    expect(state.sd).toBeCloseTo(sd, 13);

    const out = leafZ.apply(state, view, inputs);
    expect(out.map((c) => c.name)).toEqual(names.map((n) => `${n}__z`));
    const income = values(columns.get('Income'));
    const incomeBin = values(columns.get('Income__bin'));
    const incomeZ = values(out[1]);
    for (let i = 0; i < rows.length; i++) {
      expect(incomeZ[i]).toBeCloseTo((incomeBin[i] - mean) / sd, 12);
      // missing rows are scored with the missing bin's rate
      if (income[i] !== income[i]) expect(incomeBin[i]).toBe(tbState.columns[1].missing.rate);
    }
  });

  it('gives z = 0 everywhere when every pooled rate is the same', () => {
    const columns = new Map<string, Column>([['a__bin', numeric('a__bin', Float64Array.of(0.2, 0.2, 0.2))]]);
    const view: FrameView = { columns, rows: iota(3) };
    const state = leafZ.fit({ view, target: new Uint8Array(3), inputs: ['a__bin'], config: {}, rng: noRng });
    expect(state.sd).toBe(0);
    expect(Array.from(values(leafZ.apply(state, view, ['a__bin'])[0]))).toEqual([0, 0, 0]);
  });
});

describe('summaries', () => {
  it('row-wise mean, max, min, population sd and high/low counts on a hand-made example', () => {
    const columns = new Map<string, Column>([
      ['a__z', numeric('a__z', Float64Array.of(2, -1.5, 0, NaN))],
      ['b__z', numeric('b__z', Float64Array.of(0, -2, 0, NaN))],
      ['c__z', numeric('c__z', Float64Array.of(1, 1.5, NaN, NaN))],
      ['other', numeric('other', Float64Array.of(9, 9, 9, 9))],
    ]);
    const view: FrameView = { columns, rows: iota(4) };
    const cfg = summaries.resolveConfig({ high_z: 1.0 });
    const inputs = summaries.selectInputs(cfg, [...columns.values()]);
    expect(inputs).toEqual(['a__z', 'b__z', 'c__z']);
    const state = summaries.fit({ view, target: new Uint8Array(4), inputs, config: cfg, rng: noRng });
    const out = new Map(summaries.apply(state, view, inputs).map((c) => [c.name, Array.from(values(c))]));
    // row 0: {2, 0, 1}: mean 1, sd sqrt(2/3); 2 > 1 is high, 1 is not (strict)
    // row 1: {-1.5, -2, 1.5}: mean -2/3; two values below -1, one above 1
    // row 2: {0, 0}: NaN skipped; row 3: no values
    expect(out.get('z_mean')?.slice(0, 3)).toEqual([1, -2 / 3, 0]);
    expect(out.get('z_max')?.slice(0, 3)).toEqual([2, 1.5, 0]);
    expect(out.get('z_min')?.slice(0, 3)).toEqual([0, -2, 0]);
    expect(out.get('z_sd')?.[0]).toBeCloseTo(Math.sqrt(2 / 3), 15);
    const m1 = -2 / 3;
    expect(out.get('z_sd')?.[1]).toBeCloseTo(Math.sqrt(((-1.5 - m1) ** 2 + (-2 - m1) ** 2 + (1.5 - m1) ** 2) / 3), 15);
    expect(out.get('z_sd')?.[2]).toBe(0);
    expect(out.get('z_n_high')).toEqual([1, 1, 0, 0]);
    expect(out.get('z_n_low')).toEqual([0, 2, 0, 0]);
    expect(Number.isNaN(out.get('z_mean')?.[3])).toBe(true);
    expect(() => summaries.resolveConfig({ high_z: -1 })).toThrow(/high_z/);
  });
});
