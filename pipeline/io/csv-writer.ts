/**
 * Writing CSV files the reader reads back cell for cell.
 *
 * Numbers are formatted deterministically (`formatNumber`), text is quoted per RFC 4180 only when
 * it must be, and lines end in LF. `writeCsvAtomic` streams rows in chunks into a temporary file
 * beside the target, fsyncs it and renames it over the target, so a crash leaves either the old
 * file or the complete new one, never a half-written file under the final name.
 */
import { open, rename, unlink, type FileHandle } from 'node:fs/promises';
import { dirname } from 'node:path';
import { EXIT, FoldstackError } from '../errors.js';
import { parseDecimal } from './cells.js';

export type CsvColumn = Float64Array | Uint8Array | Int32Array | readonly string[];

export interface CsvWriteOptions {
  /**
   * Prefix text cells (and header names) that a spreadsheet would run as a formula with a single
   * quote. Text that is a plain decimal number is left alone, as are numeric columns.
   */
  readonly neutralizeFormulas?: boolean;
}

export class CsvWriteError extends FoldstackError {
  constructor(
    readonly path: string,
    problem: string,
  ) {
    super(`${path}: ${problem}`, 'this is a bug in the code that asked for the file; please report it', EXIT.runFailure);
  }
}

/** Characters written per `write` call: large enough to amortize the call, small enough to stream. */
const CHUNK_CHARS = 1 << 20;

/**
 * NaN → empty field (the reader's missing value); otherwise `String(x)`, the shortest text that
 * reads back to the same double (ECMAScript Number::toString), so integers have no `.0` and
 * very large or small magnitudes use exponent form (`1e+21`, `1e-7`), which the reader accepts.
 * -0 is written as `0`; infinities as `Infinity` / `-Infinity`.
 */
export function formatNumber(x: number): string {
  return x !== x ? '' : String(x);
}

const NEEDS_QUOTES = /[",\r\n]/;
const ALL_QUOTES = /"/g;

/** RFC 4180 §2: enclose in double quotes when the field holds a comma, quote, CR or LF; double inner quotes. */
export function quoteField(s: string): string {
  return NEEDS_QUOTES.test(s) ? `"${s.replace(ALL_QUOTES, '""')}"` : s;
}

const EQUALS = 61;
const PLUS = 43;
const MINUS = 45;
const AT = 64;
const TAB = 9;
const CR = 13;

/**
 * OWASP "CSV Injection" guidance: a cell starting with `=`, `+`, `-`, `@`, tab or carriage return
 * can be run as a formula by spreadsheet programs, so it is prefixed with a single quote, which
 * makes them show it as text. Text that is a plain decimal number (`-3.5`) cannot be a formula
 * and keeps its value.
 */
export function neutralizeFormula(s: string): string {
  if (s.length === 0) return s;
  const c = s.charCodeAt(0);
  if (c !== EQUALS && c !== PLUS && c !== MINUS && c !== AT && c !== TAB && c !== CR) return s;
  const x = parseDecimal(s);
  return x - x === 0 ? s : `'${s}`;
}

type CellWriter = (row: number) => string;

function cellWriter(column: CsvColumn, neutralize: boolean): CellWriter {
  if (column instanceof Float64Array) return (r) => formatNumber(column[r]);
  if (column instanceof Uint8Array || column instanceof Int32Array) return (r) => String(column[r]);
  if (neutralize) return (r) => quoteField(neutralizeFormula(column[r]));
  return (r) => quoteField(column[r]);
}

/** `write` may write less than asked for; loop until every byte is out. */
async function writeAll(handle: FileHandle, text: string): Promise<void> {
  const bytes = Buffer.from(text, 'utf8');
  let offset = 0;
  while (offset < bytes.length) {
    const { bytesWritten } = await handle.write(bytes, offset, bytes.length - offset);
    offset += bytesWritten;
  }
}

async function fsyncDirectory(dir: string): Promise<void> {
  // Makes the rename itself durable. Windows cannot open a directory for syncing; there the
  // rename is already as durable as the platform allows.
  if (process.platform === 'win32') return;
  const handle = await open(dir, 'r');
  try {
    await handle.sync();
  } finally {
    await handle.close();
  }
}

export async function writeCsvAtomic(
  path: string,
  header: readonly string[],
  columns: readonly CsvColumn[],
  options: CsvWriteOptions = {},
): Promise<void> {
  if (header.length !== columns.length) {
    throw new CsvWriteError(path, `${header.length} header names for ${columns.length} columns`);
  }
  const nRows = columns.length === 0 ? 0 : columns[0].length;
  columns.forEach((c, i) => {
    if (c.length !== nRows) {
      throw new CsvWriteError(path, `column "${header[i]}" has ${c.length} rows, the first column ${nRows}`);
    }
  });
  const neutralize = options.neutralizeFormulas === true;
  const writers = columns.map((c) => cellWriter(c, neutralize));
  const nCols = writers.length;
  const tmp = `${path}.tmp-${process.pid}`;
  const handle = await open(tmp, 'w');
  try {
    let text = header.map((h) => quoteField(neutralize ? neutralizeFormula(h) : h)).join(',') + '\n';
    for (let r = 0; r < nRows; r++) {
      let line = nCols > 0 ? writers[0](r) : '';
      for (let c = 1; c < nCols; c++) line += ',' + writers[c](r);
      // An empty line would be skipped by the reader; a quoted empty field keeps the row.
      text += (line === '' ? '""' : line) + '\n';
      if (text.length >= CHUNK_CHARS) {
        await writeAll(handle, text);
        text = '';
      }
    }
    if (text.length > 0) await writeAll(handle, text);
    await handle.sync();
  } catch (err) {
    await handle.close();
    // Best effort: the original error is the one worth reporting.
    await unlink(tmp).catch(() => undefined);
    throw err;
  }
  await handle.close();
  await rename(tmp, path);
  await fsyncDirectory(dirname(path));
}
