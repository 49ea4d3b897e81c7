/**
 * One pipeline run under the config name's lock: what `foldstack run` and each scheduler tick do.
 * The lock is released however the run ends (success, failure, interruption).
 */
import type { ResolvedConfig } from '../config/types.js';
import { runPipeline, type RunOptions, type RunOutcome } from '../runner.js';
import { RunLock } from './lock.js';

/** `after` runs while the lock is still held (e.g. promotion), so no other run of the name interleaves. */
export async function runUnderLock(config: ResolvedConfig, opts: RunOptions, warn: (line: string) => void, after?: (outcome: RunOutcome) => Promise<void>): Promise<RunOutcome> {
  const lock = RunLock.acquire(opts.runsDir, config.name);
  if (lock.takeOver) {
    const p = lock.takeOver.previous;
    warn(`took over the stale lock ${lock.file} (pid ${p.pid}, started ${p.started}, is gone)`);
  }
  try {
    const outcome = await runPipeline(config, opts);
    if (after) await after(outcome);
    return outcome;
  } finally {
    lock.release();
  }
}
