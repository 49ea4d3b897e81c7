/**
 * The leakage canary. The target is pure noise, and each row carries a key that is unique to it
 * (a categorical one and a numeric one). Any stage that lets a row's own target reach its feature
 * (e.g. target-encoding a unique key without cross-fitting) would score far above chance.
 * An honest pipeline must stay at AUC 0.5 ± 0.05 out of fold and on the holdout
 * (the band is common practice, no source: with ~1,000 events its sampling sd is ≈ 0.013).
 */
import { describe, expect, it } from 'vitest';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { createRng } from '../pipeline/rng.js';
import { runYaml, tempDir } from './helpers/run-fixture.js';

function noiseCsv(path: string, rows: number): void {
  const rng = createRng(99, 'canary');
  const lines = ['key,serial,noise_a,group,y'];
  for (let i = 0; i < rows; i++) {
    const y = rng.next() < 0.3 ? 1 : 0;
    lines.push(`k${i},${i * 7 + 3},${rng.next().toFixed(6)},g${rng.int(5)},${y}`);
  }
  writeFileSync(path, lines.join('\n') + '\n');
}

const FEATURE_SETS: Record<string, string> = {
  'rate-encode': `  rate-encode: {smoothing: 1}`,
  // leaves of a row or two and no smoothing: if an apply row's leaf rate ever included its own target it would score far above chance
  'forest-leaves': `  rate-encode: {smoothing: 1}
  forest-leaves: {trees: 5, max_depth: 12, min_leaf: 1, smoothing: 0}`,
  select: `  rate-encode: {smoothing: 1}
  select: {keep: 2, trees: 10}`,
  // `serial` is a unique-per-row numeric key: one-row leaves without smoothing would memorise it
  'tree-bins, leaf-z, summaries, transforms': `  rate-encode: {smoothing: 1}
  transforms: {}
  tree-bins: {max_depth: 8, min_leaf: 1, smoothing: 0}
  leaf-z: {}
  summaries: {}`,
};

describe('leakage canary', () => {
  for (const [label, features] of Object.entries(FEATURE_SETS)) {
    it(`noise target + unique keys stays at chance with ${label}`, async () => {
      const dir = tempDir('canary');
      const csv = join(dir, 'noise.csv');
      noiseCsv(csv, 4000);
      const out = await runYaml(
        dir,
        `name: canary
seed: 5
data: {file: ${csv}, target: y, columns: {key: categorical}}
split: {folds: 5, holdout: {fraction: 0.25}}
features:
${features}
learners:
  lr: {kind: logistic, l2: 0.01}
stack: {nonnegative: false}
`,
        { workers: 2 },
      );
      for (const part of ['oof', 'holdout'] as const) {
        const auc = out.metrics[part].stack.auc;
        expect(auc, `${part} stack AUC`).toBeGreaterThan(0.45);
        expect(auc, `${part} stack AUC`).toBeLessThan(0.55);
      }
    });
  }

  it('noise target + unique keys stays at chance with the boosted and xgboost learners', async () => {
    const dir = tempDir('canary-trees');
    const csv = join(dir, 'noise.csv');
    noiseCsv(csv, 4000);
    const out = await runYaml(
      dir,
      `name: canary-trees
seed: 5
data: {file: ${csv}, target: y, columns: {key: categorical}}
split: {folds: 5, holdout: {fraction: 0.25}}
features:
  rate-encode: {smoothing: 1}
learners:
  gb: {kind: boosted, rounds: 60, learning_rate: 0.1}
  xg: {kind: xgboost, rounds: 30, learning_rate: 0.1}
stack: {nonnegative: false}
`,
      { workers: 2 },
    );
    for (const part of ['oof', 'holdout'] as const) {
      for (const name of ['gb', 'xg', 'stack']) {
        const auc = out.metrics[part][name].auc;
        expect(auc, `${part} ${name} AUC`).toBeGreaterThan(0.45);
        expect(auc, `${part} ${name} AUC`).toBeLessThan(0.55);
      }
    }
  }, 180_000);

  it('noise target + unique keys stays at chance with the tree and forest learners after forest-leaves and select', async () => {
    const dir = tempDir('canary-forest');
    const csv = join(dir, 'noise.csv');
    noiseCsv(csv, 4000);
    const out = await runYaml(
      dir,
      `name: canary-forest
seed: 5
data: {file: ${csv}, target: y, columns: {key: categorical}}
split: {folds: 5, holdout: {fraction: 0.25}}
features:
  rate-encode: {smoothing: 1}
  forest-leaves: {trees: 4, max_depth: 4, min_leaf: 5, smoothing: 1}
  select: {keep: 4, trees: 10}
learners:
  t: {kind: tree, max_depth: 6, min_leaf: 10}
  f: {kind: forest, trees: 40, min_leaf: 5}
stack: {nonnegative: false}
`,
      { workers: 2 },
    );
    for (const part of ['oof', 'holdout'] as const) {
      for (const name of ['t', 'f', 'stack']) {
        const auc = out.metrics[part][name].auc;
        expect(auc, `${part} ${name} AUC`).toBeGreaterThan(0.45);
        expect(auc, `${part} ${name} AUC`).toBeLessThan(0.55);
      }
    }
  }, 180_000);
});
