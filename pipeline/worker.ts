/**
 * Pool worker: runs one fit context, or scores one set of predictions (`evaluate`). Errors come
 * back as data rather than as a thrown value, because a structured clone keeps only an error's
 * message: its class, hint and the step it happened in would be lost.
 */
import { runContext, type ContextTask, type ContextOutcome, type StepFailureInfo } from './context-run.js';
import { evaluateScores, type MetricSet } from './metrics/evaluate.js';
import { createRng } from './rng.js';

/** One learner's (or the stack's) scores on one part of the data, with what seeds its bootstrap. */
export interface EvaluateTask {
  readonly y: Uint8Array;
  readonly p: Float64Array;
  readonly budget: number;
  readonly budgets: readonly number[] | undefined;
  readonly seed: number;
  /** `oof` or `holdout`. */
  readonly part: string;
  readonly name: string;
  readonly replicates: number;
}

export type EvaluateOutcome = { readonly ok: true; readonly metrics: MetricSet } | { readonly ok: false; readonly failure: StepFailureInfo };

/** The seeded bootstrap stream of (part, name): the same on any thread, so results never depend on scheduling. */
function evaluateTask(t: EvaluateTask): MetricSet {
  return evaluateScores(t.y, t.p, { budget: t.budget, budgets: t.budgets, rng: createRng(t.seed, 'bootstrap', t.part, t.name), bootstrap: t.replicates });
}

export function evaluate(task: EvaluateTask): EvaluateOutcome {
  try {
    return { ok: true, metrics: evaluateTask(task) };
  } catch (err) {
    const e = err instanceof Error ? err : new Error(String(err));
    return { ok: false, failure: { name: e.name, message: e.message, step: `evaluate:${task.part}:${task.name}`, stack: e.stack ?? '' } };
  }
}

export default function work(task: ContextTask): ContextOutcome {
  try {
    return { ok: true, result: runContext(task) };
  } catch (err) {
    const e = err instanceof Error ? err : new Error(String(err));
    const step = (e as { step?: unknown }).step;
    return { ok: false, failure: { name: e.name, message: e.message, step: typeof step === 'string' ? step : task.context.name, stack: e.stack ?? '' } };
  }
}
