/**
 * `npm run bench`: foldstack against the hand-written Python peer (../shared/bench/peer_pipeline.py,
 * scikit-learn + XGBoost) on the same CSVs — the invented demo data at 50k and 200k rows, and the
 * component benchmarks' generated 200k × 30 numeric matrix — measured in the same run on this
 * machine. Prints wall seconds, peak RSS and holdout AUC for both sides, and their ratios.
 * Never part of `npm test`: timings belong here, not in unit tests.
 *
 *   npm run bench                 # 50k and 200k rows
 *   npm run bench -- 50000        # chosen sizes only
 *   npm run bench -- --no-components   # skip the per-component comparisons
 *   npm run bench -- --no-matrix       # skip the whole pipeline on the 200k × 30 numeric matrix
 */
import { existsSync, mkdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { spawnSync } from 'node:child_process';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { generateDemo } from '../../data-demo/generate.js';
import { runComponents, writeBenchMatrix } from './components.js';

const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..', '..');
const out = join(root, 'bench-out');
const peerScript = join(root, '..', 'shared', 'bench', 'peer_pipeline.py');
const python = '/usr/bin/python3';
const SEED = 7;
const MATRIX_ROWS = 200_000;
const MATRIX_COLS = 30;

interface Measured {
  seconds: number;
  rssMb: number;
  auc: number | undefined;
}

/** GNU time reports the child's peak RSS, which no Node API gives for another process. */
function timed(cmd: string, args: string[], cwd: string): { m: Omit<Measured, 'auc'>; stdout: string } {
  const timeFile = join(out, 'time.txt');
  const r = spawnSync('/usr/bin/time', ['-o', timeFile, '-f', '%e %M', cmd, ...args], { cwd, encoding: 'utf8', stdio: ['ignore', 'pipe', 'inherit'], maxBuffer: 1 << 28 });
  if (r.status !== 0) throw new Error(`${cmd} ${args.join(' ')} exited with ${r.status}`);
  const [sec, kb] = readFileSync(timeFile, 'utf8').trim().split('\n').pop()!.split(' ').map(Number);
  return { m: { seconds: sec, rssMb: kb / 1024 }, stdout: r.stdout };
}

function peerAvailable(): boolean {
  if (!existsSync(peerScript) || !existsSync(python)) return false;
  return spawnSync(python, ['-c', 'import sklearn, xgboost, pandas, scipy'], { stdio: 'ignore' }).status === 0;
}

const LEARNERS = `learners:
  lr: {kind: logistic, l2: 1.0}
  cart: {kind: tree, max_depth: 6, min_leaf: 50}
  rf: {kind: forest, trees: 200, max_depth: 8, min_leaf: 20}
  gbm: {kind: boosted, rounds: 300, max_depth: 5, learning_rate: 0.05, subsample: 0.8, colsample: 0.8, early_stop: {rounds: 0}}
stack: {nonnegative: true}
evaluate: {budget: 0.1}
`;

/**
 * The holdout: the peer's own holdout rows when the CSV carries them as HOLDOUT_COLUMN (so both
 * sides are scored on the same rows), otherwise a seeded 20% of foldstack's own.
 */
function splitYaml(sharedHoldout: boolean): string {
  return sharedHoldout ? `split: {folds: 5, holdout: {column: ${HOLDOUT_COLUMN}, from: "${HOLDOUT_FROM}"}}` : 'split: {folds: 5, holdout: {fraction: 0.2}}';
}

/** The same pipeline as the peer: encodings, per-column trees, z-scores, summaries, dates; LR, CART, forest, boosted trees; stack. */
function demoConfig(csv: string, sharedHoldout: boolean): string {
  return `name: bench
seed: ${SEED}
data:
  file: ${csv}
  target: missed_payment_90d
  positive: "yes"
  id: application_id
  columns: {applied_on: date, registered_on: date, owner_age_band: protected${sharedHoldout ? `, ${HOLDOUT_COLUMN}: date` : ''}}
${splitYaml(sharedHoldout)}
features:
  dates: {columns: [applied_on, registered_on], pairs: [[registered_on, applied_on]]}
  rate-encode: {smoothing: 20}
  tree-bins: {max_depth: 3, min_leaf: 0.05, smoothing: 20}
  leaf-z: {}
  summaries: {}
${LEARNERS}`;
}

/** The same pipeline on an all-numeric matrix: per-column trees, z-scores, summaries; the same learners and stack. */
function matrixConfig(csv: string, sharedHoldout: boolean): string {
  return `name: bench-matrix
seed: ${SEED}
data:
  file: ${csv}
  target: y
  positive: "1"${sharedHoldout ? `\n  columns: {${HOLDOUT_COLUMN}: date}` : ''}
${splitYaml(sharedHoldout)}
features:
  tree-bins: {max_depth: 3, min_leaf: 0.05, smoothing: 20}
  leaf-z: {}
  summaries: {}
${LEARNERS}`;
}

/** Marks the peer's holdout rows in the bench's copy of a CSV: a date on or after HOLDOUT_FROM. */
const HOLDOUT_COLUMN = 'peer_holdout';
const HOLDOUT_FROM = '2001-01-01';

/**
 * A copy of `csv` with HOLDOUT_COLUMN set to HOLDOUT_FROM on the rows the peer holds out (its
 * own stratified train_test_split with the bench's seed; the peer drops the column) and a year
 * earlier elsewhere. Both sides are then scored on the same holdout rows.
 */
function withPeerHoldout(csv: string, target: string, positive: string): string {
  const py = [
    'import sys, numpy as np, pandas as pd',
    'from sklearn.model_selection import train_test_split',
    'd = pd.read_csv(sys.argv[1], usecols=[sys.argv[2]], keep_default_na=False, na_values=[""], low_memory=False)[sys.argv[2]]',
    'y = (d.astype(str) == sys.argv[3]).to_numpy().astype(np.int8)',
    'assert d.notna().all(), "the peer drops rows without a target; the bench data has none"',
    '_, hold = train_test_split(np.arange(len(y)), test_size=0.2, stratify=y, random_state=int(sys.argv[4]))',
    'print(" ".join(map(str, np.sort(hold))))',
  ].join('\n');
  const r = spawnSync(python, ['-c', py, csv, target, positive, String(SEED)], { encoding: 'utf8', maxBuffer: 1 << 26 });
  if (r.status !== 0) throw new Error(`peer holdout rows: ${r.stderr.trim().split('\n').pop()}`);
  const held = new Set(r.stdout.trim().split(' ').map(Number));
  const lines = readFileSync(csv, 'utf8').split('\n');
  const rows = lines.filter((l, i) => i === 0 || l.length > 0);
  const outLines = rows.map((l, i) => (i === 0 ? `${l},${HOLDOUT_COLUMN}` : `${l},${held.has(i - 1) ? HOLDOUT_FROM : '2000-01-01'}`));
  const copy = csv.replace(/\.csv$/, '-peer-holdout.csv');
  writeFileSync(copy, outLines.join('\n') + '\n');
  return copy;
}

interface PipelineCase {
  /** File-name stem of the case's config, cache and peer result. */
  readonly name: string;
  /** Printed at the start of its line. */
  readonly label: string;
  readonly csv: string;
  readonly config: string;
  readonly peerArgs: string[];
}

/** One pipeline comparison: foldstack cold and cached, then the peer, on the same CSV; returns the printed line. */
function comparePipelines(c: PipelineCase, peer: boolean): string {
  const cfg = join(out, `bench-${c.name}.yaml`);
  writeFileSync(cfg, c.config);
  const cacheDir = join(out, `cache-${c.name}`);
  rmSync(cacheDir, { recursive: true, force: true });
  const cli = [join(root, 'dist', 'pipeline', 'cli.js'), 'run', cfg, '--workers', '2', '--runs-dir', join(out, 'runs'), '--cache-dir', cacheDir];
  const fs = timed(process.execPath, cli, root);
  const runDir = fs.stdout.trim().split('\n').pop()!;
  const metrics = JSON.parse(readFileSync(join(runDir, 'metrics.json'), 'utf8')) as { holdout: { stack: { auc: number } } };
  const ours: Measured = { ...fs.m, auc: metrics.holdout.stack.auc };
  const warm = timed(process.execPath, cli, root).m;
  let line = `${c.label}: foldstack ${ours.seconds.toFixed(1)} s, ${ours.rssMb.toFixed(0)} MB, stack AUC ${ours.auc?.toFixed(4)}; cached re-run ${warm.seconds.toFixed(1)} s`;
  if (peer) {
    const resFile = join(out, `peer-${c.name}.json`);
    const p = timed(python, [peerScript, '--data', c.csv, ...c.peerArgs, '--seed', String(SEED), '--threads', '2', '--out', resFile], root).m;
    const res = JSON.parse(readFileSync(resFile, 'utf8')) as { metrics: { stack: { roc_auc: number } } };
    line += ` | peer ${p.seconds.toFixed(1)} s, ${p.rssMb.toFixed(0)} MB, stack AUC ${res.metrics.stack.roc_auc.toFixed(4)} | ratio time ${(ours.seconds / p.seconds).toFixed(3)}×, RSS ${(ours.rssMb / p.rssMb).toFixed(3)}× | same holdout rows`;
  }
  return line;
}

async function main(): Promise<void> {
  const sizes = process.argv.slice(2).filter((a) => !a.startsWith('--')).map(Number).filter((n) => Number.isInteger(n) && n > 0);
  const rowsList = sizes.length ? sizes : [50_000, 200_000];
  mkdirSync(out, { recursive: true });
  const peer = peerAvailable();
  if (!peer) process.stderr.write('peer skipped: needs Debian python3-sklearn python3-xgboost python3-pandas python3-scipy and ../shared/bench/peer_pipeline.py\n');
  const lines: string[] = [];
  const report = (line: string): void => {
    process.stdout.write(line + '\n');
    lines.push(line);
  };
  for (const rows of rowsList) {
    const csv = join(out, `demo-${rows}.csv`);
    if (!existsSync(csv)) await generateDemo({ rows, seed: SEED, out: csv });
    const shared = peer ? withPeerHoldout(csv, 'missed_payment_90d', 'yes') : csv;
    const peerArgs = ['--target', 'missed_payment_90d', '--positive', 'yes', '--id', 'application_id', '--date-cols', 'applied_on,registered_on', '--drop-cols', peer ? `owner_age_band,${HOLDOUT_COLUMN}` : 'owner_age_band'];
    report(comparePipelines({ name: String(rows), label: `${rows} rows (demo data)`, csv: shared, config: demoConfig(shared, peer), peerArgs }, peer));
  }
  if (!process.argv.includes('--no-matrix')) {
    // the 200k × 30 numeric matrix of the component benchmarks, through the whole pipeline on both sides
    const csv = join(out, `matrix-${MATRIX_ROWS}x${MATRIX_COLS}.csv`);
    if (!existsSync(csv)) writeBenchMatrix(csv, MATRIX_ROWS, MATRIX_COLS);
    const label = `${MATRIX_ROWS} × ${MATRIX_COLS} numeric matrix`;
    const shared = peer ? withPeerHoldout(csv, 'y', '1') : csv;
    const peerArgs = ['--target', 'y', '--positive', '1', ...(peer ? ['--drop-cols', HOLDOUT_COLUMN] : [])];
    report(comparePipelines({ name: `matrix-${MATRIX_ROWS}x${MATRIX_COLS}`, label, csv: shared, config: matrixConfig(shared, peer), peerArgs }, peer));
  }
  if (!process.argv.includes('--no-components')) {
    for (const line of runComponents(out, peer ? python : undefined, MATRIX_ROWS, MATRIX_COLS)) report(line);
  }
  writeFileSync(join(out, 'summary.txt'), lines.join('\n') + '\n');
}

await main();
