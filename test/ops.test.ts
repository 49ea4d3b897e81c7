/**
 * Nightly operation: the run lock, retention (prune) and the scheduler. The rules checked are this
 * project's own (README "Nightly operation"; common practice, no source).
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { hostname } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { Cache } from '../pipeline/cache.js';
import { EXIT } from '../pipeline/errors.js';
import { RunLock, RunLockedError, lockPath } from '../pipeline/ops/lock.js';
import { applyPrune, planPrune } from '../pipeline/ops/prune.js';
import { Scheduler, type ScheduleEvent } from '../pipeline/ops/schedule.js';
import { generateDemo } from '../data-demo/generate.js';
import { tempDir } from './helpers/temp.js';

/** A pid that certainly belonged to a process that has exited. */
function deadPid(): number {
  const pid = spawnSync(process.execPath, ['-e', '0']).pid;
  if (pid === undefined) throw new Error('could not spawn');
  return pid;
}

function key(n: number): string {
  return n.toString(16).padStart(64, '0');
}

function fakeRun(runs: string, id: string, name: string, created: string, keys: string[]): void {
  mkdirSync(join(runs, id), { recursive: true });
  writeFileSync(join(runs, id, 'manifest.json'), JSON.stringify({ name, created, steps: keys.map((k) => ({ step: 's', key: k, hit: false, seconds: 0 })) }));
}

describe('run lock', () => {
  it('excludes a second holder while the first is alive, and releases', () => {
    const runs = tempDir('lock');
    const a = RunLock.acquire(runs, 'demo');
    expect(a.takeOver).toBeUndefined();
    const owner = JSON.parse(readFileSync(lockPath(runs, 'demo'), 'utf8')) as { pid: number; hostname: string };
    expect(owner.pid).toBe(process.pid);
    expect(owner.hostname).toBe(hostname());
    let err: unknown;
    try {
      RunLock.acquire(runs, 'demo');
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(RunLockedError);
    expect((err as RunLockedError).exitCode).toBe(EXIT.locked);
    // Another name is a different lock.
    RunLock.acquire(runs, 'other').release();
    a.release();
    expect(existsSync(lockPath(runs, 'demo'))).toBe(false);
    RunLock.acquire(runs, 'demo').release();
  });

  it('takes over a lock whose pid is gone on this host, but not one from another host', () => {
    const runs = tempDir('lock-stale');
    mkdirSync(join(runs, '.locks'));
    const pid = deadPid();
    writeFileSync(lockPath(runs, 'demo'), JSON.stringify({ pid, started: '2024-01-01T00:00:00Z', hostname: hostname(), name: 'demo' }));
    const lock = RunLock.acquire(runs, 'demo');
    expect(lock.takeOver?.previous.pid).toBe(pid);
    lock.release();
    writeFileSync(lockPath(runs, 'demo'), JSON.stringify({ pid, started: '2024-01-01T00:00:00Z', hostname: `not-${hostname()}`, name: 'demo' }));
    expect(() => RunLock.acquire(runs, 'demo')).toThrow(RunLockedError);
  });

  it('release never removes a successor lock', () => {
    const runs = tempDir('lock-successor');
    const a = RunLock.acquire(runs, 'demo');
    const successor = JSON.stringify({ pid: process.pid, started: 'later', hostname: hostname(), name: 'demo' });
    writeFileSync(lockPath(runs, 'demo'), successor);
    a.release();
    expect(readFileSync(lockPath(runs, 'demo'), 'utf8')).toBe(successor);
  });
});

describe('prune', () => {
  it('keeps the newest N per name and the champion, removes dead partials and unreferenced cache entries', () => {
    const dir = tempDir('prune');
    const runs = join(dir, 'runs');
    const cacheDir = join(dir, 'cache');
    const cache = new Cache(cacheDir);
    for (let i = 1; i <= 6; i++) cache.put(key(i), new Map([['x.bin', new Uint8Array([i])]]));
    fakeRun(runs, '20240101T000000Z-a', 'a', '2024-01-01T00:00:00.000Z', [key(1)]);
    fakeRun(runs, '20240102T000000Z-a', 'a', '2024-01-02T00:00:00.000Z', [key(2)]);
    fakeRun(runs, '20240103T000000Z-a', 'a', '2024-01-03T00:00:00.000Z', [key(3)]);
    fakeRun(runs, '20240104T000000Z-a', 'a', '2024-01-04T00:00:00.000Z', [key(3), key(4)]);
    fakeRun(runs, '20240101T000000Z-b', 'b', '2024-01-01T00:00:00.000Z', [key(5)]);
    mkdirSync(join(runs, 'champions'));
    writeFileSync(join(runs, 'champions', 'a.json'), JSON.stringify({ run: '20240101T000000Z-a' }));
    const dead = `.partial-20240105T000000Z-a-${deadPid()}`;
    mkdirSync(join(runs, dead));
    mkdirSync(join(cacheDir, 'tmp', `${key(9)}-${deadPid()}-abc`), { recursive: true });

    const plan = planPrune(runs, cacheDir, 2);
    expect(plan.runs).toEqual(['20240102T000000Z-a']);
    expect(plan.partials).toEqual([dead]);
    // Kept: a's newest two (keys 3, 4), a's champion (key 1), b's only run (key 5).
    expect(plan.cacheEntries).toEqual([key(2), key(6)]);
    expect(plan.cacheTmp).toHaveLength(1);
    expect(plan.cacheSkipped).toBeUndefined();
    applyPrune(plan, runs, cacheDir);
    expect(existsSync(join(runs, '20240102T000000Z-a'))).toBe(false);
    expect(existsSync(join(runs, '20240101T000000Z-a'))).toBe(true);
    expect(existsSync(join(runs, dead))).toBe(false);
    expect(cache.keys()).toEqual([key(1), key(3), key(4), key(5)]);
    expect(planPrune(runs, cacheDir, 2)).toEqual({ runs: [], partials: [], cacheEntries: [], cacheTmp: [] });
  });

  it('leaves the cache alone while a run is in progress', () => {
    const dir = tempDir('prune-live');
    const runs = join(dir, 'runs');
    const cacheDir = join(dir, 'cache');
    new Cache(cacheDir).put(key(1), new Map([['x.bin', new Uint8Array([1])]]));
    mkdirSync(join(runs, `.partial-20240105T000000Z-a-${process.pid}`), { recursive: true });
    const plan = planPrune(runs, cacheDir, 1);
    expect(plan.partials).toEqual([]);
    expect(plan.cacheEntries).toEqual([]);
    expect(plan.cacheSkipped).toMatch(/in progress/);
  });
});

describe('scheduler', () => {
  it('runs on schedule, skips ticks while a run is in progress, and stops cleanly mid-run', async () => {
    const dir = tempDir('schedule');
    // 12,000 rows: a run takes ~2 s here, well over the one-second tick (1,500 rows took ~0.8 s
    // once cache writes stopped syncing, and then no tick fell inside a run)
    await generateDemo({ rows: 12_000, seed: 5, out: join(dir, 'data.csv') });
    const configFile = join(dir, 'config.yaml');
    writeFileSync(configFile, 'name: nightly\ndata:\n  file: data.csv\n  target: missed_payment_90d\n  positive: "yes"\n  id: application_id\n  columns:\n    applied_on: date\n    registered_on: date\n    owner_age_band: protected\nfeatures:\n  rate-encode: {}\n  tree-bins: {}\nlearners:\n  lr:\n    kind: logistic\n');
    const events: ScheduleEvent[] = [];
    const runs = join(dir, 'runs');
    // Every second: a run lasts longer than that, so ticks must be skipped rather than overlap.
    const s = new Scheduler({ cron: '* * * * * *', configFile, runsDir: runs, cacheDir: join(dir, 'cache'), workers: 1, log: (e) => events.push(e), promoteIfBetter: false });
    s.start();
    const waitFor = async (pred: () => boolean) => {
      for (let i = 0; i < 600 && !pred(); i++) await new Promise((r) => setTimeout(r, 100));
    };
    await waitFor(() => events.some((e) => e.event === 'run-done'));
    await waitFor(() => s.busy);
    await s.stop('SIGTERM');
    const kinds = events.map((e) => e.event);
    expect(kinds).toContain('run-done');
    expect(kinds).toContain('tick-skipped');
    // Never two run-starts without a finish in between.
    let open = 0;
    for (const k of kinds) {
      if (k === 'run-start') open++;
      if (k === 'run-done' || k === 'run-failed') open--;
      expect(open).toBeLessThanOrEqual(1);
    }
    const stopped = events[events.length - 1];
    expect(stopped).toEqual({ event: 'stopped', signal: 'SIGTERM', abandonedRun: true });
    const failed = events.filter((e) => e.event === 'run-failed');
    expect(failed).toHaveLength(1);
    expect(failed[0]).toMatchObject({ exitCode: EXIT.interrupted });
    // The abandoned run left no partial folder and no lock.
    expect(readdirSync(runs).filter((n) => n.startsWith('.partial-'))).toEqual([]);
    expect(existsSync(lockPath(runs, 'nightly'))).toBe(false);
  }, 120_000);

  it('rejects a bad cron pattern as a usage error', () => {
    expect(() => new Scheduler({ cron: '61 2 * * *', configFile: 'x.yaml', runsDir: 'r', cacheDir: 'c', workers: 1, log: () => undefined, promoteIfBetter: false })).toThrow(/not a cron pattern/);
  });
});
