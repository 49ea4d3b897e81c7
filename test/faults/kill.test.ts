/**
 * Fault injection against the built CLI (`npm run test:faults`; not part of `npm test`).
 *
 * A run is SIGKILLed at 20 seeded-random moments spread over an uninterrupted run's duration, and
 * rerun after each kill. The properties checked are the crash-safety promises of DESIGN.md
 * ("Cache and determinism", "Run folder"): a killed run never leaves a cache entry that fails its
 * digest nor a folder that looks finished, its lock is taken over by the rerun, and the rerun's
 * outputs are byte-identical to an uninterrupted run's.
 */
import { spawn, spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readFileSync, readdirSync, statSync, writeFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { generateDemo } from '../../data-demo/generate.js';
import { Cache } from '../../pipeline/cache.js';
import { createRng } from '../../pipeline/rng.js';
import { finishedRuns } from '../../pipeline/ops/prune.js';
import { tempDir } from '../helpers/temp.js';

const ROOT = resolve(import.meta.dirname, '..', '..');
const CLI = join(ROOT, 'dist', 'pipeline', 'cli.js');
const OUTPUTS = ['oof.csv', 'holdout.csv', 'metrics.json'] as const;
const KILLS = 20;
/** `npm test` picks this file up too (vitest.config.ts includes test/**); only `npm run test:faults` sets this. */
const ENABLED = process.env.FOLDSTACK_FAULTS === '1';

interface Result {
  code: number | null;
  signal: NodeJS.Signals | null;
  stderr: string;
  stdout: string;
  ms: number;
}

function cli(args: readonly string[], killAfterMs?: number): Promise<Result> {
  return new Promise((done) => {
    const t0 = performance.now();
    const child = spawn(process.execPath, [CLI, ...args], { stdio: ['ignore', 'pipe', 'pipe'] });
    let stdout = '';
    let stderr = '';
    child.stdout.on('data', (b: Buffer) => (stdout += b.toString()));
    child.stderr.on('data', (b: Buffer) => (stderr += b.toString()));
    const timer = killAfterMs === undefined ? undefined : setTimeout(() => child.kill('SIGKILL'), killAfterMs);
    child.on('close', (code, signal) => {
      if (timer) clearTimeout(timer);
      done({ code, signal, stdout, stderr, ms: performance.now() - t0 });
    });
  });
}

function config(dir: string, name: string, features: string, learners: string): string {
  const file = join(dir, `${name}.yaml`);
  writeFileSync(
    file,
    `name: ${name}
seed: 3
data:
  file: data.csv
  target: missed_payment_90d
  positive: "yes"
  id: application_id
  columns:
    applied_on: date
    registered_on: date
    owner_age_band: protected
split:
  folds: 5
  holdout:
    fraction: 0.2
features:
${features}
learners:
${learners}
`,
  );
  return file;
}

function runArgs(cfg: string, runs: string, cache: string): string[] {
  return ['run', cfg, '--workers', '2', '--runs-dir', runs, '--cache-dir', cache];
}

function lastLine(s: string): string {
  const lines = s.trim().split('\n');
  return lines[lines.length - 1];
}

function outputsOf(runDir: string): Map<string, Buffer> {
  return new Map(OUTPUTS.map((f) => [f, readFileSync(join(runDir, f))]));
}

function expectSameOutputs(runDir: string, reference: Map<string, Buffer>): void {
  for (const [f, bytes] of reference) expect(readFileSync(join(runDir, f)).equals(bytes), `${runDir}/${f} differs from the uninterrupted run`).toBe(true);
}

/** Every entry of the runs folder is a partial, the lock folder, or a finished run with all its files. */
function expectNoHalfFinishedFolder(runs: string): void {
  for (const n of readdirSync(runs)) {
    if (n === '.locks' || n.startsWith('.partial-')) continue;
    for (const f of ['manifest.json', ...OUTPUTS]) expect(existsSync(join(runs, n, f)), `${n} looks finished but lacks ${f}`).toBe(true);
    const manifest = JSON.parse(readFileSync(join(runs, n, 'manifest.json'), 'utf8')) as { complete?: unknown };
    expect(manifest.complete).toBe(true);
  }
}

/** Every entry in place reads back with valid digests (a torn entry would be discarded: key count drops). */
function expectEveryCacheEntryValid(cacheDir: string): void {
  const cache = new Cache(cacheDir);
  const keys = cache.keys();
  for (const k of keys) expect(cache.get(k), `cache entry ${k} failed its digest check`).toBeDefined();
  expect(cache.keys()).toEqual(keys);
}

let work: string;
let cfgA: string;
let cfgB: string;

beforeAll(async () => {
  if (!ENABLED) return;
  // tsc emits even when other files have type errors; what matters is that the CLI exists.
  spawnSync(process.execPath, [join(ROOT, 'node_modules', 'typescript', 'bin', 'tsc'), '-p', join(ROOT, 'tsconfig.json')], { cwd: ROOT, stdio: 'ignore' });
  expect(existsSync(CLI)).toBe(true);
  work = tempDir('faults');
  await generateDemo({ rows: 1200, seed: 11, out: join(work, 'data.csv') });
  cfgA = config(work, 'fa', '  dates:\n    as_of: applied_on\n  rate-encode: {}\n  tree-bins: {}', '  lr:\n    kind: logistic');
  cfgB = config(work, 'fb', '  rate-encode:\n    smoothing: 5\n  tree-bins: {}', '  lr:\n    kind: logistic\n    l2: 3');
}, 240_000);

describe.skipIf(!ENABLED)('SIGKILL at random moments, then rerun', () => {
  it('never reads a torn cache entry, never leaves a finished-looking half folder, takes over the lock, and reproduces the outputs', async () => {
    const ref = await cli(runArgs(cfgA, join(work, 'ref-runs'), join(work, 'ref-cache')));
    expect(ref.code, ref.stderr).toBe(0);
    const reference = outputsOf(lastLine(ref.stdout));
    // A second cold run: the first pays for disk and JIT warm-up, so the shorter one is the better span.
    const again = await cli(runArgs(cfgA, join(work, 'ref-runs'), join(work, 'ref-cache-2')));
    expect(again.code, again.stderr).toBe(0);
    expectSameOutputs(lastLine(again.stdout), reference);
    const duration = 0.9 * Math.min(ref.ms, again.ms);

    const runs = join(work, 'kill-runs');
    mkdirSync(runs);
    const rng = createRng(20240601, 'fault-injection');
    let killedMidRun = 0;
    let takeOvers = 0;
    let finished = 0;
    for (let i = 0; i < KILLS; i++) {
      // Moments spread evenly over the run (one per twentieth), jittered within their slot.
      const at = ((i + rng.next()) / KILLS) * duration;
      // A fresh cache per round, so each kill lands in a cold run that is writing entries.
      const cacheDir = join(work, `cache-${i}`);
      const killed = await cli(runArgs(cfgA, runs, cacheDir), at);
      if (killed.signal === 'SIGKILL') killedMidRun++;
      else finished++;
      expectNoHalfFinishedFolder(runs);
      expectEveryCacheEntryValid(cacheDir);
      const lockLeft = existsSync(join(runs, '.locks', 'fa.lock'));

      const rerun = await cli(runArgs(cfgA, runs, cacheDir));
      expect(rerun.code, rerun.stderr).toBe(0);
      finished++;
      if (lockLeft) {
        expect(rerun.stderr).toMatch(/took over the stale lock/);
        takeOvers++;
      }
      expect(existsSync(join(runs, '.locks', 'fa.lock'))).toBe(false);
      expectSameOutputs(lastLine(rerun.stdout), reference);
      expectEveryCacheEntryValid(cacheDir);
    }
    // The listing counts finished folders only; partials of killed runs are not runs.
    expect(finishedRuns(runs).length).toBe(finished);
    // Most moments must land inside the run, or the test proves little (startup and exit are short).
    expect(killedMidRun).toBeGreaterThanOrEqual(15);
    expect(takeOvers).toBeGreaterThanOrEqual(10);
    console.log(`uninterrupted run ${(duration / 1000).toFixed(1)}s; ${killedMidRun} kills mid-run, ${takeOvers} lock takeovers`);
  }, 280_000);
});

describe.skipIf(!ENABLED)('two configs at once on one cache', () => {
  it('both finish with the outputs of their solo runs', async () => {
    const soloA = await cli(runArgs(cfgA, join(work, 'solo-runs'), join(work, 'solo-cache-a')));
    const soloB = await cli(runArgs(cfgB, join(work, 'solo-runs'), join(work, 'solo-cache-b')));
    expect(soloA.code, soloA.stderr).toBe(0);
    expect(soloB.code, soloB.stderr).toBe(0);
    const shared = join(work, 'shared-cache');
    const [a, b] = await Promise.all([cli(runArgs(cfgA, join(work, 'both-runs'), shared)), cli(runArgs(cfgB, join(work, 'both-runs'), shared))]);
    expect(a.code, a.stderr).toBe(0);
    expect(b.code, b.stderr).toBe(0);
    expectSameOutputs(lastLine(a.stdout), outputsOf(lastLine(soloA.stdout)));
    expectSameOutputs(lastLine(b.stdout), outputsOf(lastLine(soloB.stdout)));
    expectEveryCacheEntryValid(shared);
  }, 120_000);
});

describe.skipIf(!ENABLED)('runs folder that cannot be written', () => {
  // Tests run as root, and root ignores permission bits (chmod 555 would not stop a write), so the
  // runs folder is put under a regular file: every mkdir there fails with ENOTDIR whoever we are.
  it('fails with one error line, one hint line, a non-zero exit, and leaves the cache untouched', async () => {
    const cacheDir = join(work, 'ref-cache');
    const before = snapshot(cacheDir);
    const blocker = join(work, 'a-file');
    writeFileSync(blocker, 'not a folder\n');
    const r = await cli(runArgs(cfgA, join(blocker, 'runs'), cacheDir));
    expect(r.code).not.toBe(0);
    const lines = r.stderr.trimEnd().split('\n');
    expect(lines).toHaveLength(2);
    expect(lines[0]).toMatch(/^error: .*ENOTDIR/);
    expect(lines[1]).toMatch(/^hint: .*writable/);
    expect(snapshot(cacheDir)).toEqual(before);
  });
});

/** Every path under a folder with its size and mtime. */
function snapshot(dir: string): string[] {
  const out: string[] = [];
  const walk = (d: string) => {
    for (const n of readdirSync(d).sort()) {
      const p = join(d, n);
      const st = statSync(p);
      out.push(`${p} ${st.size} ${st.mtimeMs}`);
      if (st.isDirectory()) walk(p);
    }
  };
  mkdirSync(dir, { recursive: true });
  walk(dir);
  return out;
}
