/**
 * Run listing, comparison, the champion pointer and the promotion rule, on small runs of the
 * invented demo data. Paired figures are checked against delongTest recomputed here from the two
 * holdout.csv files (parsed independently of pipeline/runs/read.ts).
 */
import { beforeAll, describe, expect, it, vi } from 'vitest';
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { basename, join } from 'node:path';
import { generateDemo } from '../data-demo/generate.js';
import { delongTest } from '../pipeline/metrics/delong.js';
import { listRuns } from '../pipeline/run-ledger/list.js';
import { compareRuns } from '../pipeline/run-ledger/compare.js';
import { readHoldout, readRun, resolveRunRef, RunReadError } from '../pipeline/run-ledger/read.js';
import { championFile, readChampion, writeChampion } from '../pipeline/run-ledger/champion.js';
import { promoteIfBetter } from '../pipeline/run-ledger/auto-promote.js';
import { compareCommand } from '../pipeline/commands/compare.js';
import { promoteCommand } from '../pipeline/commands/promote.js';
import type { RunOutcome } from '../pipeline/runner.js';
import type { PromoteConfig } from '../pipeline/config/types.js';
import { runYaml, tempDir } from './helpers/run-fixture.js';

const config = (csv: string, l2: number) => `name: cmp
seed: 3
data:
  file: ${csv}
  target: missed_payment_90d
  positive: "yes"
  id: application_id
  columns: {applied_on: date, registered_on: date, owner_age_band: protected}
split: {folds: 3, inner_folds: 3, holdout: {fraction: 0.3}}
features:
  rate-encode: {smoothing: 10}
learners:
  lr: {kind: logistic, l2: ${l2}}
  lr2: {kind: logistic, l2: 50}
stack: {nonnegative: true}
`;

/** holdout.csv → target and stack, by plain text splitting (ids here never need quoting). */
function stackOfCsv(runDir: string): { ids: string[]; y: Uint8Array; stack: Float64Array } {
  const lines = readFileSync(join(runDir, 'holdout.csv'), 'utf8').trim().split('\n');
  const header = lines[0].split(',');
  const s = header.indexOf('stack');
  const rows = lines.slice(1).map((l) => l.split(','));
  return { ids: rows.map((r) => r[0]), y: Uint8Array.from(rows, (r) => Number(r[1])), stack: Float64Array.from(rows, (r) => Number(r[s])) };
}

/** Runs `fn` with process.stdout.write captured; returns what it wrote. */
async function captureStdout(fn: () => Promise<unknown>): Promise<string> {
  let out = '';
  const spy = vi.spyOn(process.stdout, 'write').mockImplementation((chunk: string | Uint8Array) => {
    out += String(chunk);
    return true;
  });
  const err = vi.spyOn(process.stderr, 'write').mockImplementation(() => true);
  try {
    await fn();
  } finally {
    spy.mockRestore();
    err.mockRestore();
  }
  return out;
}

describe('runs, compare, promote', () => {
  let dir: string;
  let runsDir: string;
  let a: RunOutcome;
  let b: RunOutcome;
  let c: RunOutcome;
  beforeAll(async () => {
    dir = tempDir('runs-compare');
    runsDir = join(dir, 'runs');
    const csv1 = join(dir, 'one.csv');
    const csv2 = join(dir, 'two.csv');
    await generateDemo({ rows: 3000, seed: 11, out: csv1 });
    await generateDemo({ rows: 3000, seed: 12, out: csv2 });
    a = await runYaml(dir, config(csv1, 1), { workers: 2, runsDir });
    b = await runYaml(dir, config(csv1, 0.01), { workers: 2, runsDir });
    c = await runYaml(dir, config(csv2, 1), { workers: 2, runsDir });
  }, 180_000);

  it('pairs runs that differ only in a learner setting: DeLong z/p equal delongTest on the two holdout.csv files', async () => {
    const ra = readRun(a.runDir);
    const rb = readRun(b.runDir);
    const cmp = compareRuns(ra, await readHoldout(ra), rb, await readHoldout(rb));
    expect(cmp.pairing).toEqual({ paired: true, reason: null });
    expect(cmp.tests).not.toBeNull();
    const fa = stackOfCsv(a.runDir);
    const fb = stackOfCsv(b.runDir);
    expect(fb.ids).toEqual(fa.ids);
    // The learner setting really changed the stack's scores (otherwise the test below is vacuous).
    expect(fb.stack).not.toEqual(fa.stack);
    const t = delongTest(fa.y, fb.stack, fa.stack);
    expect(cmp.tests!.delong).not.toBeNull();
    expect(cmp.tests!.delong!.z).toBe(t.z);
    expect(cmp.tests!.delong!.p).toBe(t.p);
    expect(cmp.tests!.delong!.diff).toBe(t.diff);
    // The AUCs the test used are the ones the runs reported.
    expect(cmp.tests!.delong!.auc_a).toBeCloseTo(a.metrics.holdout.stack.auc!, 12);
    expect(cmp.tests!.delong!.auc_b).toBeCloseTo(b.metrics.holdout.stack.auc!, 12);
    const cap = cmp.tests!.capture!;
    expect(cap.replicates).toBe(1000);
    expect(cap.estimate).toBeCloseTo(b.metrics.holdout.stack.capture! - a.metrics.holdout.stack.capture!, 12);
    expect(cap.low).toBeLessThanOrEqual(cap.high);
    // Deltas are B − A, per learner and for the stack, holdout and OOF.
    const row = cmp.rows.find((r) => r.part === 'oof' && r.model === 'lr' && r.metric === 'auc')!;
    expect(row.delta).toBe(b.metrics.oof.lr.auc! - a.metrics.oof.lr.auc!);
    expect(new Set(cmp.rows.map((r) => r.model))).toEqual(new Set(['lr', 'lr2', 'stack']));
    expect(cmp.rows).toHaveLength(2 * 3 * 8);
  });

  it('flags runs on different data as unpaired and shows no paired test', async () => {
    const ra = readRun(a.runDir);
    const rc = readRun(c.runDir);
    const cmp = compareRuns(ra, await readHoldout(ra), rc, await readHoldout(rc));
    expect(cmp.pairing.paired).toBe(false);
    expect(cmp.pairing.reason).toMatch(/different data/);
    expect(cmp.tests).toBeNull();
    const stackAuc = cmp.rows.find((r) => r.part === 'holdout' && r.model === 'stack' && r.metric === 'auc')!;
    expect(stackAuc.a).toBe(a.metrics.holdout.stack.auc);
    expect(stackAuc.b).toBe(c.metrics.holdout.stack.auc);
  });

  it('promote writes a valid pointer; compare with one run uses the champion; runs marks it', async () => {
    const champions = join(runsDir, 'champions');
    await captureStdout(() => promoteCommand.run({ values: { 'runs-dir': runsDir }, positionals: [basename(a.runDir)] }));
    const pointer = JSON.parse(readFileSync(championFile(runsDir, 'cmp'), 'utf8'));
    expect(pointer.run).toBe(basename(a.runDir));
    expect(pointer.name).toBe('cmp');
    expect(pointer.metrics.auc).toBe(a.metrics.holdout.stack.auc);
    expect(readChampion(runsDir, 'cmp')?.run).toBe(basename(a.runDir));
    expect(join(champions, 'cmp.json')).toBe(championFile(runsDir, 'cmp'));

    const json = await captureStdout(() => compareCommand.run({ values: { 'runs-dir': runsDir, json: true }, positionals: [b.runDir] }));
    const cmp = JSON.parse(json);
    expect(cmp.a.id).toBe(basename(a.runDir));
    expect(cmp.b.id).toBe(basename(b.runDir));
    expect(cmp.pairing.paired).toBe(true);

    const text = await captureStdout(() => compareCommand.run({ values: { 'runs-dir': runsDir }, positionals: [basename(a.runDir), basename(c.runDir)] }));
    expect(text).toMatch(/UNPAIRED/);
    expect(text).not.toMatch(/DeLong/);

    const listing = listRuns(runsDir);
    expect(listing.runs.filter((r) => r.champion).map((r) => r.id)).toEqual([basename(a.runDir)]);
  });

  it('compare with one run and no champion fails with a hint', async () => {
    const other = join(dir, 'other-runs');
    mkdirSync(other);
    await expect(compareCommand.run({ values: { 'runs-dir': other }, positionals: [a.runDir] })).rejects.toMatchObject({ hint: expect.stringMatching(/promote/) });
  });

  it('runs lists finished runs newest first, passes over .partial-* and names an unfinished folder as skipped', () => {
    mkdirSync(join(runsDir, `.partial-20990101T000000Z-cmp-${process.pid}`));
    mkdirSync(join(runsDir, '20990101T000000Z-broken'));
    writeFileSync(join(runsDir, '20990101T000000Z-broken', 'manifest.json'), '{"complete": tru');
    const listing = listRuns(runsDir);
    expect(listing.runs.map((r) => r.id)).toEqual([c.runDir, b.runDir, a.runDir].map((d) => basename(d)));
    expect(listing.runs.every((r) => !r.id.startsWith('.partial'))).toBe(true);
    expect(listing.skipped.map((s) => s.id)).toEqual(['20990101T000000Z-broken']);
    expect(listing.skipped[0].reason).toMatch(/not valid JSON/);
    expect(listing.runs[0].weights).toEqual(c.metrics.stack.weights);
    expect(() => readRun(join(runsDir, '20990101T000000Z-broken'))).toThrow(RunReadError);
    expect(() => resolveRunRef('no-such-run', runsDir)).toThrow(RunReadError);
  });
});

describe('--promote-if-better', () => {
  it('promotes the first run and not an identical re-run (gain 0 < min_gain)', async () => {
    const dir = tempDir('promote');
    const runsDir = join(dir, 'runs');
    const csv = join(dir, 'data.csv');
    await generateDemo({ rows: 2000, seed: 21, out: csv });
    const rule: PromoteConfig = { metric: 'capture', minGain: 0.005, maxP: 0.05 };
    const first = await runYaml(dir, config(csv, 1), { workers: 2, runsDir });
    const d1 = await promoteIfBetter(first.runDir, runsDir, rule);
    expect(d1.promote).toBe(true);
    expect(d1.reason).toBe('no champion yet');
    expect(readChampion(runsDir, 'cmp')?.run).toBe(basename(first.runDir));

    const again = await runYaml(dir, config(csv, 1), { workers: 2, runsDir });
    const d2 = await promoteIfBetter(again.runDir, runsDir, rule);
    expect(d2.promote).toBe(false);
    expect(d2.paired).toBe(true);
    expect(d2.gain).toBe(0);
    expect(d2.reason).toMatch(/not promoted: capture gain \+0\.0000 \(min_gain 0\.005\)/);
    expect(readChampion(runsDir, 'cmp')?.run).toBe(basename(first.runDir));
    // The decision is the last line of the run's own log.
    const log = readFileSync(join(again.runDir, 'log.jsonl'), 'utf8').trim().split('\n');
    const last = JSON.parse(log[log.length - 1]);
    expect(last.msg).toBe('not promoted');
    expect(last.promotion.champion).toBe(basename(first.runDir));

    // The auc rule on the identical re-run: zero variance of the difference, never a promotion.
    const d3 = await promoteIfBetter(again.runDir, runsDir, { metric: 'auc', minGain: 0, maxP: 1 });
    expect(d3.promote).toBe(false);
    // A manual promotion is always possible and replaces the pointer atomically (valid JSON after).
    writeChampion(runsDir, readRun(again.runDir), 'manual');
    expect(JSON.parse(readFileSync(championFile(runsDir, 'cmp'), 'utf8')).run).toBe(basename(again.runDir));
  }, 120_000);
});
