/**
 * A run folder is built under a hidden `.partial-…` name and renamed into place only when every
 * file is written, so a crashed or killed run never leaves a folder that looks finished.
 */
import { mkdirSync, renameSync, rmSync, writeFileSync, openSync, fsyncSync, closeSync, existsSync } from 'node:fs';
import { join } from 'node:path';
import { gather, type Frame } from './frame.js';
import type { Plan } from './plan.js';
import { writeCsvAtomic } from './io/csv-writer.js';

export class RunFolder {
  private constructor(
    readonly runsDir: string,
    readonly id: string,
    readonly created: string,
    private readonly partial: string,
  ) {}

  /** `<runsDir>/<UTC timestamp>-<name>`; a numeric suffix keeps two runs in one second apart. */
  static begin(runsDir: string, name: string, now: Date): RunFolder {
    mkdirSync(runsDir, { recursive: true });
    const stamp = now.toISOString().replace(/[-:]/g, '').replace(/\.\d+Z$/, 'Z');
    let id = `${stamp}-${name}`;
    for (let i = 2; existsSync(join(runsDir, id)); i++) id = `${stamp}-${name}-${i}`;
    const partial = join(runsDir, `.partial-${id}-${process.pid}`);
    mkdirSync(partial, { recursive: true });
    return new RunFolder(runsDir, id, now.toISOString(), partial);
  }

  path(file: string): string {
    return join(this.partial, file);
  }

  writeJson(file: string, value: unknown): void {
    const p = this.path(file);
    writeFileSync(p, JSON.stringify(value, null, 2) + '\n');
    syncFile(p);
  }

  async writeTable(name: string, table: { header: readonly string[]; rows: readonly (readonly (string | number)[])[] }): Promise<void> {
    const cols = table.header.map((_, j) => table.rows.map((r) => String(r[j])));
    await writeCsvAtomic(this.path(`${name}.csv`), table.header, cols);
  }

  /** `oof.csv`: id, fold, target, one column per learner, stack — development rows in file order. */
  async writeOof(frame: Frame, plan: Plan, learners: readonly string[], preds: readonly Float64Array[], stack: Float64Array): Promise<void> {
    const rows = plan.split.dev;
    const fold = new Uint8Array(rows.length);
    for (let i = 0; i < rows.length; i++) fold[i] = plan.split.devFold[i] + 1;
    await writeCsvAtomic(this.path('oof.csv'), ['id', 'fold', 'target', ...learners, 'stack'], [
      Array.from(rows, (r) => frame.ids[r]),
      fold,
      gather(frame.target, rows),
      ...preds.map((p) => gather(p, rows)),
      stack,
    ]);
  }

  /** `holdout.csv`: id, target, one column per learner, stack — holdout rows in file order. */
  async writeHoldout(frame: Frame, plan: Plan, learners: readonly string[], preds: readonly Float64Array[], stack: Float64Array): Promise<void> {
    const rows = plan.split.holdout;
    await writeCsvAtomic(this.path('holdout.csv'), ['id', 'target', ...learners, 'stack'], [
      Array.from(rows, (r) => frame.ids[r]),
      gather(frame.target, rows),
      ...preds.map((p) => gather(p, rows)),
      stack,
    ]);
  }

  /** Rename into place; returns the finished folder's path. */
  finish(): string {
    const final = join(this.runsDir, this.id);
    syncDir(this.partial);
    renameSync(this.partial, final);
    syncDir(this.runsDir);
    return final;
  }

  abandon(): void {
    rmSync(this.partial, { recursive: true, force: true });
  }
}

function syncFile(p: string): void {
  const fd = openSync(p, 'r');
  try {
    fsyncSync(fd);
  } finally {
    closeSync(fd);
  }
}

function syncDir(p: string): void {
  syncFile(p);
}
