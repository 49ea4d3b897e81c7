import { join, resolve } from 'node:path';
import { EXIT, UsageError } from '../errors.js';
import { applyPrune, planPrune, sizeOf } from '../ops/prune.js';
import { stringOption } from './args.js';
import type { Command } from './command.js';

export const pruneCommand: Command = {
  name: 'prune',
  summary: 'remove old run folders, abandoned partial folders and unreferenced cache entries',
  help: `foldstack prune --keep N [options]

For each config name, keeps the newest N finished run folders and the champion
(runs/champions/<name>.json), and removes the older ones. Also removes .partial-* folders whose
process is gone, cache entries that no kept run's manifest.json refers to, and leftovers in the
cache's tmp/ folder. While any run is in progress the cache is left alone. Prints each removed
path on stdout.

Options:
  --keep N           finished runs to keep per config name (N ≥ 1)
  --runs-dir DIR     (default: ./runs)
  --cache-dir DIR    (default: ./.foldstack/cache)
  --dry-run          print what would be removed, remove nothing`,
  options: { keep: { type: 'string' }, 'runs-dir': { type: 'string' }, 'cache-dir': { type: 'string' }, 'dry-run': { type: 'boolean' } },
  async run({ values, positionals }) {
    if (positionals.length > 0) throw new UsageError(`prune takes no positional arguments, got ${positionals.length}`, 'run foldstack prune --help');
    const keepText = values.keep;
    if (typeof keepText !== 'string') throw new UsageError('prune needs --keep N', 'e.g. foldstack prune --keep 10');
    const keep = Number(keepText);
    if (!Number.isInteger(keep) || keep < 1) throw new UsageError(`--keep must be a whole number ≥ 1, got "${keepText}"`, 'the champion is always kept in addition');
    const runsDir = resolve(stringOption(values['runs-dir'], 'runs'));
    const cacheDir = resolve(stringOption(values['cache-dir'], '.foldstack/cache'));
    const dry = values['dry-run'] === true;
    const plan = planPrune(runsDir, cacheDir, keep);
    const paths = [
      ...plan.runs.map((id) => join(runsDir, id)),
      ...plan.partials.map((n) => join(runsDir, n)),
      ...plan.cacheEntries.map((k) => join(cacheDir, k.slice(0, 2), k)),
      ...plan.cacheTmp.map((n) => join(cacheDir, 'tmp', n)),
    ];
    const bytes = paths.reduce((s, p) => s + sizeOf(p), 0);
    if (!dry) applyPrune(plan, runsDir, cacheDir);
    for (const p of paths) process.stdout.write(`${dry ? 'would remove' : 'removed'} ${p}\n`);
    if (plan.cacheSkipped) process.stderr.write(`cache not pruned: ${plan.cacheSkipped}\n`);
    process.stderr.write(`${dry ? 'would remove' : 'removed'} ${plan.runs.length} run folder(s), ${plan.partials.length} partial folder(s), ${plan.cacheEntries.length} cache entr${plan.cacheEntries.length === 1 ? 'y' : 'ies'}, ${plan.cacheTmp.length} cache temp item(s): ${(bytes / 1e6).toFixed(1)} MB\n`);
    return EXIT.ok;
  },
};
