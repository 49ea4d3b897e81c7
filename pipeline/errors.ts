/**
 * Typed errors the CLI turns into one line plus a hint. Each carries the exit code it maps to,
 * so scripts under cron can tell a bad config from bad data from a failed run.
 */
export const EXIT = {
  ok: 0,
  runFailure: 1,
  usage: 2,
  config: 3,
  data: 4,
  drift: 5,
  locked: 6,
  /** SIGINT/SIGTERM stopped the run; its partial folder was removed (128 + SIGINT, as shells report). */
  interrupted: 130,
} as const;

/** One line per exit code, for `--help` and the README. */
export const EXIT_MEANINGS: Readonly<Record<keyof typeof EXIT, string>> = {
  ok: 'success',
  runFailure: 'the run failed (a bug or an environment problem such as an unwritable folder)',
  usage: 'bad command line',
  config: 'bad config (or a setting a stage rejected)',
  data: 'bad data (unreadable file, wrong shape, target problems)',
  drift: 'drift alarm',
  locked: 'another run of the same config name holds the lock',
  interrupted: 'stopped by SIGINT/SIGTERM; nothing was left behind',
};

export class FoldstackError extends Error {
  constructor(message: string, readonly hint: string, readonly exitCode: number) {
    super(message);
    this.name = new.target.name;
  }
}

/** The plan cannot be made from this config and data (e.g. a holdout with one class). */
export class PlanError extends FoldstackError {
  constructor(message: string, hint: string) {
    super(message, hint, EXIT.data);
  }
}

/** The run was stopped by a signal; the runner abandons its partial folder before this reaches the CLI. */
export class RunInterrupted extends FoldstackError {
  constructor(readonly signal: string) {
    super(`stopped by ${signal}; the partial run folder was removed`, 'nothing to clean up; run again when ready', EXIT.interrupted);
  }
}

export class UsageError extends FoldstackError {
  constructor(message: string, hint: string) {
    super(message, hint, EXIT.usage);
  }
}

/**
 * A stage or learner failed inside a worker. Stage errors name their problem in their class name
 * (…ConfigError for settings, …InputError / …LeakageError for data), which picks the exit code.
 */
export class StepFailure extends FoldstackError {
  readonly step: string;
  readonly originalName: string;
  readonly workerStack: string;

  constructor(info: { name: string; message: string; step: string; stack: string }) {
    const exit = /ConfigError$/.test(info.name) ? EXIT.config : /(InputError|LeakageError)$/.test(info.name) ? EXIT.data : EXIT.runFailure;
    const hint = exit === EXIT.config ? 'fix the setting in the config and run again' : exit === EXIT.data ? 'fix the data (or declare the column differently) and run again' : 're-run with --debug for the stack trace';
    super(`${info.step}: ${info.message}`, hint, exit);
    this.step = info.step;
    this.originalName = info.name;
    this.workerStack = info.stack;
  }
}
