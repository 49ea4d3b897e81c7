/**
 * The one error type the config loader throws. Every failure — YAML syntax, duplicate key,
 * schema violation — is reported at a source position so a modeler can jump straight to it.
 */
export interface ConfigErrorInit {
  readonly file: string;
  readonly line: number;
  readonly column: number;
  /** Dotted key path (`learners.lr.l2`); empty when the problem is the document itself. */
  readonly path: string;
  /** What would have been accepted, in words (`a number ≥ 0`). */
  readonly expected: string;
  /** The problem, e.g. `expected a number ≥ 0, got "high"`. */
  readonly problem: string;
  /** What to do about it; shown on its own line by the CLI. */
  readonly hint: string;
}

export class ConfigError extends Error {
  readonly file: string;
  readonly line: number;
  readonly column: number;
  readonly path: string;
  readonly expected: string;
  readonly hint: string;

  constructor(init: ConfigErrorInit) {
    const where = init.path === '' ? '' : `${init.path}: `;
    super(`${init.file}:${init.line}:${init.column}: ${where}${init.problem}`);
    this.name = 'ConfigError';
    this.file = init.file;
    this.line = init.line;
    this.column = init.column;
    this.path = init.path;
    this.expected = init.expected;
    this.hint = init.hint;
  }
}

/** The CLI's rendering: the one-line message, then the hint on its own line. */
export function formatConfigError(err: ConfigError): string {
  return err.hint === '' ? err.message : `${err.message}\nhint: ${err.hint}`;
}
