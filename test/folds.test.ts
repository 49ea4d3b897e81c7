/** Seeded splits: stratification, determinism and disjointness. */
import { describe, expect, it } from 'vitest';
import { createRng, deriveSeed } from '../pipeline/rng.js';
import { foldRows, stratifiedFolds, stratifiedHoldout, timeHoldout } from '../pipeline/folds.js';

function target(n: number, rate: number): Uint8Array {
  const rng = createRng(1, 't');
  const y = new Uint8Array(n);
  for (let i = 0; i < n; i++) y[i] = rng.next() < rate ? 1 : 0;
  return y;
}

describe('rng', () => {
  it('is a pure function of the seed path', () => {
    const a = createRng(7, 'stage', 'x');
    const b = createRng(7, 'stage', 'x');
    const c = createRng(7, 'stage', 'y');
    const sa = Array.from({ length: 5 }, () => a.next());
    expect(Array.from({ length: 5 }, () => b.next())).toEqual(sa);
    expect(Array.from({ length: 5 }, () => c.next())).not.toEqual(sa);
    expect(Array.from(deriveSeed(7, 'a', 'b'))).not.toEqual(Array.from(deriveSeed(7, 'ab')));
  });

  it('draws uniformly: mean ≈ 1/2 and int() covers its range evenly', () => {
    const r = createRng(3);
    let s = 0;
    const counts = new Array(10).fill(0);
    for (let i = 0; i < 100_000; i++) {
      const u = r.next();
      expect(u >= 0 && u < 1).toBe(true);
      s += u;
      counts[r.int(10)]++;
    }
    // Mean of 1e5 uniforms has sd 1/sqrt(12e5) ≈ 0.0009; 5 sd band (common practice, no source).
    expect(Math.abs(s / 100_000 - 0.5)).toBeLessThan(0.0046);
    // Each bucket expects 10,000 with sd ≈ 95; 5 sd band.
    for (const c of counts) expect(Math.abs(c - 10_000)).toBeLessThan(475);
  });
});

describe('folds', () => {
  const y = target(10_001, 0.08);
  const rows = Uint32Array.from({ length: y.length }, (_, i) => i);

  it('stratified folds keep sizes within one row and event counts within one event', () => {
    const fold = stratifiedFolds(rows, y, 5, createRng(1, 'f'));
    const sizes = [0, 0, 0, 0, 0];
    const events = [0, 0, 0, 0, 0];
    for (let i = 0; i < rows.length; i++) {
      sizes[fold[i]]++;
      events[fold[i]] += y[rows[i]];
    }
    expect(Math.max(...sizes) - Math.min(...sizes)).toBeLessThanOrEqual(1);
    expect(Math.max(...events) - Math.min(...events)).toBeLessThanOrEqual(1);
    expect(Array.from(stratifiedFolds(rows, y, 5, createRng(1, 'f')))).toEqual(Array.from(fold));
  });

  it('fold rows partition the rows', () => {
    const fold = stratifiedFolds(rows, y, 4, createRng(2));
    const seen = new Uint8Array(rows.length);
    for (let k = 0; k < 4; k++) {
      const inK = foldRows(rows, fold, k, true);
      const outK = foldRows(rows, fold, k, false);
      expect(inK.length + outK.length).toBe(rows.length);
      for (const r of inK) seen[r]++;
    }
    expect(seen.every((s) => s === 1)).toBe(true);
  });

  it('stratified holdout takes the fraction of each class', () => {
    const h = stratifiedHoldout(y.length, y, 0.2, createRng(4));
    let n = 0, e = 0, eAll = 0;
    for (let i = 0; i < y.length; i++) {
      n += h[i];
      e += h[i] & y[i];
      eAll += y[i];
    }
    expect(e).toBe(Math.round(eAll * 0.2));
    expect(n - e).toBe(Math.round((y.length - eAll) * 0.2));
  });

  it('time holdout takes rows on or after the cut and keeps undated rows in training', () => {
    expect(Array.from(timeHoldout(Float64Array.from([10, 20, NaN, 19.5, 21]), 20))).toEqual([0, 1, 0, 0, 1]);
  });
});
