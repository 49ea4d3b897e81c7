/**
 * Input checks shared by every metric. Metrics take a 0/1 target and a score per row; a wrong
 * length, a label other than 0/1 or a NaN score is a caller bug, so it throws instead of
 * quietly producing a number that looks plausible.
 */

export class MetricInputError extends Error {
  constructor(
    message: string,
    readonly metric: string,
    readonly detail: Readonly<Record<string, number | string>> = {},
  ) {
    super(`${metric}: ${message}`);
    this.name = 'MetricInputError';
  }
}

/** Validates the pair and returns the number of events (rows with y = 1). */
export function checkScores(metric: string, y: Uint8Array, p: Float64Array): number {
  if (y.length !== p.length) {
    throw new MetricInputError('target and scores differ in length', metric, { targetLength: y.length, scoreLength: p.length });
  }
  let events = 0;
  for (let i = 0; i < y.length; i++) {
    const v = y[i];
    if (v > 1) throw new MetricInputError('target must be 0/1', metric, { row: i, value: v });
    events += v;
    if (Number.isNaN(p[i])) throw new MetricInputError('score is NaN', metric, { row: i });
  }
  return events;
}

/** A budget is a fraction of rows: in (0, 1]. */
export function checkFraction(metric: string, name: string, b: number): void {
  if (!(b > 0 && b <= 1)) throw new MetricInputError(`${name} must be in (0, 1]`, metric, { [name]: b });
}
