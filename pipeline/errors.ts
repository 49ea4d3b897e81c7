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
} as const;

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
