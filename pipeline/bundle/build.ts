/**
 * Builds `bundle.json` from a finished run: the final context's fitted stage states and learner
 * models, the stack, the decision cut, and the training distributions drift is measured against.
 * Those distributions come from scoring the development rows with the bundle itself, so a scored
 * file is compared with exactly what the bundle would have produced on the training data. Above
 * DRIFT_BASELINE_ROWS development rows an evenly spaced subset is scored: decile edges and shares
 * from 50,000 rows are far finer than any PSI threshold, and scoring every row twice (once in the
 * final context, once here) was a serial tail of the run.
 */
import type { CategoricalColumn, Column, Frame } from '../frame.js';
import { categorical, dateColumn, numeric } from '../frame.js';
import type { Json, Learner, Stage } from '../../stages/types.js';
import { learnerRegistry, stageRegistry } from '../../stages/index.js';
import type { StackModel } from '../../stages/stack.js';
import { BUNDLE_FORMAT, type Bundle, type BundleColumn, type BundleLearner, type BundleStage } from './types.js';
import { scoreColumns } from './score.js';
import { categoricalDistribution, numericDistribution } from './drift.js';
import { BundleError } from './errors.js';
import { EXIT } from '../errors.js';
import type { ResolvedConfig } from '../config/types.js';
import type { Plan } from '../plan.js';
import type { ContextResult } from '../context-run.js';

/** The runner's side: a finished run's final context and stack, as `buildBundle` takes them. */
export function bundleOfRun(run: { config: ResolvedConfig; codeVersion: string; configDigest: string; frame: Frame; plan: Plan; final: ContextResult; stack: StackModel; cut: number }): Bundle {
  const { config, plan, final } = run;
  return buildBundle({
    name: config.name,
    codeVersion: run.codeVersion,
    configDigest: run.configDigest,
    data: { target: config.data.target, id: config.data.id ?? null, missing: config.data.missing },
    frame: run.frame,
    devRows: plan.split.dev,
    stages: plan.stages.map((s, i) => ({ kind: s.kind, config: s.config, inputs: final.stageInputs[i], state: final.states[i].state })),
    learners: plan.learners.map((l, i) => ({ name: l.name, kind: l.kind, config: l.config, features: final.learnerFeatures[i], model: final.models[i].model, prior: final.learnerPriors[i] })),
    stack: run.stack,
    budget: config.evaluate.budget,
    cut: run.cut,
  });
}

export interface BundleSource {
  readonly name: string;
  readonly codeVersion: string;
  readonly configDigest: string;
  readonly data: { readonly target: string; readonly id: string | null; readonly missing: readonly string[] };
  readonly frame: Frame;
  /** The development (non-holdout) rows: the final context's train rows. */
  readonly devRows: Uint32Array;
  /** The final context's plan items and results, in chain / learner order. */
  readonly stages: readonly { readonly kind: string; readonly config: Json; readonly inputs: readonly string[]; readonly state: Json }[];
  readonly learners: readonly { readonly name: string; readonly kind: string; readonly config: Json; readonly features: readonly string[]; readonly model: Json; readonly prior: { tau: number; ybar: number } | null }[];
  readonly stack: StackModel;
  readonly budget: number;
  /** The holdout stack's cut at the budget. */
  readonly cut: number;
}

export function buildBundle(src: BundleSource): Bundle {
  const stages: BundleStage[] = src.stages.map((s) => {
    const stage = stageRegistry.get(s.kind) as Stage<unknown, Json> | undefined;
    if (!stage) throw new BundleError('bundle.json', `stage kind ${s.kind} is not registered`, 'this is a bug; please report it', EXIT.runFailure);
    return { kind: s.kind, version: stage.version, config: s.config, inputs: s.inputs.slice(), state: s.state };
  });
  const learners: BundleLearner[] = src.learners.map((l) => {
    const learner = learnerRegistry.get(l.kind) as Learner<unknown, Json> | undefined;
    if (!learner) throw new BundleError('bundle.json', `learner kind ${l.kind} is not registered`, 'this is a bug; please report it', EXIT.runFailure);
    return { name: l.name, kind: l.kind, version: learner.version, handlesMissing: learner.handlesMissing === true, config: l.config, features: l.features.slice(), model: l.model, prior_correction: l.prior };
  });
  const frame = src.frame;
  const columns: BundleColumn[] = [...frame.columns.values()].map((c) => ({ name: c.name, role: frame.roles.get(c.name) ?? 'feature', type: c.type }));
  const consumed = new Set([...stages.flatMap((s) => s.inputs), ...learners.flatMap((l) => l.features), ...(src.stack.passthrough?.names ?? [])]);
  const required = columns.filter((c) => consumed.has(c.name)).map((c) => c.name);

  const baseline = evenlySpaced(src.devRows, DRIFT_BASELINE_ROWS);
  const dev = gatherColumns(frame, required, baseline);
  const scored = scoreColumns({ stages, learners, stack: src.stack }, dev, baseline.length);
  const featureNames = [...new Set(learners.flatMap((l) => l.features))];
  const features = featureNames.map((n) => {
    const c = scored.columns.get(n);
    if (!c || c.type !== 'numeric') throw new BundleError('bundle.json', `learner feature ${n} is not a number column`, 'this is a bug; please report it', EXIT.runFailure);
    return numericDistribution(n, c.values);
  });
  const categories = required.map((n) => dev.get(n)).filter((c): c is CategoricalColumn => c?.type === 'categorical').map((c) => categoricalDistribution(c.name, c));

  let events = 0;
  for (let i = 0; i < src.devRows.length; i++) events += frame.target[src.devRows[i]];

  return {
    format: BUNDLE_FORMAT,
    code_version: src.codeVersion,
    name: src.name,
    config_digest: src.configDigest,
    data: { target: src.data.target, id: src.data.id, missing: src.data.missing.slice(), columns, required },
    stages,
    learners,
    stack: src.stack,
    base_rate: events / src.devRows.length,
    prior_correction: null,
    decision: { budget: src.budget, cut: src.cut },
    drift: { score: numericDistribution('score', scored.score), features, categories },
  };
}

/** Most development rows scored for the drift baseline (common practice, no source). */
export const DRIFT_BASELINE_ROWS = 50_000;

/** At most `max` of `rows`, evenly spaced in their order (all of them when there are few enough). */
function evenlySpaced(rows: Uint32Array, max: number): Uint32Array {
  if (rows.length <= max) return rows;
  const out = new Uint32Array(max);
  for (let k = 0; k < max; k++) out[k] = rows[Math.floor((k * rows.length) / max)];
  return out;
}

/** Compact copies of `names` at `rows`: the index space scoring works in. */
function gatherColumns(frame: Frame, names: readonly string[], rows: Uint32Array): Map<string, Column> {
  const out = new Map<string, Column>();
  for (const name of names) {
    const c = frame.columns.get(name);
    if (!c) continue;
    if (c.type === 'categorical') {
      const codes = new Int32Array(rows.length);
      for (let i = 0; i < rows.length; i++) codes[i] = c.codes[rows[i]];
      out.set(name, categorical(name, codes, c.levels));
    } else {
      const src = c.type === 'numeric' ? c.values : c.days;
      const v = new Float64Array(rows.length);
      for (let i = 0; i < rows.length; i++) v[i] = src[rows[i]];
      out.set(name, c.type === 'numeric' ? numeric(name, v) : dateColumn(name, v));
    }
  }
  return out;
}
