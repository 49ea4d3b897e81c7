/**
 * Drift reports of `foldstack score`: PSI against the bundle's training distributions, the same
 * value `psiDeciles` gives on the raw samples, small for the training file itself, large for a
 * shifted column, and `--fail-on-drift` exiting with EXIT.drift through the built CLI.
 */
import { beforeAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { generateDemo } from '../data-demo/generate.js';
import { runYaml, tempDir } from './helpers/run-fixture.js';
import { readCsv } from './helpers/read-csv.js';
import { quoteField } from '../pipeline/io/csv-writer.js';
import { readBundle } from '../pipeline/bundle/load.js';
import { scoreFile } from '../pipeline/bundle/score-file.js';
import { DriftAccumulator, numericDistribution, categoricalDistribution } from '../pipeline/bundle/drift.js';
import { psiDeciles, PSI_MAJOR, PSI_MODERATE } from '../pipeline/metrics/psi.js';
import { categorical } from '../pipeline/frame.js';
import { createRng } from '../pipeline/rng.js';
import { EXIT } from '../pipeline/errors.js';
import type { Bundle } from '../pipeline/bundle/types.js';

const config = (csv: string) => `name: d
seed: 9
data:
  file: ${csv}
  target: missed_payment_90d
  positive: "yes"
  id: application_id
  columns: {applied_on: date, registered_on: date, owner_age_band: protected}
split: {folds: 3, inner_folds: 3, holdout: {fraction: 0.25}}
features:
  rate-encode: {smoothing: 10}
  tree-bins: {max_depth: 3, min_leaf: 0.05}
  leaf-z: {}
learners:
  lr: {kind: logistic, l2: 1}
stack: {nonnegative: true}
evaluate: {budget: 0.1}
`;

describe('drift accumulator', () => {
  it('gives the PSI psiDeciles gives on the raw samples, missing values and chunking included', () => {
    const rng = createRng(1, 'drift-test');
    const expected = new Float64Array(5000);
    const actual = new Float64Array(3000);
    for (let i = 0; i < expected.length; i++) expected[i] = rng.next() < 0.05 ? NaN : Math.floor(rng.next() * 40);
    for (let i = 0; i < actual.length; i++) actual[i] = rng.next() < 0.1 ? NaN : Math.floor(rng.next() * 50);
    const levels = ['a', 'b', 'c'];
    const codes = new Int32Array(10).map((_, i) => (i % 4 === 3 ? -1 : i % 3));
    const dist = { score: numericDistribution('score', expected), features: [numericDistribution('x', expected)], categories: [categoricalDistribution('c', categorical('c', codes, levels))] };
    const acc = new DriftAccumulator(dist);
    const unseen = categorical('c', Int32Array.of(0, 1, 0), ['z', 'a']);
    acc.add(1000, actual.subarray(0, 1000), () => actual.subarray(0, 1000), () => unseen);
    acc.add(2000, actual.subarray(1000), () => actual.subarray(1000), () => categorical('c', new Int32Array(0), []));
    const report = acc.report();
    const reference = psiDeciles(expected, actual).psi;
    expect(report.score.psi).toBeCloseTo(reference, 12);
    expect(report.features[0].psi).toBeCloseTo(reference, 12);
    expect(report.rows).toBe(3000);
    expect(acc.unseen()).toEqual([{ name: 'c', rows: 2 }]);
  });
});

describe('drift of scored files', () => {
  let dir: string;
  let csv: string;
  let runDir: string;
  let bundle: Bundle;
  let shifted: string;

  beforeAll(async () => {
    dir = tempDir('drift');
    csv = join(dir, 'data.csv');
    await generateDemo({ rows: 3000, seed: 21, out: csv });
    runDir = (await runYaml(dir, config(csv), { workers: 2 })).runDir;
    bundle = readBundle(join(runDir, 'bundle.json'));
    const t = readCsv(csv);
    const j = t.header.indexOf('requested_amount');
    shifted = join(dir, 'shifted.csv');
    let text = t.header.map(quoteField).join(',') + '\n';
    for (let r = 0; r < t.nRows; r++) {
      text += t.header.map((_, k) => quoteField(k === j && t.fields[k][r] !== '' ? String(Number(t.fields[k][r]) * 3) : t.fields[k][r])).join(',') + '\n';
    }
    writeFileSync(shifted, text);
  }, 120_000);

  it('finds no drift when the training file itself is scored', async () => {
    const res = await scoreFile(bundle, { input: csv, out: join(dir, 'self.csv') });
    const all = [res.drift.score, ...res.drift.features, ...res.drift.categories];
    expect(all.length).toBeGreaterThan(10);
    // Thresholds 0.1 / 0.25: common practice, no source.
    for (const e of all) expect(e.psi, e.name).toBeLessThan(PSI_MODERATE);
    expect(res.drift.major).toEqual([]);
    expect(JSON.parse(readFileSync(join(dir, 'self.csv.drift.json'), 'utf8')).score.psi).toBe(res.drift.score.psi);
  });

  it('flags a tripled requested_amount, and --fail-on-drift exits with EXIT.drift after writing both files', () => {
    // Other files of the tree may not type-check mid-work; tsc still emits, and the CLI is what is tested.
    spawnSync('npx', ['tsc', '-p', 'tsconfig.json'], { cwd: process.cwd(), stdio: 'ignore' });
    const cli = join(process.cwd(), 'dist', 'pipeline', 'cli.js');
    expect(existsSync(cli)).toBe(true);
    const out = join(dir, 'shifted-out.csv');
    const drift = join(dir, 'shifted-drift.json');
    const args = [cli, 'score', runDir, '--input', shifted, '--out', out, '--drift', drift];
    const relaxed = spawnSync('node', args, { encoding: 'utf8' });
    expect(relaxed.status, relaxed.stderr).toBe(EXIT.ok);
    const failing = spawnSync('node', [...args, '--fail-on-drift'], { encoding: 'utf8' });
    expect(failing.status, failing.stderr).toBe(EXIT.drift);
    expect(failing.stderr).toMatch(/warning: drift in requested_amount: PSI/);
    expect(existsSync(out)).toBe(true);
    expect(readCsv(out).nRows).toBe(3000);
    const report = JSON.parse(readFileSync(drift, 'utf8')) as { features: { name: string; psi: number }[]; major: string[] };
    const amount = report.features.find((f) => f.name === 'requested_amount');
    expect(amount?.psi).toBeGreaterThan(PSI_MAJOR);
    expect(report.major).toContain('requested_amount');
    // Columns not derived from requested_amount stay put.
    for (const f of report.features) if (!f.name.startsWith('requested_amount')) expect(f.psi, f.name).toBeLessThan(PSI_MODERATE);
  }, 300_000);
});
