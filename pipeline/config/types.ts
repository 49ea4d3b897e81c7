/** The typed result of loading a config: what every other part of foldstack reads. */
import type { ExclusionRule } from '../../stages/exclude.js';

export type ColumnDecl = 'numeric' | 'categorical' | 'date' | 'ignore' | 'protected';

export interface DataConfig {
  /** Absolute path of the data file. */
  file: string;
  target: string;
  /** The target label mapped to 1, as written in the file. */
  positive?: string;
  id?: string;
  /** Keyed by column name from the data; a Map because names like `__proto__` are legal. */
  columns: Map<string, ColumnDecl>;
  missing: string[];
}

export type HoldoutConfig =
  | { type: 'fraction'; fraction: number }
  /** Rows whose `column` date is on or after `from` (YYYY-MM-DD) are the holdout. */
  | { type: 'time'; column: string; from: string };

export interface SplitConfig {
  folds: number;
  innerFolds: number;
  holdout: HoldoutConfig;
}

export interface LearnerConfig {
  kind: string;
  /** The kind's options with defaults filled. */
  options: Record<string, unknown>;
}

export interface ResolvedConfig {
  /** Absolute path of the config file. */
  file: string;
  name: string;
  seed: number;
  data: DataConfig;
  split: SplitConfig;
  /** Stage kind → settings with defaults filled; only the kinds the config lists. */
  features: Map<string, Record<string, unknown>>;
  /** Learner name → kind and options, in file order. */
  learners: Map<string, LearnerConfig>;
  /** Row exclusions, validated and with dates as epoch days (see stages/exclude.ts). */
  exclude: ExclusionRule[];
  /** Downsampling inside each learner fit; null = off. */
  balance: { ratio: number } | null;
  /** `passthrough`: learner feature columns fed to the stack beside the learners' logits. */
  stack: { nonnegative: boolean; passthrough: string[] };
  /** `budgets` is ascending, distinct, and always contains `budget`. */
  evaluate: { budget: number; budgets: number[] };
  promote: PromoteConfig;
}

export interface PromoteConfig {
  metric: 'capture' | 'auc' | 'pauc';
  minGain: number;
  maxP: number;
}
