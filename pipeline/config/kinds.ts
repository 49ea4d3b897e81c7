/**
 * Option schemas per stage kind and per learner kind. Adding a kind to the config language is one
 * entry here; the config schema, validation, JSON Schema and reference docs all pick it up.
 */
import { arrayOf, boolean, integer, number, object, oneOfValues, optional, string, type ObjectSchema } from './schema-dsl.js';

const columnList = (what: string) => arrayOf(string('A column name from the data file.', { minLength: 1 }), what);

const smoothing = number('Prior strength in pseudo-rows: how far a sparse group\'s rate is pulled toward the overall rate.', { min: 0 });

export const stageKinds: ReadonlyMap<string, ObjectSchema> = new Map([
  [
    'rate-encode',
    object(
      'Replace each categorical column with its smoothed event rate (cross-fitted).',
      {
        smoothing: optional(smoothing, 20),
        columns: optional(columnList('Categorical columns to encode; default: every categorical feature.')),
      },
      { nullable: true },
    ),
  ],
  [
    'tree-bins',
    object(
      'Bin each numeric column with a shallow tree fitted to the target and encode the bins as smoothed event rates (cross-fitted).',
      {
        max_depth: optional(integer('Maximum depth of each per-column tree.', { min: 1, max: 8 }), 3),
        min_leaf: optional(
          number('Smallest leaf: ≥ 1 is a row count, < 1 a fraction of the fit rows.', { min: 0, exclusiveMin: true }),
          0.05,
        ),
        smoothing: optional(smoothing, 20),
        columns: optional(columnList('Numeric columns to bin; default: every numeric feature.')),
        monotone: optional(
          oneOfValues('Constrain bin rates to rise (up) or fall (down) with the column, pick the direction from the data (auto), or not at all (none).', [
            'auto',
            'up',
            'down',
            'none',
          ]),
          'none',
        ),
        max_bins: optional(
          integer(
            'Quantile bins per column (edges from the fit rows, or a fixed sample of 16,384 of them when there are more) before its tree is grown; a column with at most this many distinct values in those rows is split exactly as on the raw values.',
            { min: 2, max: 65535 },
          ),
          255,
        ),
      },
      { nullable: true },
    ),
  ],
  ['leaf-z', object('Turn each tree-bins rate into a z-score against the pooled distribution of every column\'s leaf rates (weighted by leaf counts), so columns share one scale; each z-score replaces its rate column for the learners.', {}, { nullable: true })],
  [
    'summaries',
    object(
      'Row-level summaries across encoded columns (count of high-risk signals, mean, max).',
      { high_z: optional(number('z-score above which a column counts as a high-risk signal.', { min: 0, exclusiveMin: true }), 1.0) },
      { nullable: true },
    ),
  ],
  [
    'dates',
    object(
      'Derive features from date columns: parts, fiscal periods, ages and gaps, holiday proximity.',
      {
        columns: optional(columnList('Date columns to expand; default: every date column.')),
        fiscal_start_month: optional(integer('Month (1–12) in which the fiscal year starts.', { min: 1, max: 12 }), 1),
        as_of: optional(
          string('A date column holding each row\'s as-of date (e.g. the application date): any other date later than it in the same row is a data error, since it would leak the future.', {
            minLength: 1,
          }),
        ),
        pairs: optional(
          arrayOf(
            arrayOf(string('A date column name.', { minLength: 1 }), 'Two date columns [from, to]; the feature is to − from in days.', {
              minItems: 2,
              maxItems: 2,
            }),
            'Pairs of date columns whose gap in days becomes a feature.',
          ),
        ),
        holiday_window_days: optional(integer('Days either side of a public holiday that count as "near a holiday".', { min: 0 }), 7),
      },
      { nullable: true },
    ),
  ],
  [
    'transforms',
    object(
      'For each numeric column pick the shape (identity, log, sqrt, square, reciprocal, rank_logit) with the best univariate logistic log-likelihood on the fit rows (cross-fitted).',
      {
        columns: optional(columnList('Numeric columns to transform; default: every numeric feature.')),
        candidates: optional(
          arrayOf(oneOfValues('A candidate shape.', ['identity', 'log', 'sqrt', 'square', 'reciprocal', 'rank_logit']), 'Shapes to try; ties go to the earlier one in the order identity, log, sqrt, square, reciprocal, rank_logit.', { minItems: 1 }),
        ),
      },
      { nullable: true },
    ),
  ],
  [
    'forest-leaves',
    object(
      'A small bagged forest over the numeric features; tree t becomes a column forest_leaf_t (t = 1, 2, …) holding the smoothed event rate of the row\'s leaf (cross-fitted).',
      {
        trees: optional(integer('Number of trees (one output column each).', { min: 1, max: 1000 }), 10),
        max_depth: optional(integer('Maximum depth of each tree.', { min: 1, max: 16 }), 3),
        min_leaf: optional(number('Smallest leaf: ≥ 1 is a row count (whole number), < 1 a fraction of the fit rows.', { min: 0, exclusiveMin: true }), 0.05),
        smoothing: optional(smoothing, 20),
      },
      { nullable: true },
    ),
  ],
  [
    'select',
    object(
      'Keep only the numeric features a small forest ranks most important on the train rows (fitted once per context, not cross-fitted; the kept columns pass through unchanged).',
      {
        by: optional(oneOfValues('Ranking criterion: the forest\'s total Gini impurity decrease per column.', ['importance']), 'importance'),
        keep: optional(integer('Number of columns to keep; ties go to the earlier column.', { min: 1 }), 20),
        trees: optional(integer('Trees in the ranking forest.', { min: 1, max: 10000 }), 50),
        max_depth: optional(integer('Maximum depth of each ranking tree.', { min: 1, max: 32 }), 6),
        min_leaf: optional(number('Smallest leaf: ≥ 1 is a row count (whole number), < 1 a fraction of the fit rows.', { min: 0, exclusiveMin: true }), 20),
      },
      { nullable: true },
    ),
  ],
]);

/** Options the two boosted-tree learners share, with the same meaning and defaults. */
const boostingOptions = {
  rounds: optional(integer('Number of boosting rounds (trees), at most.', { min: 1, max: 100000 }), 300),
  learning_rate: optional(number('Shrinkage applied to every tree\'s leaf values.', { min: 0, max: 1, exclusiveMin: true }), 0.05),
  max_depth: optional(integer('Maximum depth of each tree.', { min: 1, max: 16 }), 5),
  min_child_weight: optional(number('Smallest hessian sum (≈ rows × p(1 − p)) allowed in a child.', { min: 0 }), 1),
  l2: optional(number('L2 penalty on leaf values (λ).', { min: 0 }), 1),
  subsample: optional(number('Share of rows drawn for each tree.', { min: 0, max: 1, exclusiveMin: true }), 0.8),
  colsample: optional(number('Share of columns drawn for each tree.', { min: 0, max: 1, exclusiveMin: true }), 0.8),
};

export const learnerKinds: ReadonlyMap<string, ObjectSchema> = new Map([
  [
    'logistic',
    object('L2-penalised logistic regression fitted by Newton\'s method.', {
      l2: optional(number('L2 penalty strength on the standardised coefficients (intercept not penalised).', { min: 0 }), 1.0),
      max_iter: optional(integer('Maximum Newton iterations.', { min: 1, max: 1000 }), 100),
      tol: optional(number('Convergence tolerance on the change in log-loss between iterations.', { min: 0, exclusiveMin: true }), 1e-10),
    }),
  ],
  [
    'tree',
    object('One classification tree (Gini splits) on binned columns; the probability is the leaf\'s event rate; missing values take a learned side at each split.', {
      max_depth: optional(integer('Maximum depth of the tree.', { min: 1, max: 32 }), 6),
      min_leaf: optional(number('Smallest leaf: ≥ 1 is a row count (whole number), < 1 a fraction of the fit rows.', { min: 0, exclusiveMin: true }), 50),
      smoothing: optional(smoothing, 0),
      max_bins: optional(integer('Value bins per column (edges from the fit rows, or a fixed sample of 16,384 of them when there are more); a column with no more distinct values in those rows is split exactly.', { min: 2, max: 65535 }), 255),
    }),
  ],
  [
    'forest',
    object('Bagged classification trees with a random subset of columns tried at every split; the probability is the mean of the trees\' leaf event rates; missing values take a learned side at each split.', {
      trees: optional(integer('Number of trees.', { min: 1, max: 10000 }), 200),
      max_depth: optional(integer('Maximum depth of each tree.', { min: 1, max: 32 }), 8),
      min_leaf: optional(number('Smallest leaf: ≥ 1 is a row count (whole number), < 1 a fraction of the fit rows.', { min: 0, exclusiveMin: true }), 20),
      max_features: optional(number('Columns tried per split: < 1 a fraction of the columns, ≥ 1 a count (whole number); default: the square root of the column count, rounded.', { min: 0, exclusiveMin: true })),
      sample: optional(number('Rows drawn for each tree, as a fraction of the fit rows.', { min: 0, max: 1, exclusiveMin: true }), 1.0),
      bootstrap: optional(boolean('Draw rows with replacement (true) or without (false; with sample 1 every tree sees every row).'), true),
      permutation_rows: optional(integer('Out-of-bag rows per tree scored for the permutation importance (a random subset when there are more); 0 skips it.', { min: 0 }), 5000),
    }),
  ],
  [
    'boosted',
    object('Gradient-boosted trees for log loss on binned columns; missing values take a learned direction at each split.', {
      ...boostingOptions,
      base_score: optional(number('Starting probability for every row; default: the event rate of the fit rows.', { min: 0, max: 1, exclusiveMin: true, exclusiveMax: true })),
      early_stop: optional(
        object('Hold back a stratified slice of the fit rows, score it after every round, and keep the trees up to the round with the lowest log loss.', {
          rounds: optional(integer('Stop after this many rounds without a lower held-back log loss; 0 turns early stopping off.', { min: 0 }), 30),
          fraction: optional(number('Share of each class held back.', { min: 0, max: 0.5, exclusiveMin: true }), 0.1),
        }),
        { rounds: 30, fraction: 0.1 },
      ),
    }),
  ],
  [
    'xgboost',
    object('Boosted trees from the XGBoost engine (WebAssembly build), run in a separate process on binned columns; missing values are passed as missing.', {
      ...boostingOptions,
      seed: optional(integer('Seed of the engine\'s row and column draws; default: derived from the run seed.', { min: 0, max: 2147483646 })),
    }),
  ],
]);
