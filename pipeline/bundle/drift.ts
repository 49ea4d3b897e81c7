/**
 * Drift of scored data against the training distributions kept in the bundle: PSI
 * (pipeline/metrics/psi.ts) of the score, of every learner-input feature over the bundle's decile
 * bins, and of every categorical input over its training levels (levels unseen in training
 * share one extra bin). Counts accumulate chunk by chunk, so the scored file is never held whole.
 */
import type { CategoricalColumn } from '../frame.js';
import { decileBins, psi, PSI_MAJOR, PSI_MODERATE } from '../metrics/psi.js';
import { countBelow } from '../metrics/quantile.js';
import type { BundleDrift, CategoricalDistribution, NumericDistribution } from './types.js';

/** Decile bins of `values` (NaN = missing) as kept in the bundle; shares are over all rows. */
export function numericDistribution(name: string, values: Float64Array): NumericDistribution {
  let present = 0;
  for (let i = 0; i < values.length; i++) if (values[i] === values[i]) present++;
  const rows = values.length;
  // No value to bin: one empty bin, so a scored sample that has values shows up as drift.
  if (present === 0) return { name, edges: [], shares: [0], missing_share: rows === 0 ? 0 : 1, rows };
  const bins = decileBins(values, new Float64Array(0));
  return { name, edges: Array.from(bins.edges), shares: Array.from(bins.countExpected, (c) => c / rows), missing_share: bins.missingExpected / rows, rows };
}

/** Level shares (over all rows) of the levels present; missing rows share `missing_share`. */
export function categoricalDistribution(name: string, column: CategoricalColumn): CategoricalDistribution {
  const counts = new Float64Array(column.levels.length);
  let missing = 0;
  const codes = column.codes;
  for (let i = 0; i < codes.length; i++) {
    if (codes[i] < 0) missing++;
    else counts[codes[i]]++;
  }
  const rows = codes.length;
  const levels: { level: string; share: number }[] = [];
  column.levels.forEach((level, k) => {
    if (counts[k] > 0) levels.push({ level, share: counts[k] / rows });
  });
  return { name, levels, missing_share: rows === 0 ? 0 : missing / rows, rows };
}

export type DriftStatus = 'stable' | 'moderate' | 'major';

export interface DriftEntry {
  readonly name: string;
  readonly psi: number;
  readonly status: DriftStatus;
}

export interface DriftReport {
  readonly format: 1;
  readonly rows: number;
  /** Common practice, no source: below 0.1 stable, 0.1–0.25 moderate, 0.25 or more major. */
  readonly thresholds: { readonly moderate: number; readonly major: number };
  readonly score: DriftEntry;
  readonly features: DriftEntry[];
  readonly categories: (DriftEntry & { readonly unseen_rows: number })[];
  /** Names of every entry at or above the major threshold. */
  readonly major: string[];
}

class NumericCounter {
  readonly counts: Float64Array;
  missing = 0;
  private readonly edges: Float64Array;

  constructor(readonly dist: NumericDistribution) {
    this.edges = Float64Array.from(dist.edges);
    this.counts = new Float64Array(dist.shares.length);
  }

  add(values: Float64Array): void {
    const edges = this.edges;
    for (let i = 0; i < values.length; i++) {
      const x = values[i];
      if (x !== x) this.missing++;
      else this.counts[countBelow(edges, x)]++;
    }
  }

  psi(): number {
    // The same bins as psiDeciles: a missing bin only when either sample has missing values.
    const withMissing = this.dist.missing_share > 0 || this.missing > 0;
    const e = withMissing ? [...this.dist.shares, this.dist.missing_share] : this.dist.shares;
    const a = withMissing ? [...this.counts, this.missing] : this.counts;
    return psi(e, a).psi;
  }
}

class CategoricalCounter {
  private readonly index: Map<string, number>;
  /** Training levels, then one bin for unseen levels, then missing. */
  readonly counts: Float64Array;

  constructor(readonly dist: CategoricalDistribution) {
    this.index = new Map(dist.levels.map((l, k) => [l.level, k]));
    this.counts = new Float64Array(dist.levels.length + 2);
  }

  get unseen(): number {
    return this.counts[this.dist.levels.length];
  }

  add(column: CategoricalColumn): void {
    const k = this.dist.levels.length;
    const binOf = column.levels.map((level) => this.index.get(level) ?? k);
    const codes = column.codes;
    for (let i = 0; i < codes.length; i++) this.counts[codes[i] < 0 ? k + 1 : binOf[codes[i]]]++;
  }

  psi(): number {
    const e = [...this.dist.levels.map((l) => l.share), 0, this.dist.missing_share];
    return psi(e, this.counts).psi;
  }
}

function status(x: number): DriftStatus {
  return x >= PSI_MAJOR ? 'major' : x >= PSI_MODERATE ? 'moderate' : 'stable';
}

/** Collects scored rows chunk by chunk and reports PSI against the bundle's training distributions. */
export class DriftAccumulator {
  private rows = 0;
  private readonly score: NumericCounter;
  private readonly features: NumericCounter[];
  private readonly categories: CategoricalCounter[];

  constructor(drift: BundleDrift) {
    this.score = new NumericCounter(drift.score);
    this.features = drift.features.map((d) => new NumericCounter(d));
    this.categories = drift.categories.map((d) => new CategoricalCounter(d));
  }

  /** `numericOf` / `categoricalOf` give a chunk's column by name. */
  add(nRows: number, score: Float64Array, numericOf: (name: string) => Float64Array, categoricalOf: (name: string) => CategoricalColumn): void {
    this.rows += nRows;
    this.score.add(score);
    for (const f of this.features) f.add(numericOf(f.dist.name));
    for (const c of this.categories) c.add(categoricalOf(c.dist.name));
  }

  /** Rows with a level never seen in training, per categorical input. */
  unseen(): { name: string; rows: number }[] {
    return this.categories.map((c) => ({ name: c.dist.name, rows: c.unseen }));
  }

  report(): DriftReport {
    const entry = (name: string, x: number): DriftEntry => ({ name, psi: x, status: status(x) });
    const score = entry('score', this.score.psi());
    const features = this.features.map((f) => entry(f.dist.name, f.psi()));
    const categories = this.categories.map((c) => ({ ...entry(c.dist.name, c.psi()), unseen_rows: c.unseen }));
    const major = [score, ...features, ...categories].filter((e) => e.status === 'major').map((e) => e.name);
    return { format: 1, rows: this.rows, thresholds: { moderate: PSI_MODERATE, major: PSI_MAJOR }, score, features, categories, major };
  }
}
