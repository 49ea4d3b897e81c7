/**
 * One run per config name at a time: `<runs>/.locks/<name>.lock`, created with O_EXCL so two
 * processes can never both create it. The file holds the owner's pid, start time and hostname, so a
 * lock left by a killed process on this host can be recognised (its pid is gone) and taken over.
 */
import { closeSync, mkdirSync, openSync, readFileSync, renameSync, unlinkSync, linkSync, writeSync } from 'node:fs';
import { hostname } from 'node:os';
import { join } from 'node:path';
import { EXIT, FoldstackError } from '../errors.js';

export interface LockOwner {
  readonly pid: number;
  readonly started: string;
  readonly hostname: string;
  readonly name: string;
}

export class RunLockedError extends FoldstackError {
  constructor(
    readonly lockFile: string,
    readonly owner: LockOwner | undefined,
  ) {
    const who = owner ? `pid ${owner.pid} on ${owner.hostname}, started ${owner.started}` : 'an owner whose lock file is unreadable';
    const hint = owner && owner.hostname !== hostname() ? `the lock belongs to another host; if that run is dead, delete ${lockFile}` : `wait for it to finish; if you are sure it is dead, delete ${lockFile}`;
    super(`another run of this config is in progress (${who})`, hint, EXIT.locked);
  }
}

/** What happened to a stale lock on the way to acquiring ours (for the caller to log). */
export interface TakeOver {
  readonly previous: LockOwner;
}

export function lockPath(runsDir: string, name: string): string {
  return join(runsDir, '.locks', `${name}.lock`);
}

/** Whether a pid names a live process on this host (EPERM: alive but not ours). */
export function pidAlive(pid: number): boolean {
  if (!Number.isInteger(pid) || pid <= 0) return false;
  try {
    process.kill(pid, 0);
    return true;
  } catch (err) {
    return (err as NodeJS.ErrnoException).code !== 'ESRCH';
  }
}

export function readOwner(file: string): LockOwner | undefined {
  try {
    const v = JSON.parse(readFileSync(file, 'utf8')) as Partial<LockOwner>;
    if (typeof v.pid !== 'number' || typeof v.started !== 'string' || typeof v.hostname !== 'string') return undefined;
    return { pid: v.pid, started: v.started, hostname: v.hostname, name: typeof v.name === 'string' ? v.name : '' };
  } catch {
    return undefined;
  }
}

export class RunLock {
  private released = false;

  private constructor(
    readonly file: string,
    private readonly text: string,
    readonly takeOver: TakeOver | undefined,
  ) {}

  /** Throws RunLockedError while a live process (or one on another host) holds the lock. */
  static acquire(runsDir: string, name: string, now: Date = new Date()): RunLock {
    const file = lockPath(runsDir, name);
    mkdirSync(join(runsDir, '.locks'), { recursive: true });
    const owner: LockOwner = { pid: process.pid, started: now.toISOString(), hostname: hostname(), name };
    const text = JSON.stringify(owner) + '\n';
    let takeOver: TakeOver | undefined;
    // Three rounds cover: create; find a stale lock and move it aside; create again.
    for (let round = 0; round < 3; round++) {
      if (tryCreate(file, text)) return new RunLock(file, text, takeOver);
      let seen: string;
      try {
        seen = readFileSync(file, 'utf8');
      } catch (err) {
        if ((err as NodeJS.ErrnoException).code === 'ENOENT') continue;
        throw err;
      }
      const previous = readOwner(file);
      if (!previous || previous.hostname !== owner.hostname || pidAlive(previous.pid)) throw new RunLockedError(file, previous);
      if (moveAsideIfUnchanged(file, seen)) takeOver = { previous };
    }
    throw new RunLockedError(file, readOwner(file));
  }

  /** Idempotent; removes the file only while it is still ours (never a successor's lock). */
  release(): void {
    if (this.released) return;
    this.released = true;
    try {
      if (readFileSync(this.file, 'utf8') === this.text) unlinkSync(this.file);
    } catch (err) {
      if ((err as NodeJS.ErrnoException).code !== 'ENOENT') throw err;
    }
  }
}

function tryCreate(file: string, text: string): boolean {
  let fd: number;
  try {
    fd = openSync(file, 'wx');
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code === 'EEXIST') return false;
    throw err;
  }
  try {
    writeSync(fd, text);
  } finally {
    closeSync(fd);
  }
  return true;
}

/**
 * Renames the stale lock away, then checks that what moved is what was judged stale: if another
 * process replaced it in between, its live lock is linked back (link fails rather than overwrite).
 */
function moveAsideIfUnchanged(file: string, seen: string): boolean {
  const aside = `${file}.stale-${process.pid}`;
  try {
    renameSync(file, aside);
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code === 'ENOENT') return false;
    throw err;
  }
  const moved = readFileSync(aside, 'utf8');
  if (moved !== seen) {
    try {
      linkSync(aside, file);
    } catch (err) {
      if ((err as NodeJS.ErrnoException).code !== 'EEXIST') throw err;
    }
    unlinkSync(aside);
    return false;
  }
  unlinkSync(aside);
  return true;
}
