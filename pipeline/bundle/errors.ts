/** Typed failures of bundle loading and scoring, with the file they concern. */
import { EXIT, FoldstackError } from '../errors.js';

/** The bundle cannot be found, read, or run by this code (format or stage version differs). */
export class BundleError extends FoldstackError {
  constructor(
    readonly file: string,
    problem: string,
    hint: string,
    exitCode: number = EXIT.usage,
  ) {
    super(`${file}: ${problem}`, hint, exitCode);
  }
}

/** The file to score does not fit the bundle (e.g. a required column is absent). */
export class ScoreInputError extends FoldstackError {
  constructor(
    readonly file: string,
    problem: string,
    readonly columns: readonly string[],
    hint: string,
  ) {
    super(`${file}: ${problem}`, hint, EXIT.data);
  }
}
