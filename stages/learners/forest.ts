/**
 * The `forest` learner: bagged Gini trees with a random column subset at every split (see
 * core/tree/forest.ts). The probability is the mean of the trees' leaf event rates. Missing values
 * follow each split's learned side. Its report gives two importances per feature: the impurity
 * decrease, and the out-of-bag permutation drop in AUC.
 */
import { booleanOption, intOption, minLeafCount, minLeafOption, numberOption, OptionError, readOptions } from '../core/options.js';
import { compactTree, loadCompactTree, type CompactTree } from '../core/tree/compact.js';
import { TreeParamError } from '../core/tree/errors.js';
import { binMatrix, featuresPerSplitFor, forestArenaBytes, growForest, type ForestParams } from '../core/tree/forest.js';
import { withKernelArena } from '../core/kernel/arena.js';
import { addTreeValuesRaw } from '../core/tree/predict.js';
import type { Learner, LearnerFitInput, StageReport } from '../types.js';

export interface ForestConfig {
  readonly trees: number;
  readonly max_depth: number;
  /** A row count when >= 1, else a fraction of the fit rows. */
  readonly min_leaf: number;
  /** Columns per split: null = √p, a fraction < 1 of p, or an integer count. */
  readonly max_features: number | null;
  /** Rows drawn per tree, as a fraction of the fit rows. */
  readonly sample: number;
  readonly bootstrap: boolean;
  /** Out-of-bag rows per tree scored for permutation importance; 0 = skip it. */
  readonly permutation_rows: number;
}

export interface ForestModel {
  readonly names: readonly string[];
  readonly trees: CompactTree[];
  /** Per feature, normalised to sum 1. */
  readonly impurity: number[];
  /** Per feature: mean out-of-bag AUC drop; null when no tree had out-of-bag rows of both classes. */
  readonly permutation: number[] | null;
}

const DEFAULTS: ForestConfig = {
  trees: 200,
  max_depth: 8,
  min_leaf: 20,
  max_features: null,
  sample: 1,
  bootstrap: true,
  // 5,000 rows put the sampling sd of one tree's AUC near 0.01; common practice, no source.
  permutation_rows: 5000,
};

export const forest: Learner<ForestConfig, ForestModel> = {
  kind: 'forest',
  version: 1,
  handlesMissing: true,

  resolveConfig(raw: unknown): ForestConfig {
    const o = readOptions('forest', raw, DEFAULTS as unknown as Record<string, unknown>);
    const mf = o.max_features;
    if (mf !== null && (typeof mf !== 'number' || !(mf > 0) || (mf >= 1 && !Number.isInteger(mf)))) {
      throw new OptionError('max_features must be a fraction in (0, 1) or an integer count >= 1', 'forest', 'max_features', mf);
    }
    return {
      trees: intOption('forest', o, 'trees', 1, 10000),
      max_depth: intOption('forest', o, 'max_depth', 1, 32),
      min_leaf: minLeafOption('forest', o, 'min_leaf'),
      max_features: mf,
      sample: numberOption('forest', o, 'sample', (v) => v > 0 && v <= 1, 'a fraction in (0, 1]'),
      bootstrap: booleanOption('forest', o, 'bootstrap'),
      permutation_rows: intOption('forest', o, 'permutation_rows', 0, Number.MAX_SAFE_INTEGER),
    };
  },

  fit({ features, names, rows, target, config, rng, report }: LearnerFitInput<ForestConfig>): ForestModel {
    checkWidth(names.length, features.length);
    const params: ForestParams = {
      trees: config.trees,
      maxDepth: config.max_depth,
      minLeafCount: minLeafCount(config.min_leaf, rows.length),
      featuresPerSplit: featuresPerSplitFor(config.max_features, features.length),
      sample: config.sample,
      bootstrap: config.bootstrap,
      // permutation importance only shows in the report; skipping it leaves the trees unchanged
      permutationRows: report === false ? 0 : config.permutation_rows,
    };
    const fitted = withKernelArena(forestArenaBytes(rows.length, features.length, params), (arena) =>
      growForest(binMatrix(features, rows, arena), Uint8Array.from(rows, (r) => target[r]), params, rng, arena),
    );
    return {
      names: [...names],
      trees: fitted.trees.map((t) => compactTree(t)),
      impurity: Array.from(fitted.impurity),
      permutation: fitted.permutation ? Array.from(fitted.permutation) : null,
    };
  },

  predict(model: ForestModel, features: readonly Float64Array[], rows: Uint32Array): Float64Array {
    checkWidth(model.names.length, features.length);
    const trees = model.trees.map(loadCompactTree);
    const sum = new Float64Array(rows.length);
    addTreeValuesRaw(trees, features, rows, sum);
    const k = trees.length;
    for (let i = 0; i < sum.length; i++) sum[i] /= k;
    return sum;
  },

  describe(model: ForestModel): StageReport {
    return {
      tables: {
        forest_importance: {
          header: ['feature', 'impurity', 'permutation'],
          rows: model.names.map((name, j) => [name, model.impurity[j], model.permutation ? model.permutation[j] : '']),
        },
      },
    };
  },
};

function checkWidth(expected: number, got: number): void {
  if (expected !== got) throw new TreeParamError(`forest: expected ${expected} feature columns`, 'features', got);
}
