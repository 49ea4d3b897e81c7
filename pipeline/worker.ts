/**
 * Pool worker: runs one fit context. Errors come back as data rather than as a thrown value,
 * because a structured clone keeps only an error's message: its class, hint and the step it
 * happened in would be lost.
 */
import { runContext, type ContextTask, type ContextOutcome } from './context-run.js';

export default function work(task: ContextTask): ContextOutcome {
  try {
    return { ok: true, result: runContext(task) };
  } catch (err) {
    const e = err instanceof Error ? err : new Error(String(err));
    const step = (e as { step?: unknown }).step;
    return { ok: false, failure: { name: e.name, message: e.message, step: typeof step === 'string' ? step : task.context.name, stack: e.stack ?? '' } };
  }
}
