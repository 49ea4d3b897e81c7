/**
 * Per-row reasons: the three input columns that pushed a row's risk up most. When the chain has a
 * `leaf-z` stage, a column's push is its leaf z-score `<col>__z` (its leaf's event rate on the
 * pooled scale); otherwise it is its term in the first logistic learner's linear predictor
 * (`logisticContributions`). Only positive pushes count; fewer than three leave empty reasons.
 */
import type { Column } from '../frame.js';
import { logisticContributions, type LogisticModel } from '../../stages/learners/logistic.js';
import type { LeafZState } from '../../stages/leaf-z.js';
import type { Bundle } from './types.js';
import { BundleError } from './errors.js';
import { EXIT } from '../errors.js';

export const REASON_COUNT = 3;

/** Where reasons come from: named push columns, each mapped to the input column it explains. */
export type ReasonSource =
  | { readonly kind: 'leaf-z'; readonly push: readonly string[]; readonly labels: readonly string[] }
  | { readonly kind: 'logistic'; readonly learner: number; readonly labels: readonly string[] }
  | { readonly kind: 'none' };

export function reasonSource(bundle: Pick<Bundle, 'stages' | 'learners' | 'data'>): ReasonSource {
  const raw = bundle.data.columns.map((c) => c.name);
  const leaf = bundle.stages.find((s) => s.kind === 'leaf-z');
  if (leaf) {
    const cols = (leaf.state as unknown as LeafZState).columns;
    return { kind: 'leaf-z', push: cols.map((c) => `${c}__z`), labels: cols.map((c) => sourceColumn(c, raw)) };
  }
  const j = bundle.learners.findIndex((l) => l.kind === 'logistic');
  if (j >= 0) return { kind: 'logistic', learner: j, labels: bundle.learners[j].features.map((f) => sourceColumn(f, raw)) };
  return { kind: 'none' };
}

/**
 * The input column a derived feature comes from: the longest input name followed by `__`
 * (`sector__rate` → `sector`, `applied_on__to__registered_on` → `applied_on`), else the name itself.
 */
export function sourceColumn(feature: string, raw: readonly string[]): string {
  let best = '';
  for (const r of raw) if (r.length > best.length && (feature === r || feature.startsWith(`${r}__`))) best = r;
  return best === '' ? feature : best;
}

/** `REASON_COUNT` arrays of length nRows: reason k of row i is `out[k][i]` ('' when none). */
export function topReasons(source: ReasonSource, bundle: Pick<Bundle, 'learners'>, columns: ReadonlyMap<string, Column>, nRows: number): string[][] {
  const out = Array.from({ length: REASON_COUNT }, () => new Array<string>(nRows).fill(''));
  if (source.kind === 'none') return out;
  const values = source.kind === 'leaf-z' ? source.push.map((n) => numericOf(columns, n)) : bundle.learners[source.learner].features.map((n) => numericOf(columns, n));
  const model = source.kind === 'logistic' ? (bundle.learners[source.learner].model as unknown as LogisticModel) : undefined;
  const push = new Float64Array(values.length);
  const best = new Int32Array(REASON_COUNT);
  for (let i = 0; i < nRows; i++) {
    if (model) logisticContributions(model, values, i, push);
    else for (let j = 0; j < values.length; j++) push[j] = values[j][i];
    best.fill(-1);
    let taken = 0;
    // Several features of one input column (e.g. `x__bin` and `x__missing`) name it once.
    while (taken < REASON_COUNT) {
      let pick = -1;
      for (let j = 0; j < push.length; j++) {
        if (!(push[j] > 0) || (pick >= 0 && push[j] <= push[pick])) continue;
        if (alreadyNamed(best, taken, source.labels, source.labels[j])) continue;
        pick = j;
      }
      if (pick < 0) break;
      best[taken] = pick;
      out[taken][i] = source.labels[pick];
      taken++;
    }
  }
  return out;
}

function alreadyNamed(best: Int32Array, taken: number, labels: readonly string[], label: string): boolean {
  for (let k = 0; k < taken; k++) if (labels[best[k]] === label) return true;
  return false;
}

function numericOf(columns: ReadonlyMap<string, Column>, name: string): Float64Array {
  const c = columns.get(name);
  if (!c || c.type !== 'numeric') throw new BundleError('bundle.json', `reason column ${name} is not a number column after the stage chain`, 'the bundle does not match this code; re-run the config', EXIT.config);
  return c.values;
}
