/**
 * Component benchmarks against the general-purpose libraries a modeler would otherwise use,
 * measured in the same run on the same generated matrix (single thread on both sides unless a
 * line says otherwise): per-column trees vs scikit-learn DecisionTreeClassifier, the forest vs
 * RandomForestClassifier, boosted trees vs native XGBoost (hist). Prints time ratios and AUCs.
 */
import { spawnSync } from 'node:child_process';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { performance } from 'node:perf_hooks';
import { createRng } from '../../pipeline/rng.js';
import { auc } from '../../pipeline/metrics/auc.js';
import { stageRegistry, learnerRegistry } from '../../stages/index.js';
import type { Json, Learner, Stage } from '../../stages/types.js';
import { numeric, type Column } from '../../pipeline/frame.js';

export interface ComponentResult {
  readonly line: string;
}

/** n × p numeric matrix with non-linear signal and 5% missing values in a third of the columns. */
function makeData(n: number, p: number, seed: number): { X: Float64Array[]; y: Uint8Array } {
  const rng = createRng(seed, 'bench-matrix');
  const X = Array.from({ length: p }, () => new Float64Array(n));
  const y = new Uint8Array(n);
  for (let i = 0; i < n; i++) {
    let z = -2.2;
    for (let j = 0; j < p; j++) {
      const v = rng.next() * 4 - 2;
      X[j][i] = j % 3 === 0 && rng.next() < 0.05 ? NaN : v;
      if (j < 10) z += (j % 2 === 0 ? 0.35 * v : 0.3 * (v * v - 1.3)) ;
    }
    y[i] = rng.next() < 1 / (1 + Math.exp(-z)) ? 1 : 0;
  }
  return { X, y };
}

/** The components' matrix (seed 1) as a CSV with columns x0..x{p-1}, y; the pipeline bench runs on it too. */
export function writeBenchMatrix(path: string, n: number, p: number): void {
  const { X, y } = makeData(n, p, 1);
  writeCsv(path, X, y);
}

function writeCsv(path: string, X: Float64Array[], y: Uint8Array): void {
  const n = y.length;
  const lines: string[] = [[...X.map((_, j) => `x${j}`), 'y'].join(',')];
  for (let i = 0; i < n; i++) lines.push([...X.map((c) => (Number.isNaN(c[i]) ? '' : String(c[i]))), String(y[i])].join(','));
  writeFileSync(path, lines.join('\n') + '\n');
}

const PY = String.raw`
import sys, time, json
import numpy as np, pandas as pd
from sklearn.tree import DecisionTreeClassifier
from sklearn.ensemble import RandomForestClassifier
from sklearn.metrics import roc_auc_score
import xgboost as xgb
path, ntrain, which = sys.argv[1], int(sys.argv[2]), sys.argv[3].split(',')
d = pd.read_csv(path); y = d.pop('y').values; X = d.values
tr, te = slice(0, ntrain), slice(ntrain, None)
out = {}
if 'trees' in which:
    t = time.perf_counter()
    for j in range(X.shape[1]):
        m = ~np.isnan(X[tr, j])
        DecisionTreeClassifier(max_depth=3, min_samples_leaf=0.05).fit(X[tr][m, j:j+1], y[tr][m])
    out['trees'] = time.perf_counter() - t
if 'forest' in which:
    Xf = np.nan_to_num(X, nan=0.0)
    t = time.perf_counter()
    rf = RandomForestClassifier(n_estimators=200, max_depth=8, min_samples_leaf=20, n_jobs=1, random_state=1).fit(Xf[tr], y[tr])
    out['forest'] = time.perf_counter() - t
    out['forest_auc'] = roc_auc_score(y[te], rf.predict_proba(Xf[te])[:, 1])
if 'boosted' in which:
    t = time.perf_counter()
    b = xgb.XGBClassifier(tree_method='hist', n_estimators=300, max_depth=5, learning_rate=0.05, subsample=0.8,
                          colsample_bytree=0.8, n_jobs=1, base_score=0.5, random_state=1).fit(X[tr], y[tr])
    out['boosted'] = time.perf_counter() - t
    out['boosted_auc'] = roc_auc_score(y[te], b.predict_proba(X[te])[:, 1])
print(json.dumps(out))
`;

function time<T>(fn: () => T): [T, number] {
  const t = performance.now();
  const r = fn();
  return [r, (performance.now() - t) / 1000];
}

export function runComponents(outDir: string, python: string | undefined, n = 200_000, p = 30): string[] {
  const { X, y } = makeData(n, p, 1);
  const nTrain = Math.floor(n * 0.8);
  const train = Uint32Array.from({ length: nTrain }, (_, i) => i);
  const test = Uint32Array.from({ length: n - nTrain }, (_, i) => nTrain + i);
  const names = X.map((_, j) => `x${j}`);
  const lines: string[] = [];
  const ours: Record<string, number> = {};
  const aucs: Record<string, number> = {};

  const treeBins = stageRegistry.get('tree-bins') as Stage<unknown, Json> | undefined;
  if (treeBins) {
    const columns = new Map<string, Column>(names.map((nm, j) => [nm, numeric(nm, X[j])]));
    const config = treeBins.resolveConfig({ max_depth: 3, min_leaf: 0.05 });
    [, ours.trees] = time(() => treeBins.fit({ view: { columns, rows: train }, target: y, inputs: names, config, rng: createRng(1) }));
  }
  const learners: [string, Json][] = [
    ['forest', { trees: 200, max_depth: 8, min_leaf: 20 }],
    ['boosted', { rounds: 300, max_depth: 5, learning_rate: 0.05, subsample: 0.8, colsample: 0.8, early_stop: null }],
  ];
  for (const [kind, cfg] of learners) {
    const learner = learnerRegistry.get(kind) as Learner<unknown, Json> | undefined;
    if (!learner) continue;
    const config = learner.resolveConfig(cfg);
    const [model, secs] = time(() => learner.fit({ features: X, names, rows: train, target: y, config, rng: createRng(1, kind) }));
    ours[kind] = secs;
    const pred = learner.predict(model, X, test);
    aucs[kind] = auc(y.subarray(nTrain), pred) ?? NaN;
  }

  let peer: Record<string, number> = {};
  if (python) {
    const csv = join(outDir, `matrix-${n}x${p}.csv`);
    writeCsv(csv, X, y);
    const r = spawnSync(python, ['-c', PY, csv, String(nTrain), Object.keys(ours).join(',')], { encoding: 'utf8', maxBuffer: 1 << 24 });
    if (r.status === 0) peer = JSON.parse(r.stdout.trim().split('\n').pop()!) as Record<string, number>;
    else lines.push(`component peer failed: ${r.stderr.trim().split('\n').pop()}`);
  }
  const label: Record<string, string> = {
    trees: `per-column trees (depth 3, min leaf 5%) on ${nTrain} × ${p}`,
    forest: `forest (200 trees, depth 8, min leaf 20) on ${nTrain} × ${p}`,
    boosted: `boosted (300 rounds, depth 5, eta 0.05, hist) on ${nTrain} × ${p}`,
  };
  for (const k of Object.keys(ours)) {
    let line = `${label[k]}: foldstack ${ours[k].toFixed(2)} s`;
    if (aucs[k] !== undefined) line += ` (test AUC ${aucs[k].toFixed(4)})`;
    if (peer[k] !== undefined) {
      const lib = k === 'boosted' ? 'XGBoost 1.7 hist' : 'scikit-learn';
      line += ` | ${lib} ${peer[k].toFixed(2)} s`;
      if (peer[`${k}_auc`] !== undefined) line += ` (test AUC ${peer[`${k}_auc`].toFixed(4)})`;
      line += ` | ratio ${(ours[k] / peer[k]).toFixed(3)}×`;
    }
    lines.push(line);
  }
  return lines;
}
