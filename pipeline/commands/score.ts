import { dirname, resolve } from 'node:path';
import { EXIT, UsageError } from '../errors.js';
import { bundlePathOf, championRun, readBundle } from '../bundle/load.js';
import { DEFAULT_CHUNK_ROWS, scoreFile } from '../bundle/score-file.js';
import { PSI_MAJOR } from '../metrics/psi.js';
import { stringOption } from './args.js';
import type { Command } from './command.js';

export const scoreCommand: Command = {
  name: 'score',
  summary: "score a CSV with a run's bundle: scores, decisions, reasons and a drift report",
  help: `foldstack score RUN --input FILE.csv --out FILE.csv [options]
foldstack score --champion NAME --input FILE.csv --out FILE.csv [options]

Scores every row of the input with the run's bundle.json (the final fit's stages, learners and
stack), writing id, score, decision (1 when score >= the run's budget cut) and reason_1..3 (the
input columns that pushed the row's risk up most). RUN is a run folder path or a run id under
the runs folder. The target column may be absent; extra columns are ignored; a missing required
column stops before anything is written. The output is written atomically, and a drift report
(PSI of the score and of every feature against the training rows) goes next to it.

Options:
  --champion NAME    score with the current champion of config NAME instead of RUN
  --input FILE       the CSV to score (required)
  --out FILE         where the scores go (required)
  --drift FILE       the drift report (default: <out>.drift.json)
  --runs-dir DIR     where run folders and champions are (default: ./runs)
  --fail-on-drift    exit ${EXIT.drift} when any PSI is >= ${PSI_MAJOR} (after writing the outputs)
  --chunk-rows N     rows scored per chunk (default ${DEFAULT_CHUNK_ROWS})`,
  options: {
    champion: { type: 'string' },
    input: { type: 'string' },
    out: { type: 'string' },
    drift: { type: 'string' },
    'runs-dir': { type: 'string' },
    'fail-on-drift': { type: 'boolean' },
    'chunk-rows': { type: 'string' },
  },
  async run({ values, positionals }) {
    const runsDir = resolve(stringOption(values['runs-dir'], 'runs'));
    const champion = values.champion;
    if ((typeof champion === 'string') === (positionals.length === 1) || positionals.length > 1) {
      throw new UsageError('score takes either one RUN or --champion NAME', 'run foldstack score --help');
    }
    const input = required(values.input, '--input');
    const out = required(values.out, '--out');
    const run = typeof champion === 'string' ? championRun(champion, runsDir) : positionals[0];
    const bundleFile = bundlePathOf(run, runsDir);
    const bundle = readBundle(bundleFile);
    const result = await scoreFile(bundle, {
      input,
      out,
      drift: typeof values.drift === 'string' ? values.drift : undefined,
      chunkRows: values['chunk-rows'] === undefined ? undefined : chunkRows(String(values['chunk-rows'])),
    });
    for (const u of result.unseen) {
      if (u.rows > 0) process.stderr.write(`warning: ${u.name}: ${u.rows} row(s) with a level not seen in training, scored with the prior\n`);
    }
    const d = result.drift;
    for (const e of [d.score, ...d.features, ...d.categories]) {
      if (e.psi >= PSI_MAJOR) process.stderr.write(`warning: drift in ${e.name}: PSI ${e.psi.toFixed(3)} >= ${PSI_MAJOR}\n`);
    }
    process.stderr.write(`scored ${result.rows} rows with ${dirname(bundleFile)} · score PSI ${d.score.psi.toFixed(3)} · drift report ${result.driftFile}\n`);
    process.stdout.write(resolve(out) + '\n');
    return values['fail-on-drift'] === true && d.major.length > 0 ? EXIT.drift : EXIT.ok;
  },
};

function required(v: unknown, name: string): string {
  if (typeof v !== 'string' || v === '') throw new UsageError(`score needs ${name} FILE`, 'run foldstack score --help');
  return v;
}

function chunkRows(s: string): number {
  const n = Number(s);
  if (!Number.isInteger(n) || n < 1) throw new UsageError(`--chunk-rows must be a whole number >= 1, got "${s}"`, 'omit it for the default');
  return n;
}
