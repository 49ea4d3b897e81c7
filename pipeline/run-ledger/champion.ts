/**
 * The champion pointer: which run currently stands for a config name. One small JSON file per
 * name in `<runsDir>/champions/`, replaced atomically (temp file, fsync, rename, fsync of the
 * folder), so a reader sees the old pointer or the new one, never half of one.
 */
import { closeSync, existsSync, fsyncSync, mkdirSync, openSync, readFileSync, renameSync, writeSync } from 'node:fs';
import { join } from 'node:path';
import { EXIT, FoldstackError } from '../errors.js';
import { budgetOf, readRun, type RunRecord } from './read.js';

export const CHAMPIONS_DIR = 'champions';

export class ChampionError extends FoldstackError {
  constructor(
    message: string,
    hint: string,
    readonly file: string,
  ) {
    super(message, hint, EXIT.data);
  }
}

export interface ChampionPointer {
  readonly format: 1;
  readonly name: string;
  /** Run id: the folder name under the runs folder. */
  readonly run: string;
  readonly promoted_at: string;
  /** Why: `manual` (foldstack promote) or the automatic rule's decision line. */
  readonly reason: string;
  readonly config_digest: string;
  readonly data_digest: string;
  readonly split_digest: string;
  /** The stack's holdout figures at the run's budget. */
  readonly metrics: { readonly budget: number; readonly auc: number | null; readonly capture: number | null; readonly pauc: number | null };
}

export function championFile(runsDir: string, name: string): string {
  return join(runsDir, CHAMPIONS_DIR, `${name}.json`);
}

/** null when the name has no champion yet. */
export function readChampion(runsDir: string, name: string): ChampionPointer | null {
  const file = championFile(runsDir, name);
  if (!existsSync(file)) return null;
  let value: unknown;
  try {
    value = JSON.parse(readFileSync(file, 'utf8'));
  } catch (err) {
    throw new ChampionError(`${file} is not valid JSON: ${(err as Error).message}`, `re-point it with foldstack promote RUN`, file);
  }
  const p = value as Partial<ChampionPointer> | null;
  if (p === null || typeof p !== 'object' || p.format !== 1 || typeof p.run !== 'string' || p.name !== name) {
    throw new ChampionError(`${file} is not a champion pointer for "${name}"`, `re-point it with foldstack promote RUN`, file);
  }
  return p as ChampionPointer;
}

export function writeChampion(runsDir: string, run: RunRecord, reason: string, now: Date = new Date()): ChampionPointer {
  const stack = run.metrics.holdout.stack;
  const pointer: ChampionPointer = {
    format: 1,
    name: run.manifest.name,
    run: run.id,
    promoted_at: now.toISOString(),
    reason,
    config_digest: run.manifest.config_digest,
    data_digest: run.manifest.data.digest,
    split_digest: run.manifest.split.digest,
    metrics: { budget: budgetOf(run), auc: stack?.auc ?? null, capture: stack?.capture ?? null, pauc: stack?.pauc ?? null },
  };
  const dir = join(runsDir, CHAMPIONS_DIR);
  mkdirSync(dir, { recursive: true });
  const file = championFile(runsDir, pointer.name);
  const temp = join(dir, `.${pointer.name}.json.tmp-${process.pid}`);
  const fd = openSync(temp, 'w');
  try {
    writeSync(fd, JSON.stringify(pointer, null, 2) + '\n');
    fsyncSync(fd);
  } finally {
    closeSync(fd);
  }
  renameSync(temp, file);
  const dfd = openSync(dir, 'r');
  try {
    fsyncSync(dfd);
  } finally {
    closeSync(dfd);
  }
  return pointer;
}

/** The champion's run record; null when the name has none. Throws when the pointer names a run that is gone. */
export function readChampionRun(runsDir: string, name: string): RunRecord | null {
  const pointer = readChampion(runsDir, name);
  if (!pointer) return null;
  const dir = join(runsDir, pointer.run);
  if (!existsSync(dir)) {
    throw new ChampionError(`the champion of "${name}" is run ${pointer.run}, but ${dir} no longer exists`, `re-point it with foldstack promote RUN`, championFile(runsDir, name));
  }
  return readRun(dir);
}
