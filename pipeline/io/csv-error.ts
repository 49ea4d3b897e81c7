/** The error every CSV reading and loading failure raises: where it happened and what to do. */
import { EXIT, FoldstackError } from '../errors.js';

export interface CsvErrorInit {
  readonly file: string;
  /** 1-based physical line; the line a record starts on for record-level problems; 0 = the file as a whole. */
  readonly line: number;
  /** 1-based field index within the record (not a character column); 0 = not about one field. */
  readonly column: number;
  /** The column's header name, when known. */
  readonly columnName?: string;
  /** What would have been accepted, in words. */
  readonly expected: string;
  /** What was there instead (already quoted where it is file text). */
  readonly found?: string;
  readonly hint: string;
}

export class CsvError extends FoldstackError {
  readonly file: string;
  readonly line: number;
  readonly column: number;
  readonly columnName: string | undefined;
  readonly expected: string;
  readonly found: string | undefined;

  constructor(init: CsvErrorInit) {
    const where = init.line > 0 ? `${init.file}:${init.line}` : init.file;
    const field =
      init.columnName !== undefined
        ? ` column "${init.columnName}"`
        : init.column > 0
          ? ` field ${init.column}`
          : '';
    const found = init.found === undefined ? '' : `, found ${init.found}`;
    super(`${where}:${field} expected ${init.expected}${found}`, init.hint, EXIT.data);
    this.file = init.file;
    this.line = init.line;
    this.column = init.column;
    this.columnName = init.columnName;
    this.expected = init.expected;
    this.found = init.found;
  }
}

/** File text as it should appear in a message: quoted, and cut short when long. */
export function quoteText(s: string): string {
  const cut = s.length > 60 ? `${s.slice(0, 57)}...` : s;
  return JSON.stringify(cut);
}
