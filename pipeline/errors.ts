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
