#!/usr/bin/env node
/**
 * The `foldstack` command. Human output goes to stderr; stdout carries only what scripts read
 * (the run folder's path, the schema) and JSON log lines when stdout is not a terminal.
 */
import { parseArgs, type ParseArgsConfig } from 'node:util';
import { resolve } from 'node:path';
import { loadConfig } from './config/load.js';
import { toJsonSchema } from './config/schema.js';
import { ConfigError, formatConfigError } from './config/errors.js';
import { CsvError } from './io/csv-reader.js';
import { EXIT, FoldstackError, UsageError } from './errors.js';
import { defaultWorkers } from './pool.js';
import { runPipeline } from './runner.js';

const HELP: Record<string, string> = {
  main: `foldstack — cross-fitted feature stages and stacked binary-outcome models from one YAML config

Usage:
  foldstack run CONFIG [--workers N] [--runs-dir DIR] [--cache-dir DIR]
  foldstack check CONFIG
  foldstack schema
  foldstack COMMAND --help

Commands:
  run      fit every stage and learner, blend them, evaluate, write a run folder
  check    validate a config (and that its data file exists) without running
  schema   print the config's JSON Schema (point your editor at it)

Exit codes: 0 ok, 1 run failure, 2 usage, 3 config error, 4 data error.
Add --debug to any command to see a stack trace on failure.`,
  run: `foldstack run CONFIG [options]

Runs the pipeline the config describes and writes runs/<timestamp>-<name>/ (manifest.json,
metrics.json, log.jsonl, oof.csv, holdout.csv and stage tables). Every (stage, fit context)
result is cached by content, so re-running after a change recomputes only what it touched.
The last line on stdout is the run folder's path.

Options:
  --workers N        worker threads (default: the number of cores, here ${defaultWorkers()});
                     any N gives byte-identical results
  --runs-dir DIR     where run folders go (default: ./runs)
  --cache-dir DIR    the stage cache (default: ./.foldstack/cache)
  --debug            print stack traces on failure`,
  check: `foldstack check CONFIG

Validates CONFIG against the schema (file, line and column for every problem) and checks that
the data file it names exists. Writes nothing.`,
  schema: `foldstack schema

Prints the config's JSON Schema (draft 2020-12) on stdout, e.g.
  foldstack schema > config.schema.json
and point your editor's YAML support at it.`,
};

async function main(argv: string[]): Promise<number> {
  const [command, ...rest] = argv;
  if (command === undefined || command === '--help' || command === '-h' || command === 'help') {
    process.stderr.write(HELP.main + '\n');
    return command === undefined ? EXIT.usage : EXIT.ok;
  }
  if (command === '--version') {
    process.stdout.write('foldstack 0.1.0\n');
    return EXIT.ok;
  }
  if (!(command in HELP) || command === 'main') throw new UsageError(`unknown command "${command}"`, 'run foldstack --help to see the commands');
  const { values, positionals } = parseCommandArgs(command, rest);
  if (values.help) {
    process.stderr.write(HELP[command] + '\n');
    return EXIT.ok;
  }
  switch (command) {
    case 'schema':
      process.stdout.write(JSON.stringify(toJsonSchema(), null, 2) + '\n');
      return EXIT.ok;
    case 'check': {
      const config = await loadConfig(onePositional(positionals, 'CONFIG', command));
      const { existsSync } = await import('node:fs');
      if (!existsSync(config.data.file)) throw new FoldstackError(`data.file ${config.data.file} does not exist`, 'paths in a config are relative to the config file\'s folder', EXIT.config);
      process.stderr.write(`${config.file}: ok (${config.learners.size} learner${config.learners.size === 1 ? '' : 's'}, ${config.features.size} feature stage${config.features.size === 1 ? '' : 's'})\n`);
      return EXIT.ok;
    }
    case 'run': {
      const config = await loadConfig(onePositional(positionals, 'CONFIG', command));
      const workers = values.workers === undefined ? defaultWorkers() : parseWorkers(String(values.workers));
      const tty = process.stderr.isTTY === true;
      const started = Date.now();
      const outcome = await runPipeline(config, {
        workers,
        runsDir: resolve(String(values['runs-dir'] ?? 'runs')),
        cacheDir: resolve(String(values['cache-dir'] ?? '.foldstack/cache')),
        logStream: process.stdout.isTTY ? undefined : process.stdout,
        progress: tty ? (line) => process.stderr.write(`[${((Date.now() - started) / 1000).toFixed(1)}s] ${line}\n`) : undefined,
      });
      const h = outcome.metrics.holdout.stack;
      const steps = outcome.manifest.steps;
      const hits = steps.filter((s) => s.hit).length;
      process.stderr.write(`stack holdout AUC ${fmt(h.auc)}, capture@${config.evaluate.budget} ${fmt(h.capture)} · ${hits}/${steps.length} steps from cache · ${outcome.manifest.seconds.toFixed(1)}s\n`);
      process.stdout.write(outcome.runDir + '\n');
      return EXIT.ok;
    }
  }
  return EXIT.usage;
}

function fmt(x: number | null | undefined): string {
  return typeof x === 'number' ? x.toFixed(4) : 'n/a';
}

function parseCommandArgs(command: string, args: string[]) {
  const options: ParseArgsConfig['options'] = {
    help: { type: 'boolean', short: 'h' },
    debug: { type: 'boolean' },
    ...(command === 'run' ? { workers: { type: 'string' }, 'runs-dir': { type: 'string' }, 'cache-dir': { type: 'string' } } : {}),
  };
  try {
    return parseArgs({ args, options, allowPositionals: true, strict: true });
  } catch (err) {
    throw new UsageError((err as Error).message, `run foldstack ${command} --help`);
  }
}

function onePositional(positionals: string[], what: string, command: string): string {
  if (positionals.length !== 1) throw new UsageError(`${command} takes exactly one ${what}, got ${positionals.length}`, `run foldstack ${command} --help`);
  return positionals[0];
}

function parseWorkers(s: string): number {
  const n = Number(s);
  if (!Number.isInteger(n) || n < 1 || n > 256) throw new UsageError(`--workers must be a whole number from 1 to 256, got "${s}"`, 'omit it to use one worker per core');
  return n;
}

function report(err: unknown, debug: boolean): number {
  if (err instanceof ConfigError) {
    process.stderr.write(formatConfigError(err) + '\n');
    if (debug) process.stderr.write(String(err.stack) + '\n');
    return EXIT.config;
  }
  if (err instanceof CsvError) {
    process.stderr.write(`error: ${err.message}\nhint: ${err.hint}\n`);
    if (debug) process.stderr.write(String(err.stack) + '\n');
    return EXIT.data;
  }
  if (err instanceof FoldstackError) {
    process.stderr.write(`error: ${err.message}\nhint: ${err.hint}\n`);
    if (debug) process.stderr.write(String(err.stack) + '\n');
    return err.exitCode;
  }
  const e = err instanceof Error ? err : new Error(String(err));
  process.stderr.write(`error: ${e.message.split('\n')[0]}\nhint: re-run with --debug for the stack trace; the run folder was not written\n`);
  if (debug) process.stderr.write(String(e.stack) + '\n');
  return EXIT.runFailure;
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
