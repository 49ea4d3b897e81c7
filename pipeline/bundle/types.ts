/**
 * The scoring bundle (`bundle.json`): everything `foldstack score` needs to turn new rows into
 * scores with the very stage and learner code of the run, and nothing of the training machine
 * (no paths, no code). Bump `BUNDLE_FORMAT` whenever a field changes meaning.
 */
import type { ColumnType, Role } from '../frame.js';
import type { Json } from '../../stages/types.js';
import type { StackModel } from '../../stages/stack.js';

export const BUNDLE_FORMAT = 1;

export interface BundleColumn {
  readonly name: string;
  readonly role: Role;
  readonly type: ColumnType;
}

export interface BundleData {
  /** Target column name: read when present in a scored file, never required. */
  readonly target: string;
  readonly id: string | null;
  /** Cell texts (trimmed) that mean "missing", as in the run's config. */
  readonly missing: readonly string[];
  /** Every loaded column of the training file with its role and type, in file order. */
  readonly columns: readonly BundleColumn[];
  /** Columns some stage or learner consumes: a scored file must have them. */
  readonly required: readonly string[];
}

export interface BundleStage {
  readonly kind: string;
  readonly version: number;
  readonly config: Json;
  /** The columns the stage consumed in the final context, in order. */
  readonly inputs: readonly string[];
  readonly state: Json;
}

export interface BundleLearner {
  readonly name: string;
  readonly kind: string;
  readonly version: number;
  readonly handlesMissing: boolean;
  readonly config: Json;
  /** The feature columns the model reads, in its order. */
  readonly features: readonly string[];
  readonly model: Json;
  /** Class balancing: the model's probabilities are prior-corrected with these (stages/balance.ts). */
  readonly prior_correction: { readonly tau: number; readonly ybar: number } | null;
}

/** Training distribution of one numeric value: bins (-inf, e1], (e1, e2], …, (e_k, inf) plus missing. */
export interface NumericDistribution {
  readonly name: string;
  readonly edges: readonly number[];
  /** Share of non-missing training rows per bin (edges.length + 1 entries). */
  readonly shares: readonly number[];
  /** Share of training rows with a missing value (they are not in `shares`). */
  readonly missing_share: number;
  readonly rows: number;
}

export interface CategoricalDistribution {
  readonly name: string;
  readonly levels: readonly { readonly level: string; readonly share: number }[];
  readonly missing_share: number;
  readonly rows: number;
}

/** Distributions over the development rows, or an evenly spaced 50,000 of them when there are more (`rows` says how many). */
export interface BundleDrift {
  /** The stack score of the development rows as the bundle scores them. */
  readonly score: NumericDistribution;
  /** Every learner-input feature, development rows, as the bundle computes it. */
  readonly features: readonly NumericDistribution[];
  /** Categorical raw inputs: level shares over the development rows. */
  readonly categories: readonly CategoricalDistribution[];
}

export interface Bundle {
  readonly format: typeof BUNDLE_FORMAT;
  readonly code_version: string;
  readonly name: string;
  readonly config_digest: string;
  readonly data: BundleData;
  readonly stages: readonly BundleStage[];
  readonly learners: readonly BundleLearner[];
  readonly stack: StackModel;
  /** Event rate of the development (non-holdout) rows. */
  readonly base_rate: number;
  /** No prior correction is applied to the stack score itself (learners carry their own). */
  readonly prior_correction: null;
  /** Rows scoring at or above `cut` are flagged: the holdout stack's cut at the review budget. */
  readonly decision: { readonly budget: number; readonly cut: number };
  readonly drift: BundleDrift;
}
