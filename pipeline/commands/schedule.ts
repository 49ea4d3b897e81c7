import { resolve } from 'node:path';
import { EXIT, UsageError } from '../errors.js';
import { Scheduler, type ScheduleEvent } from '../ops/schedule.js';
import { defaultWorkers } from '../pool.js';
import { onePositional, stringOption } from './args.js';
import type { Command } from './command.js';

export const scheduleCommand: Command = {
  name: 'schedule',
  summary: 'stay running and run a config on a cron schedule, never overlapping',
  help: `foldstack schedule CONFIG --cron "PATTERN" [options]

Stays in the foreground and runs CONFIG at every time PATTERN matches (local time), e.g.
  foldstack schedule configs/demo.yaml --cron "0 2 * * *"
for 02:00 every day. A tick that comes while the previous run is still going is skipped (and
logged); runs of the same config name from elsewhere are kept out by the run lock. The config is
re-read at every tick. Events go to stdout as JSON lines; a failed run is logged and the
scheduler carries on. SIGTERM/SIGINT abandon a run in progress (its partial folder is removed,
its lock released) and exit 0.

Options:
  --cron PATTERN     minute hour day-of-month month day-of-week (a sixth leading field for seconds)
  --promote-if-better
                     after each run, apply the config's promote rule, as foldstack run does
  --workers N        worker threads per run (default: ${defaultWorkers()})
  --runs-dir DIR     (default: ./runs)
  --cache-dir DIR    (default: ./.foldstack/cache)`,
  options: { cron: { type: 'string' }, 'promote-if-better': { type: 'boolean' }, workers: { type: 'string' }, 'runs-dir': { type: 'string' }, 'cache-dir': { type: 'string' } },
  async run({ values, positionals }) {
    const configFile = resolve(onePositional(positionals, 'CONFIG', 'schedule'));
    const cron = values.cron;
    if (typeof cron !== 'string') throw new UsageError('schedule needs --cron "PATTERN"', 'e.g. --cron "0 2 * * *" for 02:00 every day');
    const workers = values.workers === undefined ? defaultWorkers() : Number(values.workers);
    if (!Number.isInteger(workers) || workers < 1 || workers > 256) throw new UsageError(`--workers must be a whole number from 1 to 256, got "${String(values.workers)}"`, 'omit it to use one worker per core');
    const log = (e: ScheduleEvent) => process.stdout.write(JSON.stringify({ time: new Date().toISOString(), ...e }) + '\n');
    const scheduler = new Scheduler({
      cron,
      configFile,
      workers,
      runsDir: resolve(stringOption(values['runs-dir'], 'runs')),
      cacheDir: resolve(stringOption(values['cache-dir'], '.foldstack/cache')),
      log,
      promoteIfBetter: values['promote-if-better'] === true,
    });
    scheduler.start();
    const signal = await new Promise<string>((done) => {
      process.once('SIGTERM', () => done('SIGTERM'));
      process.once('SIGINT', () => done('SIGINT'));
    });
    await scheduler.stop(signal);
    return EXIT.ok;
  },
};
