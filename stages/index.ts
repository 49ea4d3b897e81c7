/**
 * The registry: config key → stage module. A newcomer finds a stage's code from its config key:
 * `features.<kind>` lives in `stages/<kind>.ts`, `learners.*.kind: <kind>` in `stages/learners/<kind>.ts`.
 */
import type { Learner, Stage } from './types.js';
import { datesStage } from './dates.js';
import { rateEncode } from './rate-encode.js';
import { impute } from './impute.js';
import { treeBins } from './tree-bins.js';
import { leafZ } from './leaf-z.js';
import { summaries } from './summaries.js';
import { transforms } from './transforms.js';
import { forestLeaves } from './forest-leaves.js';
import { select } from './select.js';
import { logistic } from './learners/logistic.js';
import { tree } from './learners/tree.js';
import { forest } from './learners/forest.js';
import { boosted } from './learners/boosted.js';
import { xgboost } from './learners/xgboost.js';

type AnyStage = Stage<never, never>;
type AnyLearner = Learner<never, never>;

export const stageRegistry: ReadonlyMap<string, AnyStage> = new Map<string, AnyStage>(
  ([datesStage, transforms, rateEncode, treeBins, leafZ, summaries, forestLeaves, select, impute] as unknown as AnyStage[]).map((s) => [s.kind, s]),
);

export const learnerRegistry: ReadonlyMap<string, AnyLearner> = new Map<string, AnyLearner>(
  ([logistic, tree, forest, boosted, xgboost] as unknown as AnyLearner[]).map((l) => [l.kind, l]),
);
