/**
 * Scoring core: replays the bundle's stage chain and learners on columns over one compact index
 * space (row i of every column is the same input row), exactly as `pipeline/context-run.ts`
 * chains them, then blends with the stack. Stage and learner code comes from the registries, so
 * a scored row goes through the very code that produced the run's holdout predictions.
 */
import type { Column, NumericColumn } from '../frame.js';
import type { Json, Learner, Stage } from '../../stages/types.js';
import { learnerRegistry, stageRegistry } from '../../stages/index.js';
import { applyStack } from '../../stages/stack.js';
import { priorCorrect } from '../../stages/balance.js';
import { EXIT } from '../errors.js';
import type { Bundle, BundleLearner, BundleStage } from './types.js';
import { BundleError } from './errors.js';

/** The part of a bundle that scoring runs (the drift section is not needed to compute scores). */
export type ScoringSpec = Pick<Bundle, 'stages' | 'learners' | 'stack'>;

export interface ScoredRows {
  /** Stack score per row. */
  readonly score: Float64Array;
  /** Every column at the end of the chain (raw inputs and stage outputs), same index space. */
  readonly columns: ReadonlyMap<string, Column>;
  /** Per learner (bundle order), its probability per row. */
  readonly predictions: readonly Float64Array[];
}

/** Fails before any row is read when this code cannot run a stage or learner the bundle holds. */
export function checkRunnable(spec: ScoringSpec, file: string): void {
  for (const s of spec.stages) stageOf(s, file);
  for (const l of spec.learners) learnerOf(l, file);
}

function stageOf(s: BundleStage, file: string): Stage<unknown, Json> {
  const stage = stageRegistry.get(s.kind) as Stage<unknown, Json> | undefined;
  if (!stage) throw new BundleError(file, `stage kind ${s.kind} is not known to this version of foldstack`, 'score with the foldstack version that made the run', EXIT.config);
  if (stage.version !== s.version) throw new BundleError(file, `stage ${s.kind} is version ${s.version} in the bundle, ${stage.version} in this code`, 're-run the config with this version, or score with the version that made the run', EXIT.config);
  return stage;
}

function learnerOf(l: BundleLearner, file: string): Learner<unknown, Json> {
  const learner = learnerRegistry.get(l.kind) as Learner<unknown, Json> | undefined;
  if (!learner) throw new BundleError(file, `learner kind ${l.kind} is not known to this version of foldstack`, 'score with the foldstack version that made the run', EXIT.config);
  if (learner.version !== l.version) throw new BundleError(file, `learner ${l.name} (${l.kind}) is version ${l.version} in the bundle, ${learner.version} in this code`, 're-run the config with this version, or score with the version that made the run', EXIT.config);
  return learner;
}

/** Scores `nRows` rows whose raw input columns are `inputs` (length nRows each). */
export function scoreColumns(spec: ScoringSpec, inputs: ReadonlyMap<string, Column>, nRows: number, file = 'bundle.json'): ScoredRows {
  const rows = new Uint32Array(nRows);
  for (let i = 0; i < nRows; i++) rows[i] = i;
  const columns = new Map(inputs);
  // Learners that take missing values read the columns as they stood before impute refilled them.
  let beforeImpute: ReadonlyMap<string, Column> = columns;
  for (const s of spec.stages) {
    if (s.kind === 'impute') beforeImpute = new Map(columns);
    const stage = stageOf(s, file);
    const out = stage.apply(s.state, { columns, rows }, s.inputs);
    for (const c of out) columns.set(c.name, c);
  }
  const predictions = spec.learners.map((l) => {
    const learner = learnerOf(l, file);
    const features = l.features.map((name) => numericValues(l.handlesMissing ? beforeImpute : columns, name, l.name, file));
    const p = learner.predict(l.model, features, rows);
    return l.prior_correction ? priorCorrect(p, l.prior_correction.tau, l.prior_correction.ybar) : p;
  });
  // Read after impute, as the run's contexts read them (pipeline/context-run.ts), so no NaN reaches the stack.
  const passthrough = (spec.stack.passthrough?.names ?? []).map((name) => {
    const c = columns.get(name);
    if (!c || c.type !== 'numeric') throw new BundleError(file, `the stack reads ${name}, which the stage chain did not produce as a number`, 'the bundle does not match this code; re-run the config', EXIT.config);
    return c.values;
  });
  const score = applyStack(spec.stack, predictions, rows, passthrough);
  return { score, columns, predictions };
}

function numericValues(columns: ReadonlyMap<string, Column>, name: string, learner: string, file: string): Float64Array {
  const c = columns.get(name);
  if (!c || c.type !== 'numeric') throw new BundleError(file, `learner ${learner} reads ${name}, which the stage chain did not produce as a number`, 'the bundle does not match this code; re-run the config', EXIT.config);
  return (c as NumericColumn).values;
}
