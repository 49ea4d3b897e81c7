/**
 * Proper scoring rules on probabilities: log loss (natural log, mean over rows) and the Brier
 * score. Log loss clips p to [eps, 1 - eps] as scikit-learn 1.2 does; its 1.2 default
 * eps = "auto" is the float64 machine epsilon 2^-52 (the documented change from 1e-15 in 1.2),
 * so a confident miss costs 52 ln 2 rather than infinity.
 */
import { checkScores } from './input.js';

export const LOG_LOSS_EPS = Number.EPSILON;

/** null when there are no rows. */
export function logLoss(y: Uint8Array, p: Float64Array, eps: number = LOG_LOSS_EPS): number | null {
  checkScores('logLoss', y, p);
  const n = y.length;
  if (n === 0) return null;
  let sum = 0;
  for (let i = 0; i < n; i++) {
    const q = Math.min(Math.max(p[i], eps), 1 - eps);
    sum -= y[i] === 1 ? Math.log(q) : Math.log(1 - q);
  }
  return sum / n;
}

/** Mean squared difference between p and the 0/1 outcome; null when there are no rows. */
export function brier(y: Uint8Array, p: Float64Array): number | null {
  checkScores('brier', y, p);
  const n = y.length;
  if (n === 0) return null;
  let sum = 0;
  for (let i = 0; i < n; i++) {
    const d = p[i] - y[i];
    sum += d * d;
  }
  return sum / n;
}
