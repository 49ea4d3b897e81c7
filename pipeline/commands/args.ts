/** Small argument checks shared by commands. */
import { UsageError } from '../errors.js';

export function onePositional(positionals: readonly string[], what: string, command: string): string {
  if (positionals.length !== 1) throw new UsageError(`${command} takes exactly one ${what}, got ${positionals.length}`, `run foldstack ${command} --help`);
  return positionals[0];
}

export function stringOption(value: unknown, fallback: string): string {
  return typeof value === 'string' ? value : fallback;
}
