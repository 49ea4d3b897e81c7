import { resolve } from 'node:path';
import { EXIT } from '../errors.js';
import { championFile, writeChampion } from '../run-ledger/champion.js';
import { readRun, resolveRunRef } from '../run-ledger/read.js';
import { onePositional, stringOption } from './args.js';
import type { Command } from './command.js';

export const promoteCommand: Command = {
  name: 'promote',
  summary: 'make a run the champion of its config name',
  help: `foldstack promote RUN [options]

Records RUN (a run folder's path or its id under the runs folder) as the champion of its
config name, in <runs-dir>/champions/<name>.json (replaced atomically). foldstack runs marks the
champion; foldstack compare RUN compares against it; foldstack run --promote-if-better moves it
automatically when the config's promote rule is met. No check is applied here: a person decides.

Options:
  --runs-dir DIR     the runs folder (default: ./runs)`,
  options: { 'runs-dir': { type: 'string' } },
  async run({ values, positionals }) {
    const runsDir = resolve(stringOption(values['runs-dir'], 'runs'));
    const run = readRun(resolveRunRef(onePositional(positionals, 'RUN', 'promote'), runsDir));
    writeChampion(runsDir, run, 'manual');
    process.stderr.write(`${run.id} is now the champion of "${run.manifest.name}" (${championFile(runsDir, run.manifest.name)})\n`);
    return EXIT.ok;
  },
};
