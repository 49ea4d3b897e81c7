import { resolve } from 'node:path';
import { loadConfig } from '../config/load.js';
import { EXIT, EXIT_MEANINGS, UsageError } from '../errors.js';
import { defaultWorkers } from '../pool.js';
import { runUnderLock } from '../ops/locked-run.js';
import { abortOnSignals } from '../ops/signals.js';
import { promoteIfBetter } from '../run-ledger/auto-promote.js';
import type { PromotionDecision } from '../run-ledger/promotion.js';
import type { RunOutcome } from '../runner.js';
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
  --as-of DATE       the business date this run stands for (YYYY-MM-DD), kept in manifest.json
  --promote-if-better
                     afterwards, make this run the champion of its config name if there is
                     none, or if it beats the champion by the config's promote rule (metric,
                     min_gain, max_p) on the same holdout rows; the decision is one line on
                     stderr and a line in the run's log.jsonl
  --debug            print stack traces on failure

Only one run per config name at a time: the lock is runs/.locks/<name>.lock. A lock left by a
process that no longer exists on this host is taken over (with a warning). SIGINT/SIGTERM stop
the run, remove its partial folder and release the lock.

Exit codes:
${Object.entries(EXIT_MEANINGS).map(([k, v]) => `  ${String(EXIT[k as keyof typeof EXIT]).padStart(3)}  ${v}`).join('\n')}`,
  options: { workers: { type: 'string' }, 'runs-dir': { type: 'string' }, 'cache-dir': { type: 'string' }, 'as-of': { type: 'string' }, 'promote-if-better': { type: 'boolean' } },
  async run({ values, positionals }) {
    const config = await loadConfig(onePositional(positionals, 'CONFIG', 'run'));
    const workers = values.workers === undefined ? defaultWorkers() : parseWorkers(String(values.workers));
    const tty = process.stderr.isTTY === true;
    const started = Date.now();
    const asOf = values['as-of'] === undefined ? undefined : parseAsOf(String(values['as-of']));
    const runsDir = resolve(stringOption(values['runs-dir'], 'runs'));
    const logStream = process.stdout.isTTY ? undefined : process.stdout;
    // Decided while the name's lock is held, so no other run of the name can interleave.
    const promotion: { decision?: PromotionDecision } = {};
    const promote = values['promote-if-better'] === true ? async (o: RunOutcome) => {
      promotion.decision = await promoteIfBetter(o.runDir, runsDir, config.promote, { logStream });
    } : undefined;
    const outcome = await abortOnSignals((signal) => runUnderLock(config, {
      workers,
      signal,
      asOf,
      runsDir,
      cacheDir: resolve(stringOption(values['cache-dir'], '.foldstack/cache')),
      logStream,
      progress: tty ? (line) => process.stderr.write(`[${((Date.now() - started) / 1000).toFixed(1)}s] ${line}\n`) : undefined,
    }, (line) => process.stderr.write(`warning: ${line}\n`), promote));
    const h = outcome.metrics.holdout.stack;
    const steps = outcome.manifest.steps;
    const hits = steps.filter((s) => s.hit).length;
    process.stderr.write(`stack holdout AUC ${fmt(h.auc)}, capture@${config.evaluate.budget} ${fmt(h.capture)} · ${hits}/${steps.length} steps from cache · ${outcome.manifest.seconds.toFixed(1)}s\n`);
    const d = promotion.decision;
    if (d) {
      process.stderr.write(`champion of "${config.name}": ${d.promote ? 'this run' : (d.champion ?? 'none')} (${d.reason})\n`);
    }
    process.stdout.write(outcome.runDir + '\n');
    return EXIT.ok;
  },
};

function fmt(x: number | null | undefined): string {
  return typeof x === 'number' ? x.toFixed(4) : 'n/a';
}

function parseAsOf(s: string): string {
  const m = /^(\d{4})-(\d{2})-(\d{2})$/.exec(s);
  const exists = m !== null && new Date(Date.UTC(Number(m[1]), Number(m[2]) - 1, Number(m[3]))).toISOString().slice(0, 10) === s;
  if (!exists) throw new UsageError(`--as-of must be a calendar date written YYYY-MM-DD, got "${s}"`, 'e.g. --as-of 2024-03-31');
  return s;
}

function parseWorkers(s: string): number {
  const n = Number(s);
  if (!Number.isInteger(n) || n < 1 || n > 256) throw new UsageError(`--workers must be a whole number from 1 to 256, got "${s}"`, 'omit it to use one worker per core');
  return n;
}
