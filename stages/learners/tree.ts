/**
 * The `tree` learner: one CART classification tree (Gini) grown by the shared tree core on binned
 * columns. A missing value follows the side learned at each split. The probability is the leaf's
 * event rate, optionally shrunk toward the fit rows' rate by an m-estimate.
 */
import { intOption, minLeafCount, minLeafOption, numberOption, readOptions } from '../core/options.js';
import { mEstimate } from '../core/smoothing.js';
import { allocCodes, binThresholds, edgeSampleRows, encodeNumeric, fitNumericBins, MAX_UINT16_BINS, MAX_UINT8_BINS, valueBinCount } from '../core/tree/bin.js';
import { compactTree, loadCompactTree, type CompactTree } from '../core/tree/compact.js';
import { TreeParamError } from '../core/tree/errors.js';
import { growTree, GrowWorkspace, liveHistograms, treeArenaBytes } from '../core/tree/grow.js';
import { STATS } from '../core/tree/histogram.js';
import { withKernelArena } from '../core/kernel/arena.js';
import { predictRaw } from '../core/tree/predict.js';
import type { Learner, LearnerFitInput } from '../types.js';

export interface TreeConfig {
  readonly max_depth: number;
  /** A row count when >= 1, else a fraction of the fit rows. */
  readonly min_leaf: number;
  /** m of the m-estimate of each leaf's rate toward the fit rows' rate; 0 = the raw rate. */
  readonly smoothing: number;
  /** Value bins per column; a column with at most this many distinct values is split exactly (needs them all in the edge sample: always so up to 16,384 fit rows). */
  readonly max_bins: number;
}

export interface TreeModel {
  readonly names: readonly string[];
  /** Event rate over the fit rows. */
  readonly prior: number;
  /** Thresholds are the fitted bin edges, so scoring needs no binning step. */
  readonly tree: CompactTree;
}

const DEFAULTS: TreeConfig = { max_depth: 6, min_leaf: 50, smoothing: 0, max_bins: 255 };

export const tree: Learner<TreeConfig, TreeModel> = {
  kind: 'tree',
  version: 1,
  handlesMissing: true,

  resolveConfig(raw: unknown): TreeConfig {
    const o = readOptions('tree', raw, DEFAULTS as unknown as Record<string, unknown>);
    return {
      max_depth: intOption('tree', o, 'max_depth', 1, 32),
      min_leaf: minLeafOption('tree', o, 'min_leaf'),
      smoothing: numberOption('tree', o, 'smoothing', (v) => v >= 0, 'a finite number >= 0'),
      max_bins: intOption('tree', o, 'max_bins', 2, MAX_UINT16_BINS),
    };
  },

  fit({ features, names, rows, target, config }: LearnerFitInput<TreeConfig>): TreeModel {
    checkWidth(names.length, features.length);
    const n = rows.length;
    let events = 0;
    for (let i = 0; i < n; i++) events += target[rows[i]];
    const prior = n > 0 ? events / n : 0;
    const sampled = edgeSampleRows(rows);
    const mappers = features.map((x) => fitNumericBins(x, rows, config.max_bins, sampled));
    const nBins = Int32Array.from(mappers, valueBinCount);
    const minLeaf = minLeafCount(config.min_leaf, n);
    const bytes = treeArenaBytes(n, features.length, STATS, liveHistograms(config.max_depth, false));
    const grown = withKernelArena(bytes, (arena) => {
      const codes = features.map((x, c) => {
        const out = (nBins[c] <= MAX_UINT8_BINS ? arena?.u8(n) : null) ?? allocCodes(n, nBins[c]);
        encodeNumeric(mappers[c], x, rows, out);
        return out;
      });
      const grad = arena?.f64(n) ?? new Float64Array(n);
      for (let i = 0; i < n; i++) grad[i] = target[rows[i]];
      const hess = (arena?.f64(n) ?? new Float64Array(n)).fill(1);
      return growTree(
        { codes, nBins, thresholds: mappers.map(binThresholds), grad, hess, rows: Uint32Array.from({ length: n }, (_, i) => i), workspace: new GrowWorkspace(arena, n) },
        {
          maxDepth: config.max_depth,
          minSplit: Math.max(2, 2 * minLeaf),
          split: { criterion: 'gini', minLeafCount: minLeaf, minLeafHess: 0, minGain: 0, lambda: 0 },
          leafValue: 'ratio',
        },
      );
    });
    const value = Array.from(grown.gradSum, (g, k) => mEstimate(g, grown.hessSum[k], prior, config.smoothing));
    return { names: [...names], prior, tree: compactTree(grown, value) };
  },

  predict(model: TreeModel, features: readonly Float64Array[], rows: Uint32Array): Float64Array {
    checkWidth(model.names.length, features.length);
    const out = new Float64Array(rows.length);
    predictRaw(loadCompactTree(model.tree), features, rows, out);
    return out;
  },
};

function checkWidth(expected: number, got: number): void {
  if (expected !== got) throw new TreeParamError(`tree: expected ${expected} feature columns`, 'features', got);
}
