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
  stack: optional(
    object('The logistic blend of the base learners\' out-of-fold predictions.', {
      nonnegative: optional(boolean('Constrain blend weights to be ≥ 0.'), true),
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
