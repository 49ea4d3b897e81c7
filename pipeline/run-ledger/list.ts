/**
 * The finished runs in a runs folder, newest first, summarised from their own files. Folders
 * being built (`.partial-*`) are not runs yet and are passed over silently; a visible folder that
 * is not a finished run is reported as skipped with the reason, so nothing disappears unexplained.
 */
import { existsSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { CHAMPIONS_DIR, readChampion } from './champion.js';
import { budgetOf, readRun, RunReadError } from './read.js';

export interface RunSummary {
  readonly id: string;
  readonly dir: string;
  readonly created: string;
  readonly name: string;
  readonly config_digest: string;
  readonly budget: number;
  /** The stack's holdout figures. */
  readonly auc: number | null;
  readonly capture: number | null;
  readonly pauc: number | null;
  /** Learner name → stack weight. */
  readonly weights: Readonly<Record<string, number>>;
  readonly champion: boolean;
}

export interface SkippedFolder {
  readonly id: string;
  readonly reason: string;
}

export interface RunListing {
  readonly runs: readonly RunSummary[];
  readonly skipped: readonly SkippedFolder[];
}

export function listRuns(runsDir: string): RunListing {
  if (!existsSync(runsDir)) return { runs: [], skipped: [] };
  const runs: RunSummary[] = [];
  const skipped: SkippedFolder[] = [];
  const championOf = new Map<string, string | null>();
  for (const entry of readdirSync(runsDir, { withFileTypes: true })) {
    if (!entry.isDirectory() || entry.name.startsWith('.') || entry.name === CHAMPIONS_DIR) continue;
    let run;
    try {
      run = readRun(join(runsDir, entry.name));
    } catch (err) {
      if (!(err instanceof RunReadError)) throw err;
      skipped.push({ id: entry.name, reason: err.message });
      continue;
    }
    const name = run.manifest.name;
    if (!championOf.has(name)) championOf.set(name, readChampion(runsDir, name)?.run ?? null);
    const stack = run.metrics.holdout.stack;
    runs.push({
      id: run.id,
      dir: run.dir,
      created: run.manifest.created,
      name,
      config_digest: run.manifest.config_digest,
      budget: budgetOf(run),
      auc: stack?.auc ?? null,
      capture: stack?.capture ?? null,
      pauc: stack?.pauc ?? null,
      weights: run.metrics.stack.weights,
      champion: championOf.get(name) === run.id,
    });
  }
  // Newest first; the id breaks ties so the order never depends on the file system.
  runs.sort((a, b) => (a.created < b.created ? 1 : a.created > b.created ? -1 : a.id < b.id ? 1 : a.id > b.id ? -1 : 0));
  return { runs, skipped };
}
