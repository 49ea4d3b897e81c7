/**
 * The `forest-leaves` stage: a small bagged forest over the numeric feature columns; each tree t
 * becomes a feature `forest_leaf_<t>` (t from 1) holding the smoothed event rate of the leaf the
 * row falls in. Leaves of shallow trees are interaction cells, so each column summarises a few
 * columns jointly. It reads the target, so the runner cross-fits it.
 */
import { numeric, type Column, type FrameView } from '../pipeline/frame.js';
import { intOption, minLeafCount, minLeafOption, numberOption, OptionError, readOptions } from './core/options.js';
import { mEstimate } from './core/smoothing.js';
import { compactTree, loadCompactTree, type CompactTree } from './core/tree/compact.js';
import { binMatrix, featuresPerSplitFor, growForest } from './core/tree/forest.js';
import { predictRaw } from './core/tree/predict.js';
import type { FitInput, Stage } from './types.js';

export interface ForestLeavesConfig {
  readonly trees: number;
  readonly max_depth: number;
  /** A row count when >= 1, else a fraction of the fit rows. */
  readonly min_leaf: number;
  /** m of the m-estimate of each leaf's rate toward the fit rows' rate. */
  readonly smoothing: number;
}

export interface ForestLeavesState {
  /** The columns the trees split on, by index. */
  readonly inputs: string[];
  /** Leaf values are the smoothed rates. */
  readonly trees: CompactTree[];
}

const DEFAULTS: ForestLeavesConfig = { trees: 10, max_depth: 3, min_leaf: 0.05, smoothing: 20 };

export const forestLeaves: Stage<ForestLeavesConfig, ForestLeavesState> = {
  kind: 'forest-leaves',
  version: 1,
  supervised: true,
  replacesInputs: false,

  resolveConfig(raw: unknown): ForestLeavesConfig {
    const o = readOptions('forest-leaves', raw, DEFAULTS as unknown as Record<string, unknown>);
    return {
      trees: intOption('forest-leaves', o, 'trees', 1, 1000),
      max_depth: intOption('forest-leaves', o, 'max_depth', 1, 16),
      min_leaf: minLeafOption('forest-leaves', o, 'min_leaf'),
      smoothing: numberOption('forest-leaves', o, 'smoothing', (v) => v >= 0, 'a finite number >= 0'),
    };
  },

  selectInputs(_config: ForestLeavesConfig, available: readonly Column[]): string[] {
    return available.filter((c) => c.type === 'numeric').map((c) => c.name);
  },

  fit({ view, target, inputs, config, rng }: FitInput<ForestLeavesConfig>): ForestLeavesState {
    const rows = view.rows;
    const y = Uint8Array.from(rows, (r) => target[r]);
    let events = 0;
    for (let i = 0; i < y.length; i++) events += y[i];
    const prior = rows.length > 0 ? events / rows.length : 0;
    const fitted = growForest(
      binMatrix(inputs.map((name) => numericValues(view, name)), rows),
      y,
      {
        trees: config.trees,
        maxDepth: config.max_depth,
        minLeafCount: minLeafCount(config.min_leaf, rows.length),
        featuresPerSplit: featuresPerSplitFor(null, inputs.length),
        sample: 1,
        bootstrap: true,
        permutationRows: 0,
      },
      rng,
    );
    const trees = fitted.trees.map((t) =>
      compactTree(
        t,
        Array.from(t.gradSum, (g, k) => mEstimate(g, t.hessSum[k], prior, config.smoothing)),
      ),
    );
    return { inputs: [...inputs], trees };
  },

  apply(state: ForestLeavesState, view: FrameView): Column[] {
    const features = state.inputs.map((name) => numericValues(view, name));
    return state.trees.map((c, t) => {
      const out = new Float64Array(view.rows.length);
      predictRaw(loadCompactTree(c), features, view.rows, out);
      return numeric(`forest_leaf_${t + 1}`, out);
    });
  },
};

function numericValues(view: FrameView, name: string): Float64Array {
  const c = view.columns.get(name);
  if (!c || c.type !== 'numeric') throw new OptionError('input is not a numeric column', 'forest-leaves', 'column', name);
  return c.values;
}
