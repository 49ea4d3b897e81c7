#!/usr/bin/env node
/**
 * The `foldstack` command. Human output goes to stderr; stdout carries only what scripts read
 * (a run folder's path, the schema, tables asked for as JSON) and JSON log lines when stdout is
 * not a terminal. Every failure is one line plus a hint, and a documented exit code.
 */
import { parseArgs } from 'node:util';
import { ConfigError } from './config/errors.js';
import { EXIT, FoldstackError, UsageError } from './errors.js';
import { commands } from './commands/index.js';
import { CODE_VERSION } from './runner.js';

function mainHelp(): string {
  const width = Math.max(...commands.map((c) => c.name.length));
  return `foldstack — cross-fitted feature stages and stacked binary-outcome models from one YAML config

Usage:
  foldstack COMMAND [options]
  foldstack COMMAND --help

Commands:
${commands.map((c) => `  ${c.name.padEnd(width)}  ${c.summary}`).join('\n')}

Exit codes: ${Object.entries(EXIT).map(([k, v]) => `${v} ${k}`).join(', ')}.
Add --debug to any command to see a stack trace on failure.
Decision support only: see the README's cautions before using scores about people.`;
}

async function main(argv: string[]): Promise<number> {
  const [name, ...rest] = argv;
  if (name === undefined || name === '--help' || name === '-h' || name === 'help') {
    process.stderr.write(mainHelp() + '\n');
    return name === undefined ? EXIT.usage : EXIT.ok;
  }
  if (name === '--version') {
    process.stdout.write(`foldstack ${CODE_VERSION}\n`);
    return EXIT.ok;
  }
  const command = commands.find((c) => c.name === name);
  if (!command) throw new UsageError(`unknown command "${name}"`, `the commands are: ${commands.map((c) => c.name).join(', ')}`);
  let parsed;
  try {
    parsed = parseArgs({ args: rest, options: { help: { type: 'boolean', short: 'h' }, debug: { type: 'boolean' }, ...command.options }, allowPositionals: true, strict: true });
  } catch (err) {
    throw new UsageError((err as Error).message, `run foldstack ${name} --help`);
  }
  if (parsed.values.help) {
    process.stderr.write(command.help + '\n');
    return EXIT.ok;
  }
  return command.run(parsed);
}

function report(err: unknown, debug: boolean): number {
  const stack = (e: Error) => {
    if (debug) process.stderr.write(String(e.stack) + '\n');
  };
  // Always exactly two lines (cron mails and log scrapers rely on it): the first line of the message, then a hint.
  const twoLines = (message: string, hint: string) => process.stderr.write(`error: ${firstLine(message)}\nhint: ${firstLine(hint)}\n`);
  if (err instanceof ConfigError) {
    twoLines(err.message, err.hint === '' ? 'foldstack schema prints every key the config accepts' : err.hint);
    stack(err);
    return EXIT.config;
  }
  if (err instanceof FoldstackError) {
    twoLines(err.message, err.hint);
    stack(err);
    return err.exitCode;
  }
  const e = err instanceof Error ? err : new Error(String(err));
  const code = (e as NodeJS.ErrnoException).code;
  twoLines(e.message, code !== undefined && FILESYSTEM_CODES.has(code) ? 'check that the runs and cache folders exist as folders, are writable, and that the disk has space' : 're-run with --debug for the stack trace');
  stack(e);
  return EXIT.runFailure;
}

/** Errors from the environment rather than from foldstack: the hint points at the folders, not at a bug. */
const FILESYSTEM_CODES = new Set(['ENOTDIR', 'EACCES', 'EPERM', 'EROFS', 'ENOSPC', 'EDQUOT', 'EISDIR', 'ENOENT', 'EEXIST', 'EMFILE']);

function firstLine(s: string): string {
  return s.split(/\r?\n/, 1)[0];
}

const argv = process.argv.slice(2);
main(argv).then(
  (code) => {
    process.exitCode = code;
  },
  (err: unknown) => {
    process.exitCode = report(err, argv.includes('--debug'));
  },
);
