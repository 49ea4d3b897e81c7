/**
 * The inner leakage canary. The outer canary (leakage.test.ts) proves that out-of-fold and holdout
 * rows never see their own target; this one proves the same for the rows a learner trains on:
 * every supervised stage's values for a context's train rows must come from inner folds. With a
 * noise target and keys unique to each row, any train-row value that saw its own target would
 * separate the classes; cross-fitted values cannot (AUC 0.5 ± 0.05; band: common practice, no
 * source — with ~900 events its sampling sd is ≈ 0.01).
 */
import { describe, expect, it } from 'vitest';
import { categorical, numeric, type Column } from '../pipeline/frame.js';
import { createRng } from '../pipeline/rng.js';
import { fitStageInContext, type ContextTask } from '../pipeline/context-run.js';
import { auc } from '../pipeline/metrics/auc.js';
import { stageRegistry } from '../stages/index.js';
import type { Json, Stage } from '../stages/types.js';

const N = 4000;

function noise(): { columns: Map<string, Column>; target: Uint8Array } {
  const rng = createRng(17, 'inner-canary');
  const target = new Uint8Array(N);
  const serial = new Float64Array(N);
  const codes = new Int32Array(N);
  for (let i = 0; i < N; i++) {
    target[i] = rng.next() < 0.3 ? 1 : 0;
    serial[i] = i * 7 + 3;
    codes[i] = i;
  }
  const levels = Array.from({ length: N }, (_, i) => `k${i}`);
  return { columns: new Map<string, Column>([['serial', numeric('serial', serial)], ['key', categorical('key', codes, levels)]]), target };
}

// Settings that would overfit a row's own target as hard as possible if it ever reached the row.
const STAGES: [string, Json][] = [
  ['rate-encode', { smoothing: 0 }],
  ['tree-bins', { max_depth: 8, min_leaf: 1, smoothing: 0, monotone: 'none' }],
  ['transforms', { candidates: ['rank_logit'] }],
  ['forest-leaves', { trees: 3, max_depth: 10, min_leaf: 1, smoothing: 0 }],
];

describe('inner cross-fitting', () => {
  const { columns, target } = noise();
  const train = Uint32Array.from({ length: 3000 }, (_, i) => i);
  const apply = Uint32Array.from({ length: N - 3000 }, (_, i) => 3000 + i);
  const task: ContextTask = {
    context: { name: 'fold-1', train, apply },
    columns,
    inputColumns: ['serial', 'key'],
    target,
    stages: [],
    learners: [],
    innerFolds: 5,
    balance: null,
    seed: 3,
    dataKey: 'test',
    cacheDir: '/nonexistent',
    keepStates: false,
  };
  const yTrain = target.subarray(0, 3000);

  for (const [kind, raw] of STAGES) {
    it(`${kind}: train-row values of a noise target stay at chance`, () => {
      const stage = stageRegistry.get(kind) as Stage<unknown, Json>;
      expect(stage.supervised).toBe(true);
      const config = stage.resolveConfig(raw);
      const inputs = stage.selectInputs(config, [...columns.values()]);
      expect(inputs.length).toBeGreaterThan(0);
      const out = fitStageInContext(stage, config, inputs, columns, task);
      expect(out.columns.length).toBeGreaterThan(0);
      for (const c of out.columns) {
        if (c.type !== 'numeric') continue;
        const a = auc(yTrain, c.values.subarray(0, 3000));
        expect(a, `${kind} ${c.name}`).toBeGreaterThan(0.45);
        expect(a, `${kind} ${c.name}`).toBeLessThan(0.55);
      }
    });
  }

  it('the check can fail: the same stage fitted and applied on the same rows separates the noise', () => {
    const stage = stageRegistry.get('rate-encode') as Stage<unknown, Json>;
    const config = stage.resolveConfig({ smoothing: 0 });
    const state = stage.fit({ view: { columns, rows: train }, target, inputs: ['key'], config, rng: createRng(1) });
    const [col] = stage.apply(state, { columns, rows: train }, ['key']);
    expect(col.type).toBe('numeric');
    expect(auc(yTrain, (col as { values: Float64Array }).values)).toBeGreaterThan(0.99);
  });
});
