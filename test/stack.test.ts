/**
 * The stacked blend: non-negative weights on real predictions (an inverted learner is dropped, not
 * used upside down), passthrough inputs (standardized, unconstrained), and a whole run with
 * passthrough on: metrics, cache key, config errors, and train/serve parity with holdout.csv.
 */
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { beforeAll, describe, expect, it } from 'vitest';
import { fitStack, applyStack, logitClipped } from '../stages/stack.js';
import { logistic } from '../stages/learners/logistic.js';
import { createRng } from '../pipeline/rng.js';
import { auc } from '../pipeline/metrics/auc.js';
import { generateDemo } from '../data-demo/generate.js';
import { runYaml, tempDir } from './helpers/run-fixture.js';
import { readCsv, type CsvTable } from './helpers/read-csv.js';
import { quoteField } from '../pipeline/io/csv-writer.js';
import { readBundle } from '../pipeline/bundle/load.js';
import { scoreFile } from '../pipeline/bundle/score-file.js';
import { StepFailure, EXIT } from '../pipeline/errors.js';
import type { RunOutcome } from '../pipeline/runner.js';

const REF = fileURLToPath(new URL('./reference/', import.meta.url));

/**
 * Wisconsin Diagnostic Breast Cancer (Street, Wolberg & Mangasarian 1993; UCI), its train rows
 * (test/reference/breast_cancer_split.csv), and 5-fold out-of-fold logistic predictions on them:
 * `pAll` from all 30 columns, `pFew` from the first 5 — two real, different learners.
 */
function breastCancerOof() {
  const lines = readFileSync(REF + 'breast_cancer.csv', 'utf8').trim().split('\n');
  const header = lines[0].split(',');
  const data = lines.slice(1).map((l) => l.split(',').map(Number));
  const split = readFileSync(REF + 'breast_cancer_split.csv', 'utf8').trim().split('\n').slice(1).map((l) => l.split(',').map(Number));
  const features = header.slice(0, 30).map((_, c) => Float64Array.from(data, (r) => r[c]));
  const target = Uint8Array.from(data, (r) => r[header.indexOf('malignant')]);
  const train = Uint32Array.from(split.filter((s) => s[1] === 0).map((s) => s[0]));
  const oofOf = (cols: number): Float64Array => {
    const p = new Float64Array(target.length).fill(NaN);
    const X = features.slice(0, cols);
    const names = header.slice(0, cols);
    const config = logistic.resolveConfig({ l2: 1 });
    for (let k = 0; k < 5; k++) {
      const fitRows = train.filter((_, i) => i % 5 !== k);
      const applyRows = train.filter((_, i) => i % 5 === k);
      const m = logistic.fit({ features: X, names, rows: fitRows, target, config, rng: createRng(1, 'stack-test', String(k)) });
      const out = logistic.predict(m, X, applyRows);
      applyRows.forEach((r, i) => (p[r] = out[i]));
    }
    return p;
  };
  return { target, train, pAll: oofOf(30), pFew: oofOf(5) };
}

const invert = (p: Float64Array): Float64Array => p.map((v) => 1 - v);
const pick = (a: Uint8Array, rows: Uint32Array): Uint8Array => Uint8Array.from(rows, (r) => a[r]);

describe('fitStack on real predictions', () => {
  const { target, train, pAll, pFew } = breastCancerOof();
  const l2 = 1;

  // Breiman 1996 ("Stacked regressions", Machine Learning 24:49-64): with non-negative weights a
  // learner that only helps upside down is dropped (weight exactly 0 at the bound).
  it.each([
    ['1 − p of the same learner', invert(pAll)],
    ['1 − p of a different learner (5 columns)', invert(pFew)],
  ])('an inverted learner (%s) gets weight exactly 0 with nonnegative, a negative one without', (_, bad) => {
    const free = fitStack(['lr', 'bad'], [pAll, bad], train, target, { nonnegative: false, l2 });
    const nonneg = fitStack(['lr', 'bad'], [pAll, bad], train, target, { nonnegative: true, l2 });
    expect(free.converged && nonneg.converged).toBe(true);
    expect(free.weights[1]).toBeLessThan(-0.1);
    expect(nonneg.weights[1]).toBe(0);
    expect(nonneg.weights[0]).toBeGreaterThan(0.5);
    // With the inverted learner at 0 the blend is a monotone function of the good learner: same AUC.
    const y = pick(target, train);
    expect(auc(y, applyStack(nonneg, [pAll, bad], train))).toBeCloseTo(auc(y, Float64Array.from(train, (r) => pAll[r])) ?? NaN, 12);
  });

  it('standardizes passthrough columns on the fit rows and never bounds their weights', () => {
    // An informative column whose useful direction is negative: nonnegative must leave it free.
    const down = pFew.map((v) => -3 * logitClipped(v) + 7);
    const m = fitStack(['lr'], [pAll], train, target, { nonnegative: true, l2 }, { names: ['down'], values: [down] });
    const pt = m.passthrough;
    if (!pt) throw new Error('no passthrough in the model');
    expect(pt.names).toEqual(['down']);
    let s = 0;
    let ss = 0;
    for (const r of train) s += down[r];
    const mean = s / train.length;
    for (const r of train) ss += (down[r] - mean) ** 2;
    expect(pt.means[0]).toBeCloseTo(mean, 10);
    expect(pt.sds[0]).toBeCloseTo(Math.sqrt(ss / train.length), 10);
    expect(pt.weights[0]).toBeLessThan(0);
    // Standardizing is a reparametrization: with l2 = 0 the fitted probabilities match a fit on the
    // raw column (entered as a "learner" whose logit is the column; kept inside the logit clip).
    const mild = pFew.map((v) => -0.5 * logitClipped(v) + 1);
    const asLearner = mild.map((v) => 1 / (1 + Math.exp(-v)));
    const raw = fitStack(['lr', 'mild'], [pAll, asLearner], train, target, { nonnegative: false, l2: 0 });
    const std = fitStack(['lr'], [pAll], train, target, { nonnegative: false, l2: 0 }, { names: ['mild'], values: [mild] });
    expect(raw.converged && std.converged).toBe(true);
    const a = applyStack(raw, [pAll, asLearner], train);
    const b = applyStack(std, [pAll], train, [mild]);
    for (let i = 0; i < a.length; i++) expect(b[i]).toBeCloseTo(a[i], 6);
    expect(() => applyStack(m, [pAll], train)).toThrow(/passthrough/);
  });
});

const demoConfig = (csv: string, stack: string, learners = '  lr: {kind: logistic, l2: 1}\n  cart: {kind: tree, max_depth: 3, min_leaf: 100}\n') => `name: stackpt
seed: 5
data:
  file: ${csv}
  target: missed_payment_90d
  positive: "yes"
  id: application_id
  columns: {applied_on: date, registered_on: date, owner_age_band: protected}
split: {folds: 3, inner_folds: 3, holdout: {fraction: 0.25}}
features:
  dates: {as_of: applied_on, pairs: [[registered_on, applied_on]]}
  rate-encode: {smoothing: 10}
  tree-bins: {max_depth: 3, min_leaf: 0.05}
  leaf-z: {}
  summaries: {high_z: 1.0}
learners:
${learners}stack: ${stack}
evaluate: {budget: 0.1}
`;

function column(t: CsvTable, name: string): readonly string[] {
  const j = t.header.indexOf(name);
  if (j < 0) throw new Error(`no column ${name}`);
  return t.fields[j];
}

describe('a run with stack.passthrough', () => {
  let dir: string;
  let csv: string;
  let run: RunOutcome;
  const passthrough = ['z_mean', 'z_max', 'z_n_high'];

  beforeAll(async () => {
    dir = tempDir('stack-pt');
    csv = join(dir, 'data.csv');
    await generateDemo({ rows: 3000, seed: 11, out: csv });
    run = await runYaml(dir, demoConfig(csv, `{nonnegative: true, passthrough: [${passthrough.join(', ')}]}`), { workers: 2 });
  }, 180_000);

  it('reports passthrough weights, means and sds in metrics.json and stores them in bundle.json', () => {
    const metrics = JSON.parse(readFileSync(join(run.runDir, 'metrics.json'), 'utf8'));
    expect(Object.keys(metrics.stack.passthrough)).toEqual(passthrough);
    for (const n of passthrough) {
      const e = metrics.stack.passthrough[n];
      expect(Number.isFinite(e.weight) && Number.isFinite(e.mean)).toBe(true);
      expect(e.sd).toBeGreaterThan(0);
    }
    expect(Object.keys(metrics.stack.weights)).toEqual(['lr', 'cart']);
    const bundle = readBundle(join(run.runDir, 'bundle.json'));
    expect(bundle.stack.passthrough?.names).toEqual(passthrough);
    expect(bundle.stack.passthrough?.weights).toEqual(passthrough.map((n) => metrics.stack.passthrough[n].weight));
  });

  it("scores the run's holdout rows to holdout.csv's stack column exactly (train/serve parity)", async () => {
    const data = readCsv(csv);
    const holdout = readCsv(join(run.runDir, 'holdout.csv'));
    const ids = new Set(column(holdout, 'id'));
    const appIds = column(data, 'application_id');
    let text = data.header.map(quoteField).join(',') + '\n';
    for (let r = 0; r < data.nRows; r++) if (ids.has(appIds[r])) text += data.fields.map((f) => quoteField(f[r])).join(',') + '\n';
    const input = join(dir, 'holdout-rows.csv');
    writeFileSync(input, text);
    const out = join(dir, 'scored.csv');
    await scoreFile(readBundle(join(run.runDir, 'bundle.json')), { input, out });
    const scored = readCsv(out);
    expect(column(scored, 'id')).toEqual(column(holdout, 'id'));
    expect(column(scored, 'score')).toEqual(column(holdout, 'stack'));
  });

  it('refits only the stack when the passthrough list changes', async () => {
    const again = await runYaml(dir, demoConfig(csv, '{nonnegative: true}'), { workers: 2 });
    const stackStep = again.manifest.steps.find((s) => s.step === 'stack');
    expect(stackStep?.hit).toBe(false);
    expect(again.manifest.steps.filter((s) => s.step.startsWith('learner:')).every((s) => s.hit)).toBe(true);
    expect(again.metrics.stack.passthrough).toEqual({});
    expect(stackStep?.key).not.toBe(run.manifest.steps.find((s) => s.step === 'stack')?.key);
  }, 120_000);

  it.each([
    ['z_bogus', 'an unknown name'],
    ['sector', 'a categorical input that reaches no learner as such'],
  ])('rejects %s (%s) as a config error naming the available columns', async (name) => {
    const err = await runYaml(dir, demoConfig(csv, `{passthrough: [${name}]}`), { workers: 1 }).then(
      () => undefined,
      (e: unknown) => e,
    );
    expect(err).toBeInstanceOf(StepFailure);
    const f = err as StepFailure;
    expect(f.exitCode).toBe(EXIT.config);
    expect(f.message).toContain(`"${name}" is not a numeric learner feature`);
    for (const n of ['z_mean', 'z_n_low']) expect(f.message).toContain(n);
  }, 120_000);
});
