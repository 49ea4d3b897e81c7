import { existsSync, statSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { EXIT, UsageError } from '../errors.js';
import { REPORT_FILE, writeReport } from '../report/build.js';
import { onePositional } from './args.js';
import type { Command } from './command.js';

export const reportCommand: Command = {
  name: 'report',
  summary: "rebuild a run folder's report.html from its files",
  help: `foldstack report RUN [--out FILE]

Rebuilds the single-file HTML report of the run folder RUN (runs/<timestamp>-<name>) from the
folder's own files: manifest.json, metrics.json, holdout.csv (or oof.csv when the run kept no
holdout) and bins.csv when tree-bins ran. Needs neither the data nor the cache. The result is
byte-identical to the report the run wrote. The file is written atomically.

Options:
  --out FILE   where to write (default: RUN/${REPORT_FILE})`,
  options: { out: { type: 'string' } },
  async run({ values, positionals }) {
    const runDir = resolve(onePositional(positionals, 'RUN folder', 'report'));
    if (!existsSync(runDir) || !statSync(runDir).isDirectory()) throw new UsageError(`${runDir} is not a folder`, 'give a run folder, e.g. runs/20260101T120000Z-demo (see foldstack runs)');
    const out = typeof values.out === 'string' ? resolve(values.out) : join(runDir, REPORT_FILE);
    await writeReport(runDir, out);
    process.stdout.write(out + '\n');
    return EXIT.ok;
  },
};
