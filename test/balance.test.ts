import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { createRng } from '../pipeline/rng.js';
import { BalanceInputError, balanceRows, priorCorrect, priorCorrectionOffset } from '../stages/balance.js';
import { fitLogistic } from '../stages/core/newton-logistic.js';
import { numericColumnOf, readCsv, targetOf } from './helpers/read-csv.js';

const REF = new URL('./reference/', import.meta.url).pathname;

// King & Zeng (2001), "Logistic Regression in Rare Events Data", Political Analysis 9(2):137-163;
// values computed with numpy 1.24.2 IRLS, cross-checked by scikit-learn 1.2.1 and R 4.2.2 glm
// (oracle scripts/prior_correction.py).
interface KingZengOracle {
  inputs: { tau_population_event_rate: number; ybar_sample_event_rate: number; n: number; n_bad: number };
  expected: {
    coef_balanced_sample: { intercept: number; int_rate: number };
    'intercept_shift_ln((1-tau)/tau*ybar/(1-ybar))': number;
    coef_balanced_kz_corrected: { intercept: number; int_rate: number };
    odds_adjustment: { 'r1=tau/ybar': number; 'r0=(1-tau)/(1-ybar)': number };
    worked_grid: { p_balanced: number[]; p_corrected: number[] };
  };
}

const oracle = JSON.parse(readFileSync(`${REF}prior_correction_king_zeng.json`, 'utf8')) as KingZengOracle;
const TAU = oracle.inputs.tau_population_event_rate;
const YBAR = oracle.inputs.ybar_sample_event_rate;

function allRows(n: number): Uint32Array {
  return Uint32Array.from({ length: n }, (_, i) => i);
}

describe('prior correction against King & Zeng (2001) on lending_club', () => {
  it('reproduces the intercept shift ln((1-τ)/τ · ȳ/(1-ȳ)) to 1e-12', () => {
    expect(Math.abs(priorCorrectionOffset(TAU, YBAR) - oracle.expected['intercept_shift_ln((1-tau)/tau*ybar/(1-ybar))'])).toBeLessThan(1e-12);
    expect(priorCorrectionOffset(TAU, YBAR)).toBeCloseTo(2.894, 3);
  });

  it('corrects the worked grid of probabilities to 1e-12', () => {
    const got = priorCorrect(Float64Array.from(oracle.expected.worked_grid.p_balanced), TAU, YBAR);
    oracle.expected.worked_grid.p_corrected.forEach((want, i) => expect(Math.abs(got[i] - want)).toBeLessThan(1e-12));
  });

  it('corrects every balanced-model probability of the data set to the oracle p_balanced_kz (1e-12)', () => {
    const probs = readCsv(`${REF}lending_club_probs.csv`);
    const raw = numericColumnOf(probs, 'p_balanced_raw').values;
    const want = numericColumnOf(probs, 'p_balanced_kz').values;
    const got = priorCorrect(raw, TAU, YBAR);
    let worst = 0;
    for (let i = 0; i < got.length; i++) worst = Math.max(worst, Math.abs(got[i] - want[i]));
    expect(got.length).toBe(oracle.inputs.n);
    expect(worst).toBeLessThan(1e-12);
  });

  it('odds form equals subtracting the shift from each logit', () => {
    const grid = Float64Array.from(oracle.expected.worked_grid.p_balanced);
    const shift = priorCorrectionOffset(TAU, YBAR);
    const got = priorCorrect(grid, TAU, YBAR);
    grid.forEach((p, i) => {
      const viaLogit = 1 / (1 + Math.exp(-(Math.log(p / (1 - p)) - shift)));
      expect(Math.abs(got[i] - viaLogit)).toBeLessThan(1e-15);
    });
  });

  it('refits the balanced-sample model with fitLogistic and corrects its intercept (coefficients 1e-6)', () => {
    // The oracle's fit: unpenalized logistic regression of Class == 'bad' on int_rate over the 1034
    // rows in lending_club_balanced_rows.csv (all 517 bads + 517 goods, numpy RandomState(12345)).
    const data = readCsv(`${REF}lending_club.csv`);
    const y = targetOf(data, 'Class', 'bad');
    const x = numericColumnOf(data, 'int_rate').values;
    const rows = Uint32Array.from(readCsv(`${REF}lending_club_balanced_rows.csv`).fields[0], Number);
    let events = 0;
    for (const r of rows) events += y[r];
    expect(rows.length).toBe(1034);
    expect(events).toBe(517);
    let popEvents = 0;
    for (let i = 0; i < y.length; i++) popEvents += y[i];
    const tau = popEvents / y.length;
    expect(Math.abs(tau - TAU)).toBeLessThan(1e-15);

    const fit = fitLogistic([x], rows, y, { l2: 0 });
    expect(fit.converged).toBe(true);
    const want = oracle.expected.coef_balanced_sample;
    expect(Math.abs(fit.intercept - want.intercept)).toBeLessThan(1e-6);
    expect(Math.abs(fit.coef[0] - want.int_rate)).toBeLessThan(1e-6);

    const corrected = fit.intercept - priorCorrectionOffset(tau, events / rows.length);
    expect(Math.abs(corrected - oracle.expected.coef_balanced_kz_corrected.intercept)).toBeLessThan(1e-6);
  });

  it('rejects rates outside (0, 1) and probabilities outside [0, 1]', () => {
    expect(() => priorCorrectionOffset(0, 0.5)).toThrow(BalanceInputError);
    expect(() => priorCorrectionOffset(0.1, 1)).toThrow(BalanceInputError);
    expect(() => priorCorrect(Float64Array.of(0.2, NaN), 0.1, 0.5)).toThrow(/index 1/);
    expect(() => priorCorrect(Float64Array.of(1.2), 0.1, 0.5)).toThrow(BalanceInputError);
    expect(Array.from(priorCorrect(Float64Array.of(0, 1), 0.1, 0.5))).toEqual([0, 1]);
  });
});

describe('balanceRows', () => {
  const data = readCsv(`${REF}lending_club.csv`);
  const y = targetOf(data, 'Class', 'bad');
  const rows = allRows(y.length);

  function check(res: ReturnType<typeof balanceRows>, ratio: number): void {
    for (let i = 1; i < res.rows.length; i++) expect(res.rows[i]).toBeGreaterThan(res.rows[i - 1]);
    let events = 0;
    for (const r of res.rows) events += y[r];
    // Every event is kept.
    expect(events).toBe(oracle.inputs.n_bad);
    const nonEvents = res.rows.length - events;
    const share = events / res.rows.length;
    expect(res.ybar).toBe(share);
    expect(res.tau).toBe(oracle.inputs.n_bad / oracle.inputs.n);
    // No whole number of non-events one more or one fewer gets closer to the ratio.
    expect(Math.abs(share - ratio)).toBeLessThanOrEqual(Math.abs(events / (events + nonEvents + 1) - ratio));
    expect(Math.abs(share - ratio)).toBeLessThanOrEqual(Math.abs(events / (events + nonEvents - 1) - ratio));
  }

  it('keeps every event and samples non-events to the requested share, rows ascending', () => {
    const half = balanceRows(rows, y, 0.5, createRng(7, 'balance-test'));
    expect(half.rows.length).toBe(2 * oracle.inputs.n_bad);
    expect(half.ybar).toBe(0.5);
    check(half, 0.5);
    // 517 · 0.7 / 0.3 = 1206.33 non-events.
    const third = balanceRows(rows, y, 0.3, createRng(7, 'balance-test'));
    expect(third.rows.length).toBe(517 + 1206);
    check(third, 0.3);
  });

  it('is deterministic for a seed and differs across seeds', () => {
    const a = balanceRows(rows, y, 0.5, createRng(11, 'balance'));
    const b = balanceRows(rows, y, 0.5, createRng(11, 'balance'));
    const c = balanceRows(rows, y, 0.5, createRng(12, 'balance'));
    expect(Array.from(a.rows)).toEqual(Array.from(b.rows));
    expect(Array.from(a.rows)).not.toEqual(Array.from(c.rows));
  });

  it('keeps all rows when the share is already at least the ratio, or there is no event', () => {
    const target = Uint8Array.of(1, 0, 1, 0, 0);
    const shuffled = Uint32Array.of(4, 2, 0, 3, 1);
    const res = balanceRows(shuffled, target, 0.4, createRng(1));
    expect(Array.from(res.rows)).toEqual([0, 1, 2, 3, 4]);
    expect(res.tau).toBe(0.4);
    expect(res.ybar).toBe(0.4);
    const none = balanceRows(Uint32Array.of(1, 3), target, 0.5, createRng(1));
    expect(Array.from(none.rows)).toEqual([1, 3]);
    expect(none.tau).toBe(0);
  });

  it('draws each non-event with equal probability (uniform subset)', () => {
    // 2 events, 20 non-events, ratio 2/7 → 5 non-events per draw; over 2000 seeded draws each
    // non-event's count is Binomial(2000, 1/4): mean 500, sd ≈ 19.4. A ±6 sd band cannot be
    // missed by a uniform sampler with these fixed seeds, and catches any order bias.
    const target = new Uint8Array(22);
    target[3] = 1;
    target[17] = 1;
    const all = allRows(22);
    const counts = new Float64Array(22);
    for (let s = 0; s < 2000; s++) {
      const res = balanceRows(all, target, 2 / 7, createRng(s, 'uniform'));
      expect(res.rows.length).toBe(7);
      for (const r of res.rows) counts[r]++;
    }
    for (let r = 0; r < 22; r++) {
      if (target[r] === 1) expect(counts[r]).toBe(2000);
      else expect(Math.abs(counts[r] - 500)).toBeLessThan(6 * Math.sqrt(2000 * 0.25 * 0.75));
    }
  });

  it('rejects a ratio outside (0, 1)', () => {
    expect(() => balanceRows(rows, y, 1, createRng(1))).toThrow(BalanceInputError);
    expect(() => balanceRows(rows, y, 0, createRng(1))).toThrow(/ratio/);
  });
});
