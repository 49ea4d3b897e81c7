/**
 * The stage contract (see DESIGN.md "Stage contract"). A stage knows how to fit and apply;
 * it never knows about folds, caches or workers: the runner decides which rows it sees.
 */
import type { Column, FrameView } from '../pipeline/frame.js';

/** A deterministic pseudo-random source handed to a stage; never an unseeded global generator. */
export interface Rng {
  /** Uniform in [0, 1). */
  next(): number;
  /** Uniform integer in [0, n). */
  int(n: number): number;
}

export interface FitInput<Cfg> {
  /** The fit rows (a context's train rows, or an inner fold's train rows). */
  readonly view: FrameView;
  /** 0/1 target over the same index space as `view.columns` (read only at `view.rows`). */
  readonly target: Uint8Array;
  /** Names of the columns this stage should consume (already resolved by the runner). */
  readonly inputs: readonly string[];
  readonly config: Cfg;
  readonly rng: Rng;
}

/** JSON-serializable value: what states and configs are made of. */
export type Json = null | boolean | number | string | Json[] | { [key: string]: Json };

export interface Stage<Cfg, State> {
  /** The config key under `features:`. */
  readonly kind: string;
  /** Bump when outputs change for the same inputs; part of the cache key. */
  readonly version: number;
  /** Reads the target: the runner cross-fits it. */
  readonly supervised: boolean;
  /** Fill defaults and validate the config slice (throw Error with a clear message on bad values). */
  resolveConfig(raw: unknown): Cfg;
  /** Which of the available columns this stage consumes. */
  selectInputs(config: Cfg, available: readonly Column[]): string[];
  /** True when the consumed columns are removed from the feature set after this stage. */
  readonly replacesInputs: boolean;
  /** Optional, overrides `replacesInputs`: the consumed columns removed after this stage when only some are. */
  replacedInputs?(inputs: readonly string[]): string[];
  fit(input: FitInput<Cfg>): State;
  /** Pure and deterministic. Returns new columns of length `view.rows.length`. */
  apply(state: State, view: FrameView, inputs: readonly string[]): Column[];
  /**
   * Optional: what the run folder should show about a fitted state (the final context's fit).
   * `tables` become CSV files named `<table>.csv`; `metrics` go under the stage's kind in metrics.json.
   */
  describe?(state: State): StageReport;
}

export interface StageReport {
  readonly tables?: Readonly<Record<string, { header: readonly string[]; rows: readonly (readonly (string | number)[])[] }>>;
  readonly metrics?: Json;
}

/** Learners: fit on numeric feature columns, emit one probability per row. */
export interface LearnerFitInput<Cfg> {
  /** Numeric feature columns over one index space, no missing values (the runner imputes). */
  readonly features: readonly Float64Array[];
  readonly names: readonly string[];
  readonly rows: Uint32Array;
  readonly target: Uint8Array;
  readonly config: Cfg;
  readonly rng: Rng;
  /**
   * False when nobody will read the model's `describe()` (the runner's fold contexts, whose models
   * only predict): a learner may then skip diagnostics that cost time. Absent means true.
   */
  readonly report?: boolean;
}

export interface Learner<Cfg, Model> {
  readonly kind: string;
  readonly version: number;
  /**
   * True when the learner takes missing values itself (NaN in `features`, e.g. trees that learn a
   * default direction). Otherwise it sees the imputed matrix (median + `__missing` flags).
   */
  readonly handlesMissing?: boolean;
  resolveConfig(raw: unknown): Cfg;
  fit(input: LearnerFitInput<Cfg>): Model;
  /** Probability of the event for each of `rows`. */
  predict(model: Model, features: readonly Float64Array[], rows: Uint32Array): Float64Array;
  /** Optional: tables (e.g. importances) and metrics about a fitted model, for the run folder. */
  describe?(model: Model): StageReport;
}
