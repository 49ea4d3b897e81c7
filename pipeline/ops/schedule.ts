/**
 * A long-running process that runs one config on a cron schedule. Ticks never overlap: a tick that
 * fires while a run is in progress is skipped and logged. The config is re-read at every tick, so
 * an edited file takes effect at the next run and a broken one fails that run only.
 *
 * `stop()` (on SIGTERM) stops the timer and aborts a run in progress: the runner removes its
 * partial folder and the lock is released; cache writes are atomic, so nothing half-written stays.
 */
import { Cron } from 'croner';
import { loadConfig } from '../config/load.js';
import { ConfigError } from '../config/errors.js';
import { EXIT, FoldstackError, UsageError } from '../errors.js';
import { promoteIfBetter } from '../run-ledger/auto-promote.js';
import { runUnderLock } from './locked-run.js';

export interface ScheduleOptions {
  readonly cron: string;
  readonly configFile: string;
  readonly runsDir: string;
  readonly cacheDir: string;
  readonly workers: number;
  /** Scheduler events, one object each (the command writes them as JSON lines). */
  readonly log: (event: ScheduleEvent) => void;
  /** After each successful run, apply the config's promote rule (as `foldstack run --promote-if-better`). */
  readonly promoteIfBetter: boolean;
}

export type ScheduleEvent =
  | { readonly event: 'scheduled'; readonly next: string | null }
  | { readonly event: 'run-start'; readonly at: string }
  | { readonly event: 'run-done'; readonly runDir: string; readonly seconds: number; readonly next: string | null }
  | { readonly event: 'run-failed'; readonly error: string; readonly hint: string; readonly exitCode: number; readonly next: string | null }
  | { readonly event: 'promotion'; readonly runDir: string; readonly promoted: boolean; readonly reason: string }
  | { readonly event: 'tick-skipped'; readonly reason: string }
  | { readonly event: 'warning'; readonly message: string }
  | { readonly event: 'stopped'; readonly signal: string; readonly abandonedRun: boolean };

export class Scheduler {
  private readonly job: Cron;
  private current: { promise: Promise<void>; abort: AbortController } | undefined;

  constructor(private readonly opts: ScheduleOptions) {
    try {
      this.job = new Cron(opts.cron, { paused: true, mode: '5-or-6-parts' }, () => this.tick());
    } catch (err) {
      throw new UsageError(`--cron "${opts.cron}" is not a cron pattern: ${(err as Error).message}`, 'five fields: minute hour day-of-month month day-of-week, e.g. "0 2 * * *" for 02:00 every day');
    }
  }

  start(): void {
    this.job.resume();
    this.opts.log({ event: 'scheduled', next: this.next() });
  }

  /** Whether a run is in progress right now. */
  get busy(): boolean {
    return this.current !== undefined;
  }

  async stop(signal: string): Promise<void> {
    this.job.stop();
    const running = this.current;
    if (running) {
      running.abort.abort(signal);
      await running.promise;
    }
    this.opts.log({ event: 'stopped', signal, abandonedRun: running !== undefined });
  }

  private next(): string | null {
    return this.job.nextRun()?.toISOString() ?? null;
  }

  private tick(): void {
    if (this.current) {
      this.opts.log({ event: 'tick-skipped', reason: 'the previous run is still in progress' });
      return;
    }
    const abort = new AbortController();
    const promise = this.runOnce(abort.signal).finally(() => {
      this.current = undefined;
    });
    this.current = { promise, abort };
  }

  private async runOnce(signal: AbortSignal): Promise<void> {
    const o = this.opts;
    o.log({ event: 'run-start', at: new Date().toISOString() });
    try {
      const config = await loadConfig(o.configFile);
      const promote = async (outcome: { runDir: string }) => {
        const d = await promoteIfBetter(outcome.runDir, o.runsDir, config.promote);
        o.log({ event: 'promotion', runDir: outcome.runDir, promoted: d.promote, reason: d.reason });
      };
      const outcome = await runUnderLock(config, { workers: o.workers, runsDir: o.runsDir, cacheDir: o.cacheDir, signal }, (message) => o.log({ event: 'warning', message }), o.promoteIfBetter ? promote : undefined);
      o.log({ event: 'run-done', runDir: outcome.runDir, seconds: outcome.manifest.seconds, next: this.next() });
    } catch (err) {
      const e = err instanceof Error ? err : new Error(String(err));
      const hint = err instanceof FoldstackError || err instanceof ConfigError ? err.hint : '';
      const exitCode = err instanceof FoldstackError ? err.exitCode : err instanceof ConfigError ? EXIT.config : EXIT.runFailure;
      o.log({ event: 'run-failed', error: e.message.split('\n', 1)[0], hint, exitCode, next: this.next() });
    }
  }
}
