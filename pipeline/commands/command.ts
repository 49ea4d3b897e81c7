/** The shape of one `foldstack` subcommand; `pipeline/commands/index.ts` lists them. */
import type { ParseArgsConfig } from 'node:util';

export interface ParsedArgs {
  readonly values: Readonly<Record<string, string | boolean | (string | boolean)[] | undefined>>;
  readonly positionals: readonly string[];
}

export interface Command {
  readonly name: string;
  /** One line for `foldstack --help`. */
  readonly summary: string;
  /** The whole `foldstack NAME --help` text. */
  readonly help: string;
  /** Options besides --help and --debug (node:util parseArgs form). */
  readonly options: NonNullable<ParseArgsConfig['options']>;
  /** Returns the exit code. Throws FoldstackError (or a subclass) for expected failures. */
  run(args: ParsedArgs): Promise<number>;
}
