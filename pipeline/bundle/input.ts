/**
 * Reads a file to score, chunk by chunk, with the column types the bundle fixes (never inferred:
 * a scored file must be read the way the training file was). Cell rules are the loader's
 * (pipeline/io/load.ts): a cell is missing when, trimmed of ASCII space and control characters,
 * it is empty or one of the missing tokens; numbers and dates are parsed from the trimmed text;
 * categorical levels keep the untrimmed text. The loader itself is not used because it needs a
 * two-class target and the whole file in memory; a scored file may have no target at all.
 */
import { categorical, dateColumn, numeric, type Column, type ColumnType } from '../frame.js';
import { CsvSource, type CsvRecord } from '../io/csv-reader.js';
import { CsvError, quoteText } from '../io/csv-error.js';
import { isNonFiniteToken, parseDecimal, parseIsoDate } from '../io/cells.js';
import type { BundleData } from './types.js';
import { ScoreInputError } from './errors.js';

export interface InputChunk {
  readonly nRows: number;
  readonly ids: string[];
  /** The required columns over this chunk's rows (index 0 = the chunk's first row). */
  readonly columns: Map<string, Column>;
}

const SPACE = 32;

function trimAscii(s: string): string {
  let a = 0;
  let b = s.length;
  while (a < b && s.charCodeAt(a) <= SPACE) a++;
  while (b > a && s.charCodeAt(b - 1) <= SPACE) b--;
  return a === 0 && b === s.length ? s : s.slice(a, b);
}

interface Slot {
  readonly name: string;
  readonly index: number;
  readonly type: ColumnType;
}

/** Accumulates parsed rows of the required columns until a chunk is full. */
class ChunkBuilder {
  private floats: Float64Array[] = [];
  private codes: Int32Array[] = [];
  private levels: string[][] = [];
  private codeOf: Map<string, number>[] = [];
  private ids: string[] = [];
  private n = 0;

  constructor(
    private readonly file: string,
    private readonly slots: readonly Slot[],
    private readonly idIndex: number,
    private readonly capacity: number,
    private readonly missing: ReadonlySet<string>,
  ) {
    this.reset();
  }

  get size(): number {
    return this.n;
  }

  private reset(): void {
    this.n = 0;
    this.ids = [];
    this.floats = this.slots.map((s) => (s.type === 'categorical' ? new Float64Array(0) : new Float64Array(this.capacity)));
    this.codes = this.slots.map((s) => (s.type === 'categorical' ? new Int32Array(this.capacity) : new Int32Array(0)));
    this.levels = this.slots.map(() => []);
    this.codeOf = this.slots.map(() => new Map());
  }

  add(rec: CsvRecord, width: number): void {
    const f = rec.fields;
    if (f.length !== width) {
      throw new CsvError({ file: this.file, line: rec.line, column: 0, expected: `${width} fields (as in the header)`, found: `${f.length}`, hint: 'a field with a comma or a line break must be enclosed in double quotes' });
    }
    const r = this.n;
    this.ids.push(this.idIndex >= 0 ? f[this.idIndex] : '');
    for (let k = 0; k < this.slots.length; k++) {
      const slot = this.slots[k];
      const raw = f[slot.index];
      const t = trimAscii(raw);
      const isMissing = t === '' || this.missing.has(t);
      if (slot.type === 'categorical') {
        if (isMissing) {
          this.codes[k][r] = -1;
          continue;
        }
        let code = this.codeOf[k].get(raw);
        if (code === undefined) {
          code = this.levels[k].length;
          this.levels[k].push(raw);
          this.codeOf[k].set(raw, code);
        }
        this.codes[k][r] = code;
      } else if (isMissing) {
        this.floats[k][r] = NaN;
      } else {
        const x = slot.type === 'numeric' ? parseDecimal(t) : parseIsoDate(t);
        if (x - x !== 0) {
          const expected = slot.type === 'date' ? 'an ISO 8601 date YYYY-MM-DD that exists' : x === x || isNonFiniteToken(t) ? 'a finite number' : 'a number';
          throw new CsvError({ file: this.file, line: rec.line, column: slot.index + 1, columnName: slot.name, expected, found: quoteText(raw), hint: 'the column was numeric or a date in the training data; fix the cell or add its text to data.missing' });
        }
        this.floats[k][r] = x;
      }
    }
    this.n++;
  }

  take(firstRow: number): InputChunk {
    const n = this.n;
    const columns = new Map<string, Column>();
    this.slots.forEach((s, k) => {
      if (s.type === 'categorical') columns.set(s.name, categorical(s.name, this.codes[k].slice(0, n), this.levels[k]));
      else if (s.type === 'numeric') columns.set(s.name, numeric(s.name, this.floats[k].slice(0, n)));
      else columns.set(s.name, dateColumn(s.name, this.floats[k].slice(0, n)));
    });
    const ids = this.idIndex >= 0 ? this.ids : Array.from({ length: n }, (_, i) => String(firstRow + i + 1));
    this.reset();
    return { nRows: n, ids, columns };
  }
}

/**
 * Yields chunks of at most `chunkRows` rows. Throws `ScoreInputError` naming every required column
 * the header lacks before any chunk is yielded; columns the bundle does not need are skipped.
 */
export async function* readScoringInput(path: string, data: BundleData, chunkRows: number): AsyncGenerator<InputChunk> {
  const typeOf = new Map(data.columns.map((c) => [c.name, c.type]));
  let builder: ChunkBuilder | undefined;
  let width = 0;
  let emitted = 0;
  for await (const batch of new CsvSource(path).batches()) {
    for (const rec of batch) {
      if (builder === undefined) {
        builder = startFrom(path, rec, data, typeOf, chunkRows);
        width = rec.fields.length;
        continue;
      }
      builder.add(rec, width);
      if (builder.size === chunkRows) {
        yield builder.take(emitted);
        emitted += chunkRows;
      }
    }
  }
  if (builder === undefined) throw new ScoreInputError(path, 'the file has no header line', [], 'check that --input points at the file to score');
  if (builder.size > 0 || emitted === 0) yield builder.take(emitted);
}

function startFrom(path: string, header: CsvRecord, data: BundleData, typeOf: ReadonlyMap<string, ColumnType>, chunkRows: number): ChunkBuilder {
  const position = new Map<string, number>();
  header.fields.forEach((name, i) => position.set(name, i));
  const wanted = data.id === null ? data.required : [data.id, ...data.required];
  const absent = wanted.filter((n) => !position.has(n));
  if (absent.length > 0) {
    throw new ScoreInputError(path, `missing required column${absent.length > 1 ? 's' : ''} ${absent.map(quoteText).join(', ')}`, absent, 'the file to score needs every column the run used; extra columns are ignored');
  }
  const slots: Slot[] = data.required.map((name) => {
    const type = typeOf.get(name);
    if (type === undefined) throw new ScoreInputError(path, `the bundle lists ${quoteText(name)} as required but gives no type for it`, [name], 'the bundle is damaged; rebuild it by re-running the config');
    return { name, index: position.get(name) ?? -1, type };
  });
  const idIndex = data.id === null ? -1 : (position.get(data.id) ?? -1);
  return new ChunkBuilder(path, slots, idIndex, chunkRows, new Set(data.missing.map(trimAscii)));
}
