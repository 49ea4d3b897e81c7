/** The config file's schema — the single definition that validation, defaults, JSON Schema and docs come from. */
import { learnerKinds, stageKinds } from './kinds.js';
import { jsonSchemaOf, type JsonObject } from './json-schema.js';
import { referenceMarkdownOf } from './reference.js';
import {
  arrayOf,
  boolean,
  integer,
  keyed,
  mapOf,
  number,
  object,
  oneOfShapes,
  oneOfValues,
  optional,
  required,
  string,
  tagged,
} from './schema-dsl.js';

/** Names become parts of folder names and output column names, so they stay filesystem- and CSV-safe. */
const NAME_PATTERN = /^[A-Za-z0-9][A-Za-z0-9_.-]{0,63}$/;
const NAME_TEXT = 'a name of 1–64 letters, digits, "_", "." or "-" starting with a letter or digit';

/** Learner names become output columns next to these, so they cannot reuse them. */
export const RESERVED_LEARNER_NAMES: readonly string[] = ['stack', 'id', 'fold', 'target'];

export const COLUMN_DECLARATIONS = ['numeric', 'categorical', 'date', 'ignore', 'protected'] as const;

export const PROMOTE_METRICS = ['capture', 'auc', 'pauc'] as const;

const nonEmpty = (description: string) => string(description, { minLength: 1 });
const share = (description: string) => number(description, { min: 0, max: 1, exclusiveMin: true, exclusiveMax: true });

export const configSchema = object('A foldstack pipeline: the data, how rows are split, feature stages, base learners, the stack and evaluation.', {
  name: required(string('Name of this pipeline; part of run folder names.', { pattern: NAME_PATTERN, patternText: NAME_TEXT })),
  seed: optional(integer('Seed from which every random draw in a run is derived.', { min: 0 }), 1),
  data: required(
    object('The data file and what its columns mean.', {
      file: required(nonEmpty('CSV data file; a relative path is resolved against the folder of this config file.')),
      target: required(nonEmpty('Column holding the binary outcome.')),
      positive: optional(
        string('Target label meaning "the event happened" (mapped to 1); a number is kept as written.', { minLength: 1, acceptNumber: true }),
      ),
      id: optional(nonEmpty('Row identifier column; carried into outputs, never used as a feature.')),
      columns: optional(
        mapOf(
          oneOfValues(
            'How to read the column: numeric, categorical or date; `ignore` drops it; `protected` keeps it out of the features and uses it only for the disparity table.',
            COLUMN_DECLARATIONS,
          ),
          'Per-column declarations that override type inference.',
          { keyNoun: 'column' },
        ),
      ),
      missing: optional(arrayOf(string('A cell text that means "missing".'), 'Cell texts read as missing values.'), ['', 'NA']),
    }),
  ),
  split: optional(
    object('How rows are split into a holdout and cross-validation folds.', {
      folds: optional(integer('Number of stratified outer folds over the non-holdout rows.', { min: 2, max: 20 }), 5),
      holdout: optional(
        oneOfShapes('Rows set aside to judge the final stack.', [
          object('A seeded random holdout.', {
            fraction: required(number('Share of rows held out.', { min: 0, max: 0.9, exclusiveMin: true })),
          }),
          object('An out-of-time holdout: rows dated on or after `from` are held out.', {
            column: required(nonEmpty('Date column that decides the holdout.')),
            from: required(string('First holdout date (inclusive).', { format: 'date' })),
          }),
        ]),
        { fraction: 0.2 },
      ),
      inner_folds: optional(integer('Folds for the inner cross-fitting of supervised stages.', { min: 2, max: 20 }), 5),
    }),
  ),
  features: optional(keyed(stageKinds, 'Feature stages by kind with their settings (empty = defaults); the runner orders them.', 'stage kind')),
  learners: required(
    mapOf(
      tagged('A base learner: its kind and that kind\'s options.', {
        tagKey: 'kind',
        tagDescription: 'which learner algorithm to fit',
        tagNoun: 'learner kind',
        variants: learnerKinds,
      }),
      'Base learners by name; each name becomes an output column.',
      { keyNoun: 'learner name', keyPattern: NAME_PATTERN, keyPatternText: NAME_TEXT, reservedKeys: RESERVED_LEARNER_NAMES, minEntries: 1 },
    ),
  ),
  exclude: optional(
    arrayOf(
      object('A rule removing rows before the split: rows for which its one condition holds are excluded.', {
        reason: required(nonEmpty('Why these rows are excluded; shown with the rule\'s row count in the manifest and report.')),
        column: required(nonEmpty('The column the condition reads.')),
        in: optional(arrayOf(string('A category level.', { acceptNumber: true }), 'Exclude rows whose level is one of these.')),
        not_in: optional(arrayOf(string('A category level.', { acceptNumber: true }), 'Exclude rows whose level is none of these.')),
        below: optional(string('Exclude rows whose value is strictly below this number or YYYY-MM-DD date.', { minLength: 1, acceptNumber: true })),
        above: optional(string('Exclude rows whose value is strictly above this number or YYYY-MM-DD date.', { minLength: 1, acceptNumber: true })),
        missing: optional(boolean('Exclude rows where the column is missing (write `missing: true`).')),
      }),
      'Row exclusions applied once before the split, in order; each rule needs exactly one condition (in, not_in, below, above or missing).',
    ),
    [],
  ),
  balance: optional(
    object('Class balancing: inside each learner fit only, keep every event and downsample non-events; predictions are prior-corrected back to the population rate (King & Zeng 2001). Metrics always use untouched rows.', {
      ratio: required(share('Event share to reach in each fit sample, e.g. 0.5.')),
    }),
  ),
  stack: optional(
    object('The logistic blend of the base learners\' out-of-fold predictions.', {
      nonnegative: optional(boolean('Constrain blend weights to be ≥ 0.'), true),
      passthrough: optional(
        arrayOf(
          nonEmpty('A numeric learner feature column (after impute), e.g. a `summaries` output such as z_mean.'),
          'Extra stack inputs besides the learners\' logits, standardized inside the stack and never bound by `nonnegative`; their values are out-of-fold like the learners\' predictions.',
        ),
        [],
      ),
    }),
  ),
  evaluate: optional(
    object('Evaluation settings.', {
      budget: optional(share('Review budget: the share of highest-scored rows counted as flagged.'), 0.1),
      budgets: optional(
        arrayOf(share('A review budget share.'), 'Extra review budgets to report; `budget` is always included.'),
      ),
    }),
  ),
  promote: optional(
    object(
      'When `foldstack run --promote-if-better` makes a run the champion of this config name. Only a paired comparison (same data, split and holdout rows) can promote; otherwise use `foldstack promote`.',
      {
        metric: optional(
          oneOfValues('Holdout metric of the stack that decides: capture at the budget, AUC, or partial AUC up to the budget.', PROMOTE_METRICS),
          'capture',
        ),
        min_gain: optional(number('Smallest gain (challenger minus champion) that can promote.', { min: 0 }), 0.005),
        max_p: optional(
          number(
            'Largest p-value that can promote: the two-sided DeLong p for auc; for capture and pauc a one-sided paired stratified bootstrap test (1,000 replicates).',
            { min: 0, max: 1, exclusiveMin: true },
          ),
          0.05,
        ),
      },
      { nullable: true },
    ),
  ),
});

/** JSON Schema (draft 2020-12) of the config file, for editors and `foldstack schema`. */
export function toJsonSchema(): JsonObject {
  return {
    $schema: 'https://json-schema.org/draft/2020-12/schema',
    title: 'foldstack config',
    ...jsonSchemaOf(configSchema),
  };
}

/** The config reference as a Markdown table (key path, type, default, description), for the README. */
export function configReferenceMarkdown(): string {
  return referenceMarkdownOf(configSchema, '# foldstack config reference');
}
