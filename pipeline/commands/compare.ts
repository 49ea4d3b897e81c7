import { resolve } from 'node:path';
import { EXIT, FoldstackError, UsageError } from '../errors.js';
import { readChampionRun } from '../run-ledger/champion.js';
import { compareRuns } from '../run-ledger/compare.js';
import { formatComparison } from '../run-ledger/format.js';
import { readHoldout, readRun, resolveRunRef } from '../run-ledger/read.js';
import { stringOption } from './args.js';
import type { Command } from './command.js';

export const compareCommand: Command = {
  name: 'compare',
  summary: 'compare two runs side by side (paired tests when they scored the same rows)',
  help: `foldstack compare RUN_A [RUN_B] [options]

Sets two runs side by side: every learner and the stack, on the holdout and out of fold (AUC,
partial AUC, capture, precision, lift, KS, log loss, Brier), with the difference B − A.
RUN is a run folder's path or its id (folder name) under the runs folder.
With one RUN, it is compared (as B) against the champion of its config name (as A).

When both runs scored the same holdout rows (same data digest, same split digest, same ids in
holdout.csv) the stack is also compared by a paired DeLong test of the AUCs (z, two-sided p)
and a paired stratified bootstrap 95% CI of the capture difference (1,000 replicates, seeded).
Otherwise the comparison is marked unpaired and shows each run's own figures only.

Options:
  --runs-dir DIR     the runs folder (default: ./runs)
  --json             print the comparison as JSON on stdout`,
  options: { 'runs-dir': { type: 'string' }, json: { type: 'boolean' } },
  async run({ values, positionals }) {
    if (positionals.length < 1 || positionals.length > 2) throw new UsageError(`compare takes one or two runs, got ${positionals.length}`, 'run foldstack compare --help');
    const runsDir = resolve(stringOption(values['runs-dir'], 'runs'));
    let a;
    let b;
    if (positionals.length === 2) {
      a = readRun(resolveRunRef(positionals[0], runsDir));
      b = readRun(resolveRunRef(positionals[1], runsDir));
    } else {
      b = readRun(resolveRunRef(positionals[0], runsDir));
      a = readChampionRun(runsDir, b.manifest.name);
      if (!a) throw new FoldstackError(`config name "${b.manifest.name}" has no champion in ${runsDir}`, `name two runs (foldstack compare RUN_A RUN_B) or promote one first (foldstack promote RUN)`, EXIT.usage);
    }
    const comparison = compareRuns(a, await readHoldout(a), b, await readHoldout(b));
    process.stdout.write(values.json === true ? JSON.stringify(comparison, null, 2) + '\n' : formatComparison(comparison));
    return EXIT.ok;
  },
};
