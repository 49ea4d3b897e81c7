/**
 * The plan: which stages run, in which order, and the fit contexts they run in. Users list stages
 * as a map; the order is fixed here so that a config cannot wire stages in a leaking order.
 */
import type { ResolvedConfig } from './config/types.js';
import type { Frame } from './frame.js';
import type { ContextSpec, LearnerPlanItem, StagePlanItem } from './context-run.js';
import type { Json } from '../stages/types.js';
import { createRng } from './rng.js';
import { foldRows, stratifiedFolds, stratifiedHoldout, timeHoldout } from './folds.js';
import { PlanError } from './errors.js';

/**
 * Stage kinds in the order they run. `transforms` comes first so that it reshapes only the file's
 * own numeric columns, not derived ones such as date parts. `impute` always runs last (it builds
 * the learners' matrix).
 */
export const STAGE_ORDER: readonly string[] = ['transforms', 'dates', 'rate-encode', 'tree-bins', 'leaf-z', 'summaries', 'forest-leaves', 'select', 'impute'];

export interface Split {
  /** 1 for holdout rows. */
  readonly isHoldout: Uint8Array;
  /** Ascending indices of the non-holdout ("development") rows. */
  readonly dev: Uint32Array;
  /** Ascending indices of the holdout rows. */
  readonly holdout: Uint32Array;
  /** Outer fold per position of `dev`. */
  readonly devFold: Uint8Array;
  readonly folds: number;
}

export interface Plan {
  readonly split: Split;
  readonly contexts: ContextSpec[];
  readonly stages: StagePlanItem[];
  readonly learners: LearnerPlanItem[];
}

export function makeSplit(config: ResolvedConfig, frame: Frame): Split {
  const n = frame.nRows;
  let isHoldout: Uint8Array;
  const h = config.split.holdout;
  if (h.type === 'fraction') {
    isHoldout = stratifiedHoldout(n, frame.target, h.fraction, createRng(config.seed, 'holdout'));
  } else {
    const col = frame.columns.get(h.column);
    if (!col || col.type !== 'date') throw new PlanError(`split.holdout.column ${h.column} is not a date column of the data`, 'declare it under data.columns as date, or use split.holdout.fraction');
    isHoldout = timeHoldout(col.days, Date.parse(`${h.from}T00:00:00Z`) / 86_400_000);
  }
  const dev: number[] = [];
  const hold: number[] = [];
  for (let i = 0; i < n; i++) (isHoldout[i] ? hold : dev).push(i);
  const devRows = Uint32Array.from(dev);
  const holdRows = Uint32Array.from(hold);
  checkBothClasses('the holdout', holdRows, frame.target);
  checkBothClasses('the development rows', devRows, frame.target);
  const devFold = stratifiedFolds(devRows, frame.target, config.split.folds, createRng(config.seed, 'outer-folds'));
  return { isHoldout, dev: devRows, holdout: holdRows, devFold, folds: config.split.folds };
}

function checkBothClasses(what: string, rows: Uint32Array, target: Uint8Array): void {
  let events = 0;
  for (let i = 0; i < rows.length; i++) events += target[rows[i]];
  if (events === 0 || events === rows.length) {
    throw new PlanError(`${what} (${rows.length} rows) hold${rows.length === 1 ? 's' : ''} only one class (${events} events)`, 'change split.holdout so both parts contain events and non-events');
  }
}

export function makePlan(config: ResolvedConfig, frame: Frame): Plan {
  const split = makeSplit(config, frame);
  const contexts: ContextSpec[] = [];
  for (let k = 0; k < split.folds; k++) {
    contexts.push({ name: `fold-${k + 1}`, train: foldRows(split.dev, split.devFold, k, false), apply: foldRows(split.dev, split.devFold, k, true) });
  }
  contexts.push({ name: 'final', train: split.dev, apply: split.holdout });
  const stages: StagePlanItem[] = [];
  for (const kind of STAGE_ORDER) {
    if (kind === 'impute') stages.push({ kind, config: {} });
    else if (config.features.has(kind)) stages.push({ kind, config: (config.features.get(kind) ?? {}) as Json });
  }
  const learners: LearnerPlanItem[] = [...config.learners].map(([name, l]) => ({ name, kind: l.kind, config: l.options as Json }));
  return { split, contexts, stages, learners };
}
