import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { categorical, numeric, type Column, type FrameView } from '../pipeline/frame.js';
import { createRng } from '../pipeline/rng.js';
import { fitLogistic, sigmoid } from '../stages/core/newton-logistic.js';
import { TRANSFORM_SHAPES, TransformsConfigError, transforms, type TransformsConfig, type TransformsState } from '../stages/transforms.js';
import { numericColumnOf, readCsv, targetOf } from './helpers/read-csv.js';

const REF = new URL('./reference/', import.meta.url).pathname;

function allRows(n: number): Uint32Array {
  return Uint32Array.from({ length: n }, (_, i) => i);
}

function view(cols: readonly Column[], rows: Uint32Array): FrameView {
  return { columns: new Map(cols.map((c) => [c.name, c])), rows };
}

function fit(cols: readonly Column[], rows: Uint32Array, target: Uint8Array, raw?: unknown): TransformsState {
  const config: TransformsConfig = transforms.resolveConfig(raw);
  const inputs = transforms.selectInputs(config, cols);
  return transforms.fit({ view: view(cols, rows), target, inputs, config, rng: createRng(1, 'transforms-test') });
}

function logLikOf(state: TransformsState, column: string, shape: string): number {
  const cs = state.columns.find((c) => c.name === column);
  if (!cs) throw new Error(`no state for ${column}`);
  const v = cs.logLik[state.candidates.indexOf(shape as (typeof TRANSFORM_SHAPES)[number])];
  if (v === null || v === undefined) throw new Error(`no log-likelihood for ${shape}`);
  return v;
}

/** The best log-likelihood among the candidates other than `shape`. */
function runnerUp(state: TransformsState, shape: string): number {
  const cs = state.columns[0];
  return Math.max(...cs.logLik.filter((v, k): v is number => v !== null && state.candidates[k] !== shape));
}

// Seeded simulation (no external source): n = 20000 makes the winning margin tens of nats, far
// beyond the run-to-run spread, and the margin is asserted so a weaker design would show.
const N = 20000;

function logData(): { x: Float64Array; y: Uint8Array } {
  const rng = createRng(2024, 'transforms-test', 'log');
  const x = new Float64Array(N);
  const y = new Uint8Array(N);
  for (let i = 0; i < N; i++) {
    // Row 0 pins the fit minimum at 0, so the stage's log shape ln(x − 0 + 1) is exactly u.
    const u = i === 0 ? 0 : 5 * rng.next();
    x[i] = Math.exp(u) - 1;
    y[i] = rng.next() < sigmoid(-3 + 1.2 * u) ? 1 : 0;
  }
  return { x, y };
}

function squareData(): { x: Float64Array; y: Uint8Array } {
  const rng = createRng(2024, 'transforms-test', 'square');
  const x = new Float64Array(N);
  const y = new Uint8Array(N);
  for (let i = 0; i < N; i++) {
    const v = -3 + 6 * rng.next();
    x[i] = v;
    y[i] = rng.next() < sigmoid(-2 + 0.8 * v * v) ? 1 : 0;
  }
  return { x, y };
}

describe('transforms: shape choice on simulated data', () => {
  it('chooses log when the log-odds are linear in log(x)', () => {
    const { x, y } = logData();
    const state = fit([numeric('x', x)], allRows(N), y);
    expect(state.columns[0].chosen).toBe('log');
    expect(logLikOf(state, 'x', 'log') - runnerUp(state, 'log')).toBeGreaterThan(20);
  });

  it('chooses square when the log-odds are linear in x²', () => {
    const { x, y } = squareData();
    const state = fit([numeric('x', x)], allRows(N), y);
    expect(state.columns[0].chosen).toBe('square');
    expect(logLikOf(state, 'x', 'square') - runnerUp(state, 'square')).toBeGreaterThan(100);
  });

  it('the log candidate log-likelihood equals an unstandardized fit on ln(x − min + 1)', () => {
    // Identity under test: a one-slope logistic model with an intercept has the same maximized
    // log-likelihood for x and for any affine rescaling of x (the stage standardizes first).
    const { x, y } = logData();
    const state = fit([numeric('x', x)], allRows(N), y);
    const shaped = Float64Array.from(x, (v) => Math.log(v - state.columns[0].min! + 1));
    const direct = fitLogistic([shaped], allRows(N), y, { l2: 0 });
    expect(direct.converged).toBe(true);
    expect(Math.abs(logLikOf(state, 'x', 'log') + direct.objective)).toBeLessThan(1e-9 * direct.objective);
  });
});

describe('transforms: log-likelihood against R glm', () => {
  // R 4.2.2 stats::glm(bad ~ int_rate, binomial) on lending_club (oracle scripts/r_glm.R);
  // log-likelihood = −deviance/2 for 0/1 data, tolerance relative 1e-9 as the oracle states.
  interface GlmFit {
    deviance: number;
    null_deviance: number;
    n: number;
  }
  const glm = JSON.parse(readFileSync(`${REF}r_glm.json`, 'utf8')) as { expected: Record<string, GlmFit> };
  const data = readCsv(`${REF}lending_club.csv`);
  const y = targetOf(data, 'Class', 'bad');
  const intRate = numericColumnOf(data, 'int_rate');

  it('identity on all 9857 rows: −deviance/2 of glm', () => {
    const want = glm.expected.lending_club_full;
    const state = fit([intRate], allRows(y.length), y);
    expect(state.columns[0].n).toBe(want.n);
    const ll = logLikOf(state, 'int_rate', 'identity');
    expect(Math.abs(ll + want.deviance / 2)).toBeLessThan(1e-9 * want.deviance);
  });

  it('identity on the 1034 balanced rows, and a constant column scores the null deviance', () => {
    const want = glm.expected.lending_club_balanced;
    const rows = Uint32Array.from(readCsv(`${REF}lending_club_balanced_rows.csv`).fields[0], Number);
    const constant = numeric('constant', new Float64Array(y.length).fill(3.5));
    const state = fit([intRate, constant], rows, y);
    expect(Math.abs(logLikOf(state, 'int_rate', 'identity') + want.deviance / 2)).toBeLessThan(1e-9 * want.deviance);
    for (const s of TRANSFORM_SHAPES) {
      expect(Math.abs(logLikOf(state, 'constant', s) + want.null_deviance / 2)).toBeLessThan(1e-9 * want.null_deviance);
    }
    // Every shape of a constant ties; the tie goes to the first candidate.
    expect(state.columns[1].chosen).toBe('identity');
  });
});

describe('transforms: rank_logit bins', () => {
  it('builds 10 equal-count bins with Cox & Snell empirical logits, by hand', () => {
    // x = 1..20 (shuffled order), two rows per bin; edges at sorted ranks 2, 4, ..., 18 = values 3, 5, ..., 19.
    const xs = [7, 1, 20, 13, 2, 9, 4, 16, 11, 18, 5, 3, 14, 6, 19, 8, 12, 10, 17, 15];
    // Events: bins [1,2] → 0, [3,4] → 1, [5,6] → 2, then alternating.
    const eventsByValue = new Set([3, 5, 6, 8, 9, 10, 12, 14, 15, 16, 17, 19, 20]);
    const x = Float64Array.from(xs);
    const y = Uint8Array.from(xs, (v) => (eventsByValue.has(v) ? 1 : 0));
    const state = fit([numeric('x', x)], allRows(20), y, { candidates: ['rank_logit'] });
    const cs = state.columns[0];
    expect(cs.edges).toEqual([3, 5, 7, 9, 11, 13, 15, 17, 19]);
    const perBin = [0, 1, 2, 1, 2, 1, 1, 2, 1, 2];
    cs.binLogits.forEach((l, b) => expect(l).toBeCloseTo(Math.log((perBin[b] + 0.5) / (2 - perBin[b] + 0.5)), 14));
    const out = transforms.apply(state, view([numeric('x', Float64Array.of(1, 2.9, 3, 19, 20, 100))], allRows(6)), ['x'])[0];
    if (out.type !== 'numeric') throw new Error('expected numeric output');
    expect(Array.from(out.values)).toEqual([cs.binLogits[0], cs.binLogits[0], cs.binLogits[1], cs.binLogits[9], cs.binLogits[9], cs.binLogits[9]]);
  });

  it('drops duplicate edges on heavily tied values so no bin is empty', () => {
    const x = Float64Array.from({ length: 40 }, (_, i) => (i < 25 ? 0 : i));
    const y = Uint8Array.from({ length: 40 }, (_, i) => (i % 3 === 0 ? 1 : 0));
    const cs = fit([numeric('x', x)], allRows(40), y, { candidates: ['rank_logit'] }).columns[0];
    // Ranks 4..24 are all 0 (the minimum) and are dropped; ranks 28, 32, 36 give 28, 32, 36.
    expect(cs.edges).toEqual([28, 32, 36]);
    expect(cs.binLogits.length).toBe(4);
  });
});

describe('transforms: apply', () => {
  const { x, y } = logData();
  const state = fit([numeric('x', x)], allRows(N), y);
  const cs = state.columns[0];

  it('clamps out-of-range values to the fit range and leaves missing as NaN', () => {
    expect(cs.min).toBe(0);
    const max = cs.max!;
    const probe = Float64Array.of(-50, 0, max, max * 10, NaN, 1);
    const out = transforms.apply(state, view([numeric('x', probe)], allRows(6)), ['x'])[0];
    expect(out.name).toBe('x__tf');
    if (out.type !== 'numeric') throw new Error('expected numeric output');
    const v = out.values;
    expect(v[0]).toBe(0);
    expect(v[1]).toBe(0);
    expect(v[2]).toBeCloseTo(Math.log(max + 1), 12);
    expect(v[3]).toBe(v[2]);
    expect(Number.isNaN(v[4])).toBe(true);
    expect(v[5]).toBeCloseTo(Math.log(2), 15);
  });

  it('applies each shape with the fit-minimum shift', () => {
    const xs = Float64Array.of(-2, -1, 0, 3);
    const ys = Uint8Array.of(0, 1, 0, 1);
    const probe = Float64Array.of(-5, 0, 3);
    const expected: Record<string, number[]> = {
      identity: [-2, 0, 3],
      log: [0, Math.log(3), Math.log(6)],
      sqrt: [0, Math.sqrt(2), Math.sqrt(5)],
      square: [4, 0, 9],
      reciprocal: [1, 1 / 3, 1 / 6],
    };
    for (const [s, want] of Object.entries(expected)) {
      const st = fit([numeric('x', xs)], allRows(4), ys, { candidates: [s] });
      expect(st.columns[0].chosen).toBe(s);
      const out = transforms.apply(st, view([numeric('x', probe)], allRows(3)), ['x'])[0];
      if (out.type !== 'numeric') throw new Error('expected numeric output');
      want.forEach((w, i) => expect(out.values[i]).toBeCloseTo(w, 14));
    }
  });

  it('reads only the view rows, in view order', () => {
    const out = transforms.apply(state, view([numeric('x', x)], Uint32Array.of(5, 0)), ['x'])[0];
    if (out.type !== 'numeric') throw new Error('expected numeric output');
    expect(Array.from(out.values)).toEqual([Math.log(x[5] + 1), 0]);
  });

  it('state round-trips through JSON and gives identical outputs', () => {
    const copy = JSON.parse(JSON.stringify(state)) as TransformsState;
    expect(copy).toEqual(state);
    const v = view([numeric('x', x)], allRows(N));
    const a = transforms.apply(state, v, ['x'])[0];
    const b = transforms.apply(copy, v, ['x'])[0];
    if (a.type !== 'numeric' || b.type !== 'numeric') throw new Error('expected numeric output');
    expect(Buffer.from(b.values.buffer).equals(Buffer.from(a.values.buffer))).toBe(true);
  });

  it('skips missing fit values and handles a column that is never present', () => {
    const xm = Float64Array.from(x, (v, i) => (i % 7 === 0 ? NaN : v));
    const empty = numeric('empty', new Float64Array(N).fill(NaN));
    const st = fit([numeric('x', xm), empty], allRows(N), y);
    expect(st.columns[0].n).toBe(N - Math.ceil(N / 7));
    expect(st.columns[1]).toMatchObject({ chosen: 'identity', min: null, n: 0 });
    expect(st.columns[1].logLik.every((v) => v === null)).toBe(true);
    const out = transforms.apply(st, view([numeric('x', xm), empty], allRows(3)), ['empty'])[0];
    if (out.type !== 'numeric') throw new Error('expected numeric output');
    expect(Array.from(out.values).every(Number.isNaN)).toBe(true);
    expect(JSON.parse(JSON.stringify(st))).toEqual(st);
  });
});

describe('transforms: config, inputs and report', () => {
  it('defaults to every numeric column and every candidate, in canonical order', () => {
    const cols: Column[] = [numeric('a', new Float64Array(2)), categorical('c', new Int32Array(2), ['u']), numeric('b', new Float64Array(2))];
    const config = transforms.resolveConfig(undefined);
    expect(config.candidates).toEqual([...TRANSFORM_SHAPES]);
    expect(transforms.selectInputs(config, cols)).toEqual(['a', 'b']);
    expect(transforms.resolveConfig({ candidates: ['square', 'identity'] }).candidates).toEqual(['identity', 'square']);
    expect(() => transforms.selectInputs(transforms.resolveConfig({ columns: ['c'] }), cols)).toThrow(/categorical, not numeric/);
    expect(() => transforms.selectInputs(transforms.resolveConfig({ columns: ['zz'] }), cols)).toThrow(/not an available feature/);
  });

  it('rejects bad options', () => {
    expect(() => transforms.resolveConfig({ candidates: ['logit'] })).toThrow(TransformsConfigError);
    expect(() => transforms.resolveConfig({ candidates: [] })).toThrow(/non-empty/);
    expect(() => transforms.resolveConfig({ candidates: ['log', 'log'] })).toThrow(/twice/);
    expect(() => transforms.resolveConfig({ shapes: ['log'] })).toThrow(/unknown option 'shapes'/);
    expect(() => transforms.resolveConfig({ columns: 'x' })).toThrow(/list of column names/);
  });

  it('describe lists the chosen shape and every candidate log-likelihood', () => {
    const { x, y } = squareData();
    const state = fit([numeric('x', x)], allRows(N), y);
    const report = transforms.describe!(state);
    const table = report.tables!.transforms;
    expect(table.header).toEqual(['column', 'chosen', ...TRANSFORM_SHAPES.map((s) => `loglik_${s}`)]);
    expect(table.rows[0].slice(0, 2)).toEqual(['x', 'square']);
    expect(table.rows[0].slice(2)).toEqual(state.columns[0].logLik);
  });

  it('single-class fit rows leave no finite fit to compare: identity, no log-likelihoods', () => {
    const st = fit([numeric('x', Float64Array.of(1, 2, 3))], allRows(3), Uint8Array.of(1, 1, 1));
    expect(st.columns[0].chosen).toBe('identity');
    expect(st.columns[0].logLik.every((v) => v === null)).toBe(true);
  });
});
