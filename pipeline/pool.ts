/**
 * The worker-thread pool. Tasks are whole fit contexts (the stage chain and learners of one
 * context); column buffers are SharedArrayBuffer-backed, so sending a task copies no data.
 * After the contexts, the same threads score the predictions (`evaluate`).
 */
import { Piscina } from 'piscina';
import { availableParallelism } from 'node:os';
import { fileURLToPath } from 'node:url';
import type { ContextOutcome, ContextResult, ContextTask } from './context-run.js';
import type { MetricSet } from './metrics/evaluate.js';
import type { EvaluateOutcome, EvaluateTask } from './worker.js';
import { StepFailure } from './errors.js';

/** Under vitest this module is TypeScript; compiled, it is JavaScript. Pick the worker to match. */
function workerTarget(): { filename: string; execArgv: string[] } {
  const here = import.meta.url;
  if (here.endsWith('.ts')) return { filename: fileURLToPath(new URL('./worker.ts', here)), execArgv: ['--import', 'tsx'] };
  return { filename: fileURLToPath(new URL('./worker.js', here)), execArgv: [] };
}

export function defaultWorkers(): number {
  return Math.max(1, availableParallelism());
}

export class ContextPool {
  private readonly pool: Piscina;
  private failure: Error | undefined;
  private closed = false;

  constructor(workers: number) {
    const { filename, execArgv } = workerTarget();
    this.pool = new Piscina({ filename, execArgv, minThreads: workers, maxThreads: workers, idleTimeout: 60 * 60 * 1000 });
    this.pool.on('error', (err: unknown) => {
      this.failure = err instanceof Error ? err : new Error(String(err));
    });
  }

  async run(task: ContextTask): Promise<ContextResult> {
    if (this.failure) throw this.failure;
    const outcome = (await this.pool.run(task)) as ContextOutcome;
    if (!outcome.ok) throw new StepFailure(outcome.failure);
    return outcome.result;
  }

  async evaluate(task: EvaluateTask): Promise<MetricSet> {
    if (this.failure) throw this.failure;
    const outcome = (await this.pool.run(task, { name: 'evaluate' })) as EvaluateOutcome;
    if (!outcome.ok) throw new StepFailure(outcome.failure);
    return outcome.metrics;
  }

  /** Idempotent: the runner closes the pool once evaluation is done, and again on any failure path. */
  async close(): Promise<void> {
    if (this.closed) return;
    this.closed = true;
    await this.pool.destroy();
  }
}
