import { resolve } from 'node:path';
import { EXIT, UsageError } from '../errors.js';
import { listRuns } from '../run-ledger/list.js';
import { formatRunList } from '../run-ledger/format.js';
import { stringOption } from './args.js';
import type { Command } from './command.js';

export const runsCommand: Command = {
  name: 'runs',
  summary: 'list finished runs, newest first, with their headline metrics',
  help: `foldstack runs [options]

Lists the finished runs in the runs folder, newest first: time, config name, config digest,
the stack's holdout AUC, capture at the budget and partial AUC, and the stack's members with
their weights. * marks the champion of each config name (see foldstack promote). Folders still
being written (.partial-*) are left out; a folder that is not a finished run is named with the
reason it was skipped. Everything is read from the run folders alone.

Options:
  --runs-dir DIR     the runs folder (default: ./runs)
  --json             print the listing as JSON on stdout`,
  options: { 'runs-dir': { type: 'string' }, json: { type: 'boolean' } },
  async run({ values, positionals }) {
    if (positionals.length > 0) throw new UsageError(`runs takes no arguments, got ${positionals.join(' ')}`, 'run foldstack runs --help');
    const listing = listRuns(resolve(stringOption(values['runs-dir'], 'runs')));
    process.stdout.write(values.json === true ? JSON.stringify(listing, null, 2) + '\n' : formatRunList(listing));
    return EXIT.ok;
  },
};
