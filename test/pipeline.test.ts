/**
 * The runner end to end on small invented data: determinism across worker counts, cache hits,
 * selective recomputation after a config change, and recovery from a corrupt cache entry.
 */
import { describe, expect, it, beforeAll } from 'vitest';
import { readFileSync, readdirSync, statSync, truncateSync, existsSync } from 'node:fs';
import { join } from 'node:path';
import { generateDemo } from '../data-demo/generate.js';
import { runYaml, tempDir } from './helpers/run-fixture.js';

const config = (csv: string, l2 = 1) => `name: t
seed: 3
data:
  file: ${csv}
  target: missed_payment_90d
  positive: "yes"
  id: application_id
  columns: {applied_on: date, registered_on: date, owner_age_band: protected}
split: {folds: 3, inner_folds: 3, holdout: {fraction: 0.25}}
features:
  rate-encode: {smoothing: 10}
learners:
  lr: {kind: logistic, l2: ${l2}}
stack: {nonnegative: true}
`;

const OUTPUTS = ['oof.csv', 'holdout.csv', 'metrics.json'];

describe('runner', () => {
  let dir: string;
  let csv: string;
  beforeAll(async () => {
    dir = tempDir('pipeline');
    csv = join(dir, 'data.csv');
    await generateDemo({ rows: 3000, seed: 11, out: csv });
  });

  it('gives byte-identical outputs with 1 and 2 workers, and the run folder holds every file', async () => {
    const one = await runYaml(dir, config(csv), { workers: 1, cacheDir: join(dir, 'c1'), runsDir: join(dir, 'r1') });
    const two = await runYaml(dir, config(csv), { workers: 2, cacheDir: join(dir, 'c2'), runsDir: join(dir, 'r2') });
    for (const f of OUTPUTS) expect(readFileSync(join(two.runDir, f))).toEqual(readFileSync(join(one.runDir, f)));
    for (const f of ['manifest.json', 'log.jsonl', 'rate_encode.csv', ...OUTPUTS]) expect(existsSync(join(one.runDir, f)), f).toBe(true);
    const oof = readFileSync(join(one.runDir, 'oof.csv'), 'utf8').trim().split('\n');
    expect(oof[0]).toBe('id,fold,target,lr,stack');
    const hold = readFileSync(join(one.runDir, 'holdout.csv'), 'utf8').trim().split('\n');
    expect(hold[0]).toBe('id,target,lr,stack');
    expect(oof.length - 1 + hold.length - 1).toBe(3000);
    expect(hold.length - 1).toBe(750);
    for (const part of ['oof', 'holdout'] as const) {
      for (const who of ['lr', 'stack']) {
        const m = one.metrics[part][who];
        expect(m.auc).toBeGreaterThan(0.55); // sanity: the planted signal is found at all (common practice, no source)
        expect(m.n).toBe(part === 'oof' ? 2250 : 750);
      }
    }
    // No partial folder is left behind.
    expect(readdirSync(join(dir, 'r1')).filter((n) => n.startsWith('.partial'))).toEqual([]);
  });

  it('a second run is all cache hits; changing only the learner recomputes the learner, stack and evaluation', async () => {
    const cacheDir = join(dir, 'c3');
    const first = await runYaml(dir, config(csv), { workers: 2, cacheDir });
    expect(first.manifest.steps.every((s) => !s.hit)).toBe(true);
    const again = await runYaml(dir, config(csv), { workers: 2, cacheDir });
    expect(again.manifest.steps.filter((s) => !s.hit)).toEqual([]);
    for (const f of OUTPUTS) expect(readFileSync(join(again.runDir, f))).toEqual(readFileSync(join(first.runDir, f)));

    const changed = await runYaml(dir, config(csv, 5), { workers: 2, cacheDir });
    const misses = changed.manifest.steps.filter((s) => !s.hit).map((s) => s.step.replace(/@.*/, ''));
    expect(new Set(misses)).toEqual(new Set(['learner:lr', 'stack', 'evaluate']));
    expect(misses.filter((m) => m === 'learner:lr').length).toBe(4); // 3 outer folds + final
  });

  it('treats a truncated cache entry as a miss, rebuilds it, and gives the same results', async () => {
    const cacheDir = join(dir, 'c4');
    const first = await runYaml(dir, config(csv), { workers: 1, cacheDir });
    const victim = first.manifest.steps.find((s) => s.step === 'rate-encode@fold-1');
    expect(victim).toBeDefined();
    const entry = join(cacheDir, victim!.key.slice(0, 2), victim!.key);
    const data = readdirSync(entry).find((f) => f.endsWith('.f64'))!;
    truncateSync(join(entry, data), Math.floor(statSync(join(entry, data)).size / 2));
    const again = await runYaml(dir, config(csv), { workers: 1, cacheDir });
    const misses = again.manifest.steps.filter((s) => !s.hit).map((s) => s.step);
    expect(misses).toEqual(['rate-encode@fold-1']);
    for (const f of OUTPUTS) expect(readFileSync(join(again.runDir, f))).toEqual(readFileSync(join(first.runDir, f)));
  });
});
