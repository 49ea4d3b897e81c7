/**
 * Exclusions and class balancing inside a real run: excluded rows never reach fitting or metrics,
 * and balanced learners' predictions are prior-corrected back to the population's base rate.
 */
import { describe, expect, it, beforeAll } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { generateDemo } from '../data-demo/generate.js';
import { runYaml, tempDir } from './helpers/run-fixture.js';

describe('exclude and balance in a run', () => {
  let dir: string;
  let csv: string;
  let phoneRows = 0;
  let phoneEvents = 0;
  beforeAll(async () => {
    dir = tempDir('excl');
    csv = join(dir, 'data.csv');
    await generateDemo({ rows: 4000, seed: 21, out: csv });
    const lines = readFileSync(csv, 'utf8').trim().split('\n');
    const header = lines[0].split(',');
    const ch = header.indexOf('channel');
    const y = header.indexOf('missed_payment_90d');
    for (const line of lines.slice(1)) {
      const cells = line.split(',');
      if (cells[ch] === 'phone') {
        phoneRows++;
        if (cells[y] === 'yes') phoneEvents++;
      }
    }
  });

  const yaml = (csvPath: string, extra: string) => `name: ex
seed: 4
data: {file: ${csvPath}, target: missed_payment_90d, positive: "yes", id: application_id, columns: {owner_age_band: protected}}
split: {folds: 3, holdout: {fraction: 0.25}}
features: {rate-encode: {}}
learners: {lr: {kind: logistic}}
${extra}
`;

  it('excluded rows are counted in the manifest and absent from every output', async () => {
    expect(phoneRows).toBeGreaterThan(50);
    const out = await runYaml(dir, yaml(csv, 'exclude:\n  - {reason: discontinued channel, column: channel, in: [phone]}'), { workers: 2 });
    expect(out.manifest.exclusions).toEqual([{ reason: 'discontinued channel', column: 'channel', condition: expect.any(String), rows: phoneRows, events: phoneEvents, event_rate: phoneEvents / phoneRows }]);
    expect(out.manifest.data.rows).toBe(4000 - phoneRows);
    const oof = readFileSync(join(out.runDir, 'oof.csv'), 'utf8').trim().split('\n').length - 1;
    const hold = readFileSync(join(out.runDir, 'holdout.csv'), 'utf8').trim().split('\n').length - 1;
    expect(oof + hold).toBe(4000 - phoneRows);
    expect(out.metrics.oof.stack.n + out.metrics.holdout.stack.n).toBe(4000 - phoneRows);
  });

  it('balanced fits are prior-corrected: mean prediction stays near the base rate', async () => {
    const plain = await runYaml(dir, yaml(csv, ''), { workers: 2, cacheDir: join(dir, 'cb') });
    const bal = await runYaml(dir, yaml(csv, 'balance: {ratio: 0.5}'), { workers: 2, cacheDir: join(dir, 'cb') });
    const meanOf = (runDir: string) => {
      const rows = readFileSync(join(runDir, 'oof.csv'), 'utf8').trim().split('\n').slice(1).map((l) => l.split(','));
      return rows.reduce((s, r) => s + Number(r[3]), 0) / rows.length;
    };
    const base = plain.metrics.oof.lr.events / plain.metrics.oof.lr.n;
    // Without the King & Zeng (2001) correction a 50/50 fit would predict ≈ 0.5 on average; with it
    // the mean returns to the base rate up to the model's calibration error (tolerance: common practice, no source).
    expect(Math.abs(meanOf(bal.runDir) - base)).toBeLessThan(0.02);
    expect(Math.abs(meanOf(plain.runDir) - base)).toBeLessThan(0.01);
    // Balancing changes the learner (new cache keys) but not the stages before it.
    const misses = bal.manifest.steps.filter((s) => !s.hit).map((s) => s.step.replace(/@.*/, ''));
    expect(new Set(misses)).toEqual(new Set(['learner:lr', 'stack', 'evaluate']));
  });

  it('a bad exclusion rule is a config error naming its line', async () => {
    await expect(runYaml(dir, yaml(csv, 'exclude:\n  - {reason: x, column: channel, in: [phone], missing: true}'), { workers: 1 })).rejects.toThrow(/config\.yaml:\d+:\d+: exclude\[0\]/);
  });
});
