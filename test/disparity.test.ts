/**
 * The disparity table: a small example worked by hand, consistency of "selected" with the budget
 * cut that capture uses, and the runner's table on the invented demo data, whose protected
 * owner_age_band has no effect on anything (data-demo/README.md).
 */
import { describe, expect, it } from 'vitest';
import { join } from 'node:path';
import { readFileSync } from 'node:fs';
import { categorical } from '../pipeline/frame.js';
import { disparityTable, FOUR_FIFTHS, MISSING_GROUP } from '../pipeline/disparity.js';
import { budgetMetrics } from '../pipeline/metrics/budget.js';
import { generateDemo } from '../data-demo/generate.js';
import { runYaml, tempDir } from './helpers/run-fixture.js';

describe('disparityTable, worked by hand', () => {
  // Frame rows 0..17. Level D never occurs; row 17 (group A, top score, event) lies outside `rows`
  // and must not count. Cut 0.5: selected = score >= 0.5.
  //   group    rows        scores                       selected  events  share  event rate  ratio
  //   A        0-3         0.9 0.8 0.3 0.2              2/4       1/4     0.50   0.25        0.50/0.50 = 1
  //   B        4-7         0.7 0.1 0.2 0.05             1/4       2/4     0.25   0.50        0.25/0.50 = 0.5  -> flag
  //   C        8-12        0.6 0.5 0.4 0.3 0.2          2/5       0/5     0.40   0           0.40/0.50 = 0.8  -> not flagged (rule is "below 0.8")
  //   missing  13-16       0.95 0.45 0.35 0.55          2/4       1/4     0.50   0.25        1
  const codes = Int32Array.from([0, 0, 0, 0, 1, 1, 1, 1, 2, 2, 2, 2, 2, -1, -1, -1, -1, 0]);
  const target = Uint8Array.from([1, 0, 0, 0, 1, 1, 0, 0, 0, 0, 0, 0, 0, 0, 1, 0, 0, 1]);
  const allScores = [0.9, 0.8, 0.3, 0.2, 0.7, 0.1, 0.2, 0.05, 0.6, 0.5, 0.4, 0.3, 0.2, 0.95, 0.45, 0.35, 0.55, 0.99];
  const rows = Uint32Array.from({ length: 17 }, (_, i) => i);
  const scores = Float64Array.from(allScores.slice(0, 17));
  const column = categorical('band', codes, ['A', 'B', 'C', 'D']);

  it('gives the hand-computed counts, shares, rates, ratios and the four-fifths flag', () => {
    const t = disparityTable({ budget: 0.3, cut: 0.5, columns: [column], rows, scores, target });
    expect(t.cut).toBe(0.5);
    expect(t.budget).toBe(0.3);
    expect(t.note).toMatch(/not a legal finding/);
    expect(t.note).toMatch(/29 CFR 1607\.4\(D\)/);
    expect(t.columns).toHaveLength(1);
    expect(t.columns[0].column).toBe('band');
    // Four-fifths threshold: EEOC Uniform Guidelines on Employee Selection Procedures, 29 CFR 1607.4(D).
    expect(FOUR_FIFTHS).toBe(0.8);
    const g = t.columns[0].groups;
    expect(g.map((x) => x.group)).toEqual(['A', 'B', 'C', MISSING_GROUP]);
    expect(g.map((x) => x.n)).toEqual([4, 4, 5, 4]);
    expect(g.map((x) => x.selected_share)).toEqual([0.5, 0.25, 0.4, 0.5]);
    expect(g.map((x) => x.event_rate)).toEqual([0.25, 0.5, 0, 0.25]);
    expect(g[0].ratio).toBe(1);
    expect(g[1].ratio).toBe(0.5);
    expect(g[2].ratio).toBeCloseTo(0.8, 15);
    expect(g[3].ratio).toBe(1);
    expect(g.map((x) => x.flag)).toEqual([false, true, false, false]);
  });

  it('counts as selected exactly the rows of the inclusive budget cut that metrics report', () => {
    const y = Uint8Array.from(rows, (r) => target[r]);
    const m = budgetMetrics(y, scores, 0.3);
    expect(m).not.toBeNull();
    const t = disparityTable({ budget: 0.3, cut: m!.cut, columns: [column], rows, scores, target });
    const selected = t.columns[0].groups.reduce((s, x) => s + x.selected_share * x.n, 0);
    expect(Math.round(selected)).toBe(m!.inclusive.nSelected);
  });

  it('rejects scores not aligned with rows', () => {
    expect(() => disparityTable({ budget: 0.3, cut: 0.5, columns: [column], rows, scores: scores.subarray(0, 3), target })).toThrow(/differ in length/);
  });
});

describe('the runner stores the disparity table', () => {
  it('on the demo data the unrelated owner_age_band is selected at nearly equal rates', async () => {
    const dir = tempDir('disparity');
    const csv = join(dir, 'data.csv');
    await generateDemo({ rows: 20000, seed: 5, out: csv });
    const out = await runYaml(
      dir,
      `name: disp
seed: 4
data:
  file: ${csv}
  target: missed_payment_90d
  positive: "yes"
  id: application_id
  columns: {applied_on: date, registered_on: date, owner_age_band: protected}
split: {folds: 2, inner_folds: 2, holdout: {fraction: 0.5}}
features:
  rate-encode: {}
learners:
  lr: {kind: logistic}
evaluate: {budget: 0.3}
`,
      { workers: 2 },
    );
    const written = JSON.parse(readFileSync(join(out.runDir, 'metrics.json'), 'utf8'));
    const d = written.disparity;
    expect(d.budget).toBe(0.3);
    expect(d.cut).toBe(written.holdout.stack.cut);
    expect(d.columns.map((c: { column: string }) => c.column)).toEqual(['owner_age_band']);
    const groups = d.columns[0].groups as { group: string; n: number; selected_share: number; ratio: number; flag: boolean }[];
    expect(groups.map((x) => x.group).sort()).toEqual(['18-29', '30-44', '45-59', '60+']);
    expect(groups.reduce((s, x) => s + x.n, 0)).toBe(out.manifest.split.holdout_rows);
    // Tolerance (common practice, no source): the score does not depend on the band, so each
    // group's selection share is a binomial proportion around 0.3 with sd sqrt(0.3*0.7/n_g)
    // ≈ 0.009 at n_g ≈ 2,500; the gap between the highest and lowest of four such shares
    // exceeds 0.06 (≈ 4.6 sd of a difference) with negligible probability, i.e. ratio ≥ 0.8.
    // Seeded, so the figure is fixed; the bound says how far chance alone could move it.
    for (const x of groups) {
      expect(x.ratio).toBeGreaterThanOrEqual(0.8);
      expect(x.flag).toBe(false);
    }
    expect(Math.max(...groups.map((x) => x.selected_share)) - Math.min(...groups.map((x) => x.selected_share))).toBeLessThan(0.06);
    // The OOF table covers the development rows.
    expect(written.disparity_oof.columns[0].groups.reduce((s: number, x: { n: number }) => s + x.n, 0)).toBe(out.manifest.split.dev_rows);
  }, 120_000);
});
