import { describe, expect, it } from 'vitest';
import { numeric, type Column, type FrameView } from '../pipeline/frame.js';
import { impute } from '../stages/impute.js';
import { iota, noDraws } from './helpers/seeded.js';

const noRng = noDraws('impute draws nothing');

function view(cols: Record<string, number[]>): FrameView {
  const columns = new Map<string, Column>(Object.entries(cols).map(([k, v]) => [k, numeric(k, Float64Array.from(v))]));
  const n = Object.values(cols)[0].length;
  return { columns, rows: iota(n) };
}

describe('impute', () => {
  const N = NaN;
  const v = view({
    a: [4, N, 1, 3, N, 2],
    // missing on the same rows as a: shares a's flag
    b: [N, N, 5, 5, N, 7].map((x, i) => (i === 0 ? 9 : x)),
    c: [1, 1, 1, 1, 1, 1],
    d: [N, 2, 2, 2, 2, 2],
  });
  const inputs = ['a', 'b', 'c', 'd'];
  const state = impute.fit({ view: v, target: new Uint8Array(6), inputs, config: {}, rng: noRng });

  it('fills with the fit-row median (mean of the two middle values for an even count, as numpy.median; from memory)', () => {
    expect(state.columns.map((c) => c.median)).toEqual([2.5, 6, 1, 2]);
  });

  it('flags each distinct missing pattern once: b is missing exactly where a is, so a\'s flag stands for both', () => {
    expect(state.columns.map((c) => [c.name, c.flag, c.sameAs])).toEqual([
      ['a', true, null],
      ['b', false, 'a'],
      ['c', false, null],
      ['d', true, null],
    ]);
    const out = impute.apply(state, v, inputs);
    // c has nothing to fill, so it is not re-emitted: the learners read the original column
    expect(out.map((c) => c.name)).toEqual(['a', 'a__missing', 'b', 'd', 'd__missing']);
    const get = (name: string) => Array.from((out.find((c) => c.name === name) as { values: Float64Array }).values);
    expect(get('a')).toEqual([4, 2.5, 1, 3, 2.5, 2]);
    expect(get('a__missing')).toEqual([0, 1, 0, 0, 1, 0]);
    expect(get('b')).toEqual([9, 6, 5, 5, 6, 7]);
    expect(get('d__missing')).toEqual([1, 0, 0, 0, 0, 0]);
    // rows without gaps in a: a is left alone, but its flag (part of the fitted state) is still emitted as zeros
    const complete: FrameView = { columns: v.columns, rows: Uint32Array.of(0, 2, 3, 5) };
    expect(impute.apply(state, complete, inputs).map((c) => c.name)).toEqual(['a__missing', 'd', 'd__missing']);
  });
});
