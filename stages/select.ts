/**
 * The `select` stage: ranks the numeric feature columns by a small forest's impurity importance
 * on the context's train rows and passes on only the top `keep`, unchanged and under their own
 * names (the others leave the feature set). Ties are broken by column order.
 *
 * It reads the target but is not cross-fitted (`supervised: false`): inner folds would each
 * select different columns, and a column set must be one decision per context. It is still
 * leak-free: the runner fits it inside each context on that context's train rows only, so an
 * outer fold's or the holdout's targets never influence which columns are kept, and its outputs
 * are the input values themselves, carrying no target value into any row.
 */
import { numeric, type Column, type FrameView } from '../pipeline/frame.js';
import { intOption, minLeafCount, minLeafOption, OptionError, readOptions } from './core/options.js';
import { binMatrix, featuresPerSplitFor, growForest } from './core/tree/forest.js';
import type { FitInput, Stage, StageReport } from './types.js';

export interface SelectConfig {
  readonly by: 'importance';
  readonly keep: number;
  readonly trees: number;
  readonly max_depth: number;
  readonly min_leaf: number;
}

export interface SelectState {
  /** Every input column with its importance, in input order. */
  readonly ranked: { feature: string; impurity: number; rank: number }[];
  /** Kept columns, in input order. */
  readonly keep: string[];
}

const DEFAULTS: SelectConfig = { by: 'importance', keep: 20, trees: 50, max_depth: 6, min_leaf: 20 };

export const select: Stage<SelectConfig, SelectState> = {
  kind: 'select',
  version: 1,
  supervised: false,
  replacesInputs: true,

  resolveConfig(raw: unknown): SelectConfig {
    const o = readOptions('select', raw, DEFAULTS as unknown as Record<string, unknown>);
    if (o.by !== 'importance') throw new OptionError('by must be importance', 'select', 'by', o.by);
    return {
      by: 'importance',
      keep: intOption('select', o, 'keep', 1, 100000),
      trees: intOption('select', o, 'trees', 1, 10000),
      max_depth: intOption('select', o, 'max_depth', 1, 32),
      min_leaf: minLeafOption('select', o, 'min_leaf'),
    };
  },

  selectInputs(_config: SelectConfig, available: readonly Column[]): string[] {
    return available.filter((c) => c.type === 'numeric').map((c) => c.name);
  },

  fit({ view, target, inputs, config, rng }: FitInput<SelectConfig>): SelectState {
    const rows = view.rows;
    const features = inputs.map((name) => numericValues(view, name));
    const fitted = growForest(
      binMatrix(features, rows),
      Uint8Array.from(rows, (r) => target[r]),
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
    const byRank = inputs.map((_, j) => j).sort((a, b) => fitted.impurity[b] - fitted.impurity[a] || a - b);
    const rank = new Array<number>(inputs.length);
    byRank.forEach((j, k) => (rank[j] = k + 1));
    return {
      ranked: inputs.map((feature, j) => ({ feature, impurity: fitted.impurity[j], rank: rank[j] })),
      keep: inputs.filter((_, j) => rank[j] <= config.keep),
    };
  },

  apply(state: SelectState, view: FrameView): Column[] {
    const rows = view.rows;
    return state.keep.map((name) => {
      const x = numericValues(view, name);
      const out = new Float64Array(rows.length);
      for (let i = 0; i < rows.length; i++) out[i] = x[rows[i]];
      return numeric(name, out);
    });
  },

  describe(state: SelectState): StageReport {
    const kept = new Set(state.keep);
    return {
      tables: {
        select_importance: {
          header: ['feature', 'impurity', 'rank', 'kept'],
          rows: state.ranked.map((r) => [r.feature, r.impurity, r.rank, kept.has(r.feature) ? 1 : 0]),
        },
      },
      metrics: { kept: state.keep.length, of: state.ranked.length },
    };
  },
};

function numericValues(view: FrameView, name: string): Float64Array {
  const c = view.columns.get(name);
  if (!c || c.type !== 'numeric') throw new OptionError('input is not a numeric column', 'select', 'column', name);
  return c.values;
}
