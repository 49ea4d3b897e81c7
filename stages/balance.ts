/**
 * Class balancing by downsampling the majority (non-event) class inside one fit, and the prior
 * correction that maps the balanced model's probabilities back to the population base rate.
 *
 * Notation follows King, G. and Zeng, L. (2001), "Logistic Regression in Rare Events Data",
 * Political Analysis 9(2):137-163, section "Prior correction":
 *   τ = the event rate of the population the model must predict for (here: the fit rows before
 *       sampling), ȳ = the event rate of the sample the model was fitted on.
 *   corrected intercept = β̂0 − ln[((1−τ)/τ)·(ȳ/(1−ȳ))]
 * Only the intercept moves; slopes fitted on a sample selected on y are already consistent.
 *
 * Metrics must never be computed on balanced rows: balancing only changes which rows a fit sees.
 */
import type { Rng } from './types.js';

/** An argument the balancing or prior-correction code cannot use; `field` names it. */
export class BalanceInputError extends Error {
  constructor(
    message: string,
    readonly field: string,
    readonly value: number,
    /** Position in the offending array, when the value came from one. */
    readonly index?: number,
  ) {
    super(message);
    this.name = 'BalanceInputError';
  }
}

export interface BalancedRows {
  /** The sampled rows, ascending. */
  readonly rows: Uint32Array;
  /** King & Zeng's τ: the event share of the rows handed in (the population to correct back to). */
  readonly tau: number;
  /** King & Zeng's ȳ: the event share of the returned sample. */
  readonly ybar: number;
}

/**
 * Keeps every event row and a uniform sample without replacement of the non-event rows, sized so
 * that the sample's event share is as close to `ratio` as whole rows allow (on a tie, the larger
 * sample). When the rows already have at least that share, or have no event at all (nothing to
 * balance towards), every row is kept.
 */
export function balanceRows(rows: Uint32Array, target: Uint8Array, ratio: number, rng: Rng): BalancedRows {
  if (!(ratio > 0 && ratio < 1)) throw new BalanceInputError(`balance: ratio must lie strictly between 0 and 1, got ${ratio}`, 'ratio', ratio);
  const n = rows.length;
  let events = 0;
  for (let i = 0; i < n; i++) {
    const r = rows[i];
    if (r >= target.length) throw new BalanceInputError(`balance: row ${r} is outside the target's ${target.length} entries`, 'rows', r, i);
    events += target[r];
  }
  const tau = n > 0 ? events / n : 0;
  if (events === 0 || tau >= ratio) {
    const all = Uint32Array.from(rows).sort();
    return { rows: all, tau, ybar: tau };
  }

  const exact = (events * (1 - ratio)) / ratio;
  const lo = Math.floor(exact);
  const hi = Math.ceil(exact);
  const keepNonEvents = Math.abs(events / (events + lo) - ratio) < Math.abs(events / (events + hi) - ratio) ? lo : hi;

  const nonEvents = new Uint32Array(n - events);
  const out = new Uint32Array(events + keepNonEvents);
  let m = 0;
  let e = 0;
  for (let i = 0; i < n; i++) {
    const r = rows[i];
    if (target[r] === 1) out[e++] = r;
    else nonEvents[m++] = r;
  }
  // Partial Fisher–Yates: the first k slots become a uniform k-subset, drawing only k numbers.
  for (let i = 0; i < keepNonEvents; i++) {
    const j = i + rng.int(m - i);
    const t = nonEvents[i];
    nonEvents[i] = nonEvents[j];
    nonEvents[j] = t;
  }
  out.set(nonEvents.subarray(0, keepNonEvents), events);
  out.sort();
  return { rows: out, tau, ybar: events / out.length };
}

function checkRate(value: number, field: string): void {
  if (!(value > 0 && value < 1)) {
    throw new BalanceInputError(`balance: ${field} must be an event rate strictly between 0 and 1, got ${value}`, field, value);
  }
}

/**
 * King & Zeng's intercept shift ln[((1−τ)/τ)·(ȳ/(1−ȳ))]: subtract it from the balanced model's
 * intercept (or from each logit) to predict at the population rate τ.
 */
export function priorCorrectionOffset(tau: number, ybar: number): number {
  checkRate(tau, 'tau');
  checkRate(ybar, 'ybar');
  return Math.log(((1 - tau) / tau) * (ybar / (1 - ybar)));
}

/**
 * Prior-corrected probabilities. Computed in the odds form p' = p·r1 / (p·r1 + (1−p)·r0) with
 * r1 = τ/ȳ and r0 = (1−τ)/(1−ȳ), which equals subtracting `priorCorrectionOffset` from each logit
 * but stays exact at p = 0 and p = 1, where the logit is infinite.
 */
export function priorCorrect(p: Float64Array, tau: number, ybar: number): Float64Array {
  checkRate(tau, 'tau');
  checkRate(ybar, 'ybar');
  const r1 = tau / ybar;
  const r0 = (1 - tau) / (1 - ybar);
  const out = new Float64Array(p.length);
  for (let i = 0; i < p.length; i++) {
    const v = p[i];
    if (!(v >= 0 && v <= 1)) throw new BalanceInputError(`balance: probability at index ${i} is ${v}, expected a value in [0, 1]`, 'p', v, i);
    const a = v * r1;
    out[i] = a / (a + (1 - v) * r0);
  }
  return out;
}
