/**
 * Streaming RFC 4180 CSV reader.
 *
 * The file is read in chunks (never as one string), decoded as UTF-8 and parsed by a small state
 * machine that carries a partial field and record across chunk boundaries. The sha256 of the raw
 * bytes is computed on the same pass.
 *
 * Three ways in, fastest first:
 * - `scanCsv(path, sink)` hands each record to a `CsvSink` as ranges of text (no string per field)
 *   and resolves to the sha256 hex; the loader uses this.
 * - `new CsvSource(path).batches()` yields the `CsvRecord`s of each chunk as one array, then
 *   `digest()` returns the sha256 hex.
 * - `readCsv(path)` / `CsvSource.records()` yield one record at a time (one await per record).
 *
 * Accepted: comma delimiter; fields optionally wholly enclosed in double quotes, with `""` for a
 * quote inside; quoted fields may hold commas and line breaks. Records end at LF, CRLF or a lone
 * CR. A UTF-8 byte-order mark is dropped. A trailing line break does not make a record, and
 * neither does an empty line anywhere (a record needs at least one character; a lone `""` is a
 * record with one empty field).
 *
 * `CsvRecord.line` is the 1-based physical line the record starts on, counting the line breaks
 * inside quoted fields, so it matches what an editor shows. `CsvError.column` is the 1-based
 * field index within the record.
 */
import { createReadStream } from 'node:fs';
import { createHash } from 'node:crypto';
import { StringDecoder } from 'node:string_decoder';
import { CsvError, quoteText } from './csv-error.js';

export { CsvError } from './csv-error.js';

export interface CsvRecord {
  fields: string[];
  /** 1-based physical line where the record starts. */
  line: number;
}

export interface CsvReadOptions {
  /** Bytes per read from the file; default 1 MiB. Tests use tiny values to force chunk splits. */
  readonly highWaterMark?: number;
  /** Longest field accepted, in UTF-16 code units; default 16 MiB. */
  readonly maxFieldChars?: number;
  /** Check the first record as a header (no empty or duplicate names); default true. */
  readonly header?: boolean;
}

const DEFAULT_HIGH_WATER_MARK = 1 << 20;
const DEFAULT_MAX_FIELD_CHARS = 16 * 1024 * 1024;

const COMMA = 44;
const QUOTE = 34;
const LF = 10;
const CR = 13;
const BOM = 0xfeff;
const REPLACEMENT_CHAR = '\ufffd';
const REPLACEMENT_BYTES = Buffer.from(REPLACEMENT_CHAR, 'utf8');

const FIELD_START = 0;
const UNQUOTED = 1;
const QUOTED = 2;
/** Just saw a quote inside a quoted field: either the first half of `""` or the closing quote. */
const QUOTE_IN_QUOTED = 3;

/**
 * One record as ranges of text: field k is `texts[k].slice(starts[k], ends[k])`, where `texts[k]`
 * is the decoded chunk the field lies in (or a string assembled for a field that spans chunks or
 * holds `""`). A consumer that parses numbers straight from the ranges makes no string per field.
 * The object and its arrays are reused: valid only during the `record` call.
 */
export interface CsvRow {
  /** 1-based physical line where the record starts. */
  readonly line: number;
  readonly count: number;
  readonly texts: readonly string[];
  readonly starts: Int32Array;
  readonly ends: Int32Array;
}

/** Receives each record as the parser completes it; whatever it throws stops the read. */
export interface CsvSink {
  record(row: CsvRow): void;
}

/** The parser's reusable `CsvRow`, grown when a record has more fields than any before. */
class RowBuffer implements CsvRow {
  line = 1;
  count = 0;
  texts: string[] = [];
  starts = new Int32Array(64);
  ends = new Int32Array(64);

  push(text: string, start: number, end: number): void {
    const k = this.count++;
    if (k === this.starts.length) {
      const starts = new Int32Array(k * 2);
      const ends = new Int32Array(k * 2);
      starts.set(this.starts);
      ends.set(this.ends);
      this.starts = starts;
      this.ends = ends;
    }
    this.texts[k] = text;
    this.starts[k] = start;
    this.ends[k] = end;
  }
}

/** The parsing state machine, fed decoded text chunk by chunk. */
class CsvParser {
  private state = FIELD_START;
  /** Text of the current field carried over from earlier chunks (and unescaped quoted text). */
  private pending = '';
  private readonly row = new RowBuffer();
  /** True once the current record has a delimiter or a quote, so it is not an empty line. */
  private inRecord = false;
  /** A record ended on CR at the end of a chunk: a LF starting the next chunk belongs to it. */
  private skipLF = false;
  /** The previous character inside a quoted field was CR, so a following LF is the same break. */
  private prevCR = false;
  line = 1;
  private recordLine = 1;
  private quoteLine = 1;
  recordCount = 0;

  constructor(
    private readonly file: string,
    private readonly maxFieldChars: number,
    private readonly sink: CsvSink,
  ) {}

  feed(s: string): void {
    const n = s.length;
    let i = 0;
    if (this.skipLF) {
      if (n === 0) return;
      this.skipLF = false;
      if (s.charCodeAt(0) === LF) i = 1;
    }
    let state = this.state;
    let start = i;
    while (i < n) {
      if (state === FIELD_START) {
        if (s.charCodeAt(i) === QUOTE) {
          state = QUOTED;
          this.quoteLine = this.line;
          this.inRecord = true;
          this.prevCR = false;
          i++;
          start = i;
          continue;
        }
        state = UNQUOTED;
        start = i;
      }
      if (state === UNQUOTED) {
        let c = 0;
        while (i < n) {
          c = s.charCodeAt(i);
          if (c === COMMA || c === LF || c === CR || c === QUOTE) break;
          i++;
        }
        if (i === n) break;
        if (c === COMMA) {
          this.pushField(s, start, i);
          this.inRecord = true;
        } else if (c === QUOTE) {
          throw this.stray(`a field without quotes, or one wholly enclosed in quotes`, `a quote inside an unquoted field`);
        } else {
          if (this.inRecord || i > start || this.pending !== '') {
            this.pushField(s, start, i);
            this.endRecord();
          }
          i = this.lineBreak(s, i, c);
          state = FIELD_START;
          start = i;
          continue;
        }
        i++;
        state = FIELD_START;
        start = i;
        continue;
      }
      if (state === QUOTED) {
        let prevCR = this.prevCR;
        let c = 0;
        while (i < n) {
          c = s.charCodeAt(i);
          if (c === QUOTE) break;
          if (c === LF) {
            if (!prevCR) this.line++;
            prevCR = false;
          } else if (c === CR) {
            this.line++;
            prevCR = true;
          } else {
            prevCR = false;
          }
          i++;
        }
        this.prevCR = prevCR;
        if (i === n) break;
        this.appendPending(s.slice(start, i));
        state = QUOTE_IN_QUOTED;
        i++;
        start = i;
        continue;
      }
      const c = s.charCodeAt(i);
      if (c === QUOTE) {
        this.appendPending('"');
        state = QUOTED;
        this.prevCR = false;
        i++;
        start = i;
        continue;
      }
      if (c === COMMA) {
        this.pushPending();
        i++;
      } else if (c === LF || c === CR) {
        this.pushPending();
        this.endRecord();
        i = this.lineBreak(s, i, c);
      } else {
        throw this.stray('a comma or the end of the line after a closing quote', quoteText(s.slice(i, i + 10)));
      }
      state = FIELD_START;
      start = i;
    }
    if (state === UNQUOTED || state === QUOTED) this.appendPending(s.slice(start, n));
    this.state = state;
  }

  /** End of input: close the last record, or report a quote that never closed. */
  finish(): void {
    if (this.state === QUOTED) {
      throw new CsvError({
        file: this.file,
        line: this.quoteLine,
        column: this.row.count + 1,
        expected: `a closing quote for the field opened on line ${this.quoteLine}`,
        found: 'the end of the file',
        hint: `look for a stray " on line ${this.quoteLine}; a quote inside a quoted field must be doubled ("")`,
      });
    }
    if (this.state === QUOTE_IN_QUOTED || this.state === UNQUOTED || this.inRecord) {
      this.pushPending();
      this.endRecord();
    }
    this.state = FIELD_START;
  }

  private pushField(s: string, start: number, end: number): void {
    if (this.pending === '') {
      if (end - start > this.maxFieldChars) throw this.tooLarge();
      this.row.push(s, start, end);
      return;
    }
    this.appendPending(s.slice(start, end));
    this.pushPending();
  }

  private pushPending(): void {
    const text = this.pending;
    this.pending = '';
    this.row.push(text, 0, text.length);
  }

  private appendPending(text: string): void {
    this.pending += text;
    if (this.pending.length > this.maxFieldChars) throw this.tooLarge();
  }

  private endRecord(): void {
    const row = this.row;
    row.line = this.recordLine;
    this.sink.record(row);
    row.count = 0;
    this.inRecord = false;
    this.recordCount++;
  }

  /** Steps over a LF, CRLF or lone CR at `i` and starts the next record's line. */
  private lineBreak(s: string, i: number, c: number): number {
    this.line++;
    this.recordLine = this.line;
    if (c === LF) return i + 1;
    if (i + 1 < s.length) return s.charCodeAt(i + 1) === LF ? i + 2 : i + 1;
    this.skipLF = true;
    return i + 1;
  }

  private stray(expected: string, found: string): CsvError {
    return new CsvError({
      file: this.file,
      line: this.line,
      column: this.row.count + 1,
      expected,
      found,
      hint: 'enclose the whole field in double quotes and double every quote inside it: "say ""hi"""',
    });
  }

  private tooLarge(): CsvError {
    return new CsvError({
      file: this.file,
      line: this.recordLine,
      column: this.row.count + 1,
      expected: `a field of at most ${this.maxFieldChars} characters`,
      found: 'a longer one',
      hint: 'this usually means a quote that never closes, or a file that is not CSV',
    });
  }
}

/** Rejects header names that are empty or repeated: columns are looked up by name. */
export function checkHeader(file: string, header: CsvRecord): void {
  const seen = new Map<string, number>();
  for (let i = 0; i < header.fields.length; i++) {
    const name = header.fields[i];
    if (name.trim() === '') {
      throw new CsvError({
        file,
        line: header.line,
        column: i + 1,
        expected: 'a column name in every header field',
        found: 'an empty name',
        hint: 'name the column in the first line of the file (or remove the trailing comma)',
      });
    }
    const earlier = seen.get(name);
    if (earlier !== undefined) {
      throw new CsvError({
        file,
        line: header.line,
        column: i + 1,
        expected: 'distinct column names',
        found: `${quoteText(name)} again (first as field ${earlier + 1})`,
        hint: 'rename one of the two columns in the header',
      });
    }
    seen.set(name, i);
  }
}

function lineOfByte(chunk: Buffer, at: number, firstLine: number): number {
  let line = firstLine;
  for (let i = 0; i < at; i++) if (chunk[i] === LF) line++;
  return line;
}

/**
 * Streams the file through a parser that reports to `sink`, yielding after each chunk; returns the
 * sha256 hex of the bytes once the file has been read to the end.
 */
async function* scan(file: string, sink: CsvSink, options: CsvReadOptions): AsyncGenerator<void, string> {
  const parser = new CsvParser(file, options.maxFieldChars ?? DEFAULT_MAX_FIELD_CHARS, sink);
  const hash = createHash('sha256');
  const decoder = new StringDecoder('utf8');
  const stream = createReadStream(file, { highWaterMark: options.highWaterMark ?? DEFAULT_HIGH_WATER_MARK });
  let bytes = 0;
  let bomChecked = false;
  // The last two bytes of the previous chunk: a real U+FFFD may straddle a chunk boundary.
  let tail: Buffer = Buffer.alloc(0);
  try {
    for await (const chunk of stream as AsyncIterable<Buffer>) {
      const nul = chunk.indexOf(0);
      if (nul !== -1) {
        throw new CsvError({
          file,
          line: lineOfByte(chunk, nul, parser.line),
          column: 0,
          expected: 'text',
          found: 'a NUL byte: the file looks binary (or is UTF-16)',
          hint: 'pass a CSV file saved as UTF-8 text',
        });
      }
      hash.update(chunk);
      bytes += chunk.length;
      let s = decoder.write(chunk);
      if (
        s.includes(REPLACEMENT_CHAR) &&
        !chunk.includes(REPLACEMENT_BYTES) &&
        !Buffer.concat([tail, chunk.subarray(0, 2)]).includes(REPLACEMENT_BYTES)
      ) {
        throw new CsvError({
          file,
          line: parser.line,
          column: 0,
          expected: 'UTF-8 text',
          found: 'bytes that are not valid UTF-8',
          hint: 're-save the file as UTF-8 (it may be Latin-1 / Windows-1252)',
        });
      }
      tail = chunk.subarray(Math.max(0, chunk.length - 2));
      if (!bomChecked && s.length > 0) {
        bomChecked = true;
        if (s.charCodeAt(0) === BOM) s = s.slice(1);
      }
      parser.feed(s);
      yield;
    }
  } catch (err) {
    if (err instanceof CsvError) throw err;
    const code = (err as NodeJS.ErrnoException).code;
    if (code === undefined) throw err;
    throw new CsvError({
      file,
      line: 0,
      column: 0,
      expected: 'a readable file',
      found: `${code} (${(err as Error).message})`,
      hint: `check the path; relative paths are resolved from ${process.cwd()}`,
    });
  } finally {
    stream.destroy();
  }
  const rest = decoder.end();
  if (rest.includes(REPLACEMENT_CHAR)) {
    throw new CsvError({
      file,
      line: parser.line,
      column: 0,
      expected: 'UTF-8 text',
      found: 'a multi-byte character cut off at the end of the file',
      hint: 're-save the file as UTF-8; it may have been truncated',
    });
  }
  parser.feed(bomChecked || rest.charCodeAt(0) !== BOM ? rest : rest.slice(1));
  parser.finish();
  if (parser.recordCount === 0) {
    throw new CsvError({
      file,
      line: 0,
      column: 0,
      expected: 'a header line and data rows',
      found: bytes === 0 ? 'an empty file (0 bytes)' : 'no records (only blank lines)',
      hint: 'check that the path points at the intended data file',
    });
  }
  return hash.digest('hex');
}

/**
 * Reads the whole file into `sink` and returns the sha256 hex of its bytes. The header is the
 * first record like any other: the sink checks it (see `checkHeader`).
 */
export async function scanCsv(path: string, sink: CsvSink, options: CsvReadOptions = {}): Promise<string> {
  const it = scan(path, sink, options);
  for (;;) {
    const step = await it.next();
    if (step.done === true) return step.value;
  }
}

/** Turns rows into `CsvRecord`s. */
class RecordCollector implements CsvSink {
  out: CsvRecord[] = [];

  record(row: CsvRow): void {
    const fields = new Array<string>(row.count);
    for (let k = 0; k < row.count; k++) fields[k] = row.texts[k].slice(row.starts[k], row.ends[k]);
    this.out.push({ fields, line: row.line });
  }
}

/**
 * One pass over a CSV file. Iterate `records()` (or `batches()`, which yields the records parsed
 * from each chunk together and costs one await per chunk instead of per record); afterwards
 * `digest()` is the sha256 of the file's bytes.
 */
export class CsvSource {
  private hex: string | undefined;

  constructor(
    readonly path: string,
    private readonly options: CsvReadOptions = {},
  ) {}

  /** sha256 hex of the raw file bytes; only after a complete iteration. */
  digest(): string {
    if (this.hex === undefined) {
      throw new CsvError({
        file: this.path,
        line: 0,
        column: 0,
        expected: 'the file read to the end before its digest is asked for',
        hint: 'iterate records() or batches() to completion first',
      });
    }
    return this.hex;
  }

  async *records(): AsyncGenerator<CsvRecord> {
    for await (const batch of this.batches()) yield* batch;
  }

  async *batches(): AsyncGenerator<CsvRecord[]> {
    const collector = new RecordCollector();
    let headerPending = this.options.header !== false;
    const it = scan(this.path, collector, this.options);
    try {
      for (;;) {
        const step = await it.next();
        const batch = collector.out;
        if (batch.length > 0) {
          if (headerPending) {
            checkHeader(this.path, batch[0]);
            headerPending = false;
          }
          collector.out = [];
          yield batch;
        }
        if (step.done === true) {
          this.hex = step.value;
          return;
        }
      }
    } finally {
      // A consumer that stops early must still close the file.
      await it.return('');
    }
  }
}

/** Records of one file, header first. Use `CsvSource` directly when the digest is needed too. */
export async function* readCsv(path: string, options: CsvReadOptions = {}): AsyncGenerator<CsvRecord> {
  yield* new CsvSource(path, options).records();
}
