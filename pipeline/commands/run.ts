import { resolve } from 'node:path';
import { loadConfig } from '../config/load.js';
import { EXIT, UsageError } from '../errors.js';
import { defaultWorkers } from '../pool.js';
import { runPipeline } from '../runner.js';
import { onePositional, stringOption } from './args.js';
import type { Command } from './command.js';

export const runCommand: Command = {
  name: 'run',
  summary: 'fit every stage and learner, blend them, evaluate, write a run folder',
  help: `foldstack run CONFIG [options]

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
  options: { workers: { type: 'string' }, 'runs-dir': { type: 'string' }, 'cache-dir': { type: 'string' } },
  async run({ values, positionals }) {
    const config = await loadConfig(onePositional(positionals, 'CONFIG', 'run'));
    const workers = values.workers === undefined ? defaultWorkers() : parseWorkers(String(values.workers));
    const tty = process.stderr.isTTY === true;
    const started = Date.now();
    const outcome = await runPipeline(config, {
      workers,
      runsDir: resolve(stringOption(values['runs-dir'], 'runs')),
      cacheDir: resolve(stringOption(values['cache-dir'], '.foldstack/cache')),
      logStream: process.stdout.isTTY ? undefined : process.stdout,
      progress: tty ? (line) => process.stderr.write(`[${((Date.now() - started) / 1000).toFixed(1)}s] ${line}\n`) : undefined,
    });
    const h = outcome.metrics.holdout.stack;
    const steps = outcome.manifest.steps;
    const hits = steps.filter((s) => s.hit).length;
    process.stderr.write(`stack holdout AUC ${fmt(h.auc)}, capture@${config.evaluate.budget} ${fmt(h.capture)} · ${hits}/${steps.length} steps from cache · ${outcome.manifest.seconds.toFixed(1)}s\n`);
    process.stdout.write(outcome.runDir + '\n');
    return EXIT.ok;
  },
};

function fmt(x: number | null | undefined): string {
  return typeof x === 'number' ? x.toFixed(4) : 'n/a';
}

function parseWorkers(s: string): number {
  const n = Number(s);
  if (!Number.isInteger(n) || n < 1 || n > 256) throw new UsageError(`--workers must be a whole number from 1 to 256, got "${s}"`, 'omit it to use one worker per core');
  return n;
}
