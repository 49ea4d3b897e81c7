/**
 * Retention: which run folders, abandoned partial folders and cache entries can go. Planning reads
 * only; `applyPrune` deletes exactly what the plan lists, so `--dry-run` shows the real thing.
 *
 * A cache entry is kept while any kept run's manifest names it in `steps[].key`. While any run is
 * in progress (a live lock or partial folder) the cache is left alone entirely: that run's fresh
 * entries are not in any manifest yet.
 */
import { readdirSync, readFileSync, rmSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { Cache } from '../cache.js';
import { pidAlive, readOwner } from './lock.js';

export interface FinishedRun {
  readonly id: string;
  readonly name: string;
  readonly created: string;
  readonly keys: readonly string[];
}

export interface PrunePlan {
  /** Finished run folder ids to remove, oldest first within each config name. */
  readonly runs: readonly string[];
  /** `.partial-*` folder names whose process is gone. */
  readonly partials: readonly string[];
  readonly cacheEntries: readonly string[];
  /** Names under the cache's `tmp/` whose writer is gone. */
  readonly cacheTmp: readonly string[];
  /** Why the cache was not pruned, when it was not. */
  readonly cacheSkipped?: string;
}

const PARTIAL_RE = /^\.partial-.+-(\d+)$/;
const CACHE_TMP_RE = /^[0-9a-f]{64}-(\d+)-[0-9a-f]+$/;

/** Folders of the runs directory that hold a readable manifest.json. */
export function finishedRuns(runsDir: string): FinishedRun[] {
  const out: FinishedRun[] = [];
  for (const id of listDir(runsDir)) {
    if (id.startsWith('.')) continue;
    let manifest: { name?: unknown; created?: unknown; steps?: unknown };
    try {
      manifest = JSON.parse(readFileSync(join(runsDir, id, 'manifest.json'), 'utf8')) as typeof manifest;
    } catch {
      continue;
    }
    if (typeof manifest.name !== 'string' || typeof manifest.created !== 'string') continue;
    const keys = Array.isArray(manifest.steps) ? manifest.steps.flatMap((s: unknown) => (typeof s === 'object' && s !== null && typeof (s as { key?: unknown }).key === 'string' ? [(s as { key: string }).key] : [])) : [];
    out.push({ id, name: manifest.name, created: manifest.created, keys });
  }
  return out;
}

/** The champion run id of a config name, from `runs/champions/<name>.json` (`{"run": id}`). */
export function championOf(runsDir: string, name: string): string | undefined {
  try {
    const v = JSON.parse(readFileSync(join(runsDir, 'champions', `${name}.json`), 'utf8')) as { run?: unknown };
    return typeof v.run === 'string' ? v.run : undefined;
  } catch {
    return undefined;
  }
}

export function planPrune(runsDir: string, cacheDir: string, keep: number): PrunePlan {
  const byName = new Map<string, FinishedRun[]>();
  for (const r of finishedRuns(runsDir)) byName.set(r.name, [...(byName.get(r.name) ?? []), r]);
  const removeRuns: FinishedRun[] = [];
  const kept: FinishedRun[] = [];
  for (const [name, runs] of [...byName].sort(([a], [b]) => (a < b ? -1 : a > b ? 1 : 0))) {
    const champion = championOf(runsDir, name);
    // Newest first; the id (UTC stamp + suffix) breaks ties between runs created in the same second.
    runs.sort((a, b) => (a.created !== b.created ? (a.created < b.created ? 1 : -1) : a.id < b.id ? 1 : -1));
    runs.forEach((r, i) => (i < keep || r.id === champion ? kept : removeRuns).push(r));
  }
  const runs = removeRuns.reverse().map((r) => r.id);

  const partials: string[] = [];
  let livePartial = false;
  for (const n of listDir(runsDir)) {
    const m = PARTIAL_RE.exec(n);
    if (!m) continue;
    if (pidAlive(Number(m[1]))) livePartial = true;
    else partials.push(n);
  }
  const liveLock = listDir(join(runsDir, '.locks')).some((n) => {
    if (!n.endsWith('.lock')) return false;
    const owner = readOwner(join(runsDir, '.locks', n));
    return owner !== undefined && pidAlive(owner.pid);
  });
  if (livePartial || liveLock) return { runs, partials, cacheEntries: [], cacheTmp: [], cacheSkipped: 'a run is in progress; its new cache entries are not in any manifest yet' };

  const referenced = new Set(kept.flatMap((r) => r.keys));
  const cacheEntries = new Cache(cacheDir).keys().filter((k) => !referenced.has(k));
  const cacheTmp = listDir(join(cacheDir, 'tmp')).filter((n) => {
    const m = CACHE_TMP_RE.exec(n);
    return m === null || !pidAlive(Number(m[1]));
  });
  return { runs, partials, cacheEntries, cacheTmp };
}

export function applyPrune(plan: PrunePlan, runsDir: string, cacheDir: string): void {
  for (const id of plan.runs) rmSync(join(runsDir, id), { recursive: true, force: true });
  for (const n of plan.partials) rmSync(join(runsDir, n), { recursive: true, force: true });
  for (const k of plan.cacheEntries) rmSync(join(cacheDir, k.slice(0, 2), k), { recursive: true, force: true });
  for (const n of plan.cacheTmp) rmSync(join(cacheDir, 'tmp', n), { recursive: true, force: true });
}

/** Bytes under a path (for the summary line). */
export function sizeOf(path: string): number {
  let st;
  try {
    st = statSync(path);
  } catch {
    return 0;
  }
  if (!st.isDirectory()) return st.size;
  return listDir(path).reduce((sum, n) => sum + sizeOf(join(path, n)), 0);
}

function listDir(dir: string): string[] {
  try {
    return readdirSync(dir).sort();
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code === 'ENOENT') return [];
    throw err;
  }
}
