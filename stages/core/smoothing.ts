/**
 * Rate smoothing shared by the stages that turn an event count into a rate.
 */

/**
 * The m-estimate of an event rate: (events + m·prior) / (n + m), i.e. the observed rate shrunk
 * towards `prior` as if `m` extra rows at the prior rate had been seen (Cestnik 1990, cited from memory:
 * "Estimating probabilities: a crucial task in machine learning", ECAI). A level never seen
 * (n = 0) with m = 0 has no evidence at all, so it gets the prior rather than 0/0.
 */
export function mEstimate(events: number, n: number, prior: number, m: number): number {
  const denom = n + m;
  return denom === 0 ? prior : (events + m * prior) / denom;
}
