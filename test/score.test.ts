/**
 * `foldstack score` and bundle.json on a small demo run: train/serve parity with holdout.csv,
 * decisions at the bundle's cut, reasons, unseen levels, a missing column, extra columns, formula
 * injection, the champion pointer, chunking, and a bundle free of machine paths.
 */
import { beforeAll, describe, expect, it } from 'vitest';
import { copyFileSync, existsSync, mkdirSync, readFileSync, readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { generateDemo } from '../data-demo/generate.js';
import { runYaml, tempDir } from './helpers/run-fixture.js';
import { readCsv, type CsvTable } from './helpers/read-csv.js';
import { quoteField } from '../pipeline/io/csv-writer.js';
import { bundlePathOf, readBundle } from '../pipeline/bundle/load.js';
import { scoreFile } from '../pipeline/bundle/score-file.js';
import { readScoringInput } from '../pipeline/bundle/input.js';
import { scoreColumns } from '../pipeline/bundle/score.js';
import { ScoreInputError } from '../pipeline/bundle/errors.js';
import { scoreCommand } from '../pipeline/commands/score.js';
import { EXIT } from '../pipeline/errors.js';
import type { Bundle } from '../pipeline/bundle/types.js';

const config = (csv: string) => `name: t
seed: 5
data:
  file: ${csv}
  target: missed_payment_90d
  positive: "yes"
  id: application_id
  columns: {applied_on: date, registered_on: date, owner_age_band: protected}
split: {folds: 3, inner_folds: 3, holdout: {fraction: 0.25}}
features:
  dates: {as_of: applied_on, pairs: [[registered_on, applied_on]]}
  rate-encode: {smoothing: 10}
  tree-bins: {max_depth: 3, min_leaf: 0.05}
  leaf-z: {}
  summaries: {high_z: 1.0}
learners:
  lr: {kind: logistic, l2: 1}
stack: {nonnegative: true}
evaluate: {budget: 0.1}
`;

/** Writes the rows of `table` whose index `keep` says, with columns transformed by `edit`. */
function writeRows(path: string, table: CsvTable, keep: (row: number) => boolean, edit: { drop?: string[]; add?: [string, (row: number) => string]; set?: Record<string, (row: number, old: string) => string> } = {}): void {
  const cols = table.header.map((h, j) => ({ h, j })).filter(({ h }) => !(edit.drop ?? []).includes(h));
  const header = [...cols.map((c) => c.h), ...(edit.add ? [edit.add[0]] : [])];
  let text = header.map(quoteField).join(',') + '\n';
  for (let r = 0; r < table.nRows; r++) {
    if (!keep(r)) continue;
    const cells = cols.map(({ h, j }) => {
      const f = edit.set?.[h];
      return f ? f(r, table.fields[j][r]) : table.fields[j][r];
    });
    if (edit.add) cells.push(edit.add[1](r));
    text += cells.map(quoteField).join(',') + '\n';
  }
  writeFileSync(path, text);
}

function column(t: CsvTable, name: string): readonly string[] {
  const j = t.header.indexOf(name);
  if (j < 0) throw new Error(`no column ${name}`);
  return t.fields[j];
}

describe('score', () => {
  let dir: string;
  let runDir: string;
  let data: CsvTable;
  let holdout: CsvTable;
  let bundle: Bundle;
  let holdCsv: string;
  let isHold: (row: number) => boolean;

  beforeAll(async () => {
    dir = tempDir('score');
    const csv = join(dir, 'data.csv');
    await generateDemo({ rows: 3000, seed: 11, out: csv });
    const outcome = await runYaml(dir, config(csv), { workers: 2 });
    runDir = outcome.runDir;
    data = readCsv(csv);
    holdout = readCsv(join(runDir, 'holdout.csv'));
    const ids = new Set(column(holdout, 'id'));
    const appIds = column(data, 'application_id');
    isHold = (r) => ids.has(appIds[r]);
    holdCsv = join(dir, 'holdout-rows.csv');
    writeRows(holdCsv, data, isHold);
    bundle = readBundle(join(runDir, 'bundle.json'));
  }, 120_000);

  it("reproduces holdout.csv's stack column exactly when scoring the run's own holdout rows", async () => {
    const out = join(dir, 'parity.csv');
    const res = await scoreFile(bundle, { input: holdCsv, out });
    const scored = readCsv(out);
    expect(scored.header).toEqual(['id', 'score', 'decision', 'reason_1', 'reason_2', 'reason_3']);
    expect(res.rows).toBe(750);
    expect(scored.nRows).toBe(holdout.nRows);
    // Both files list holdout rows in data-file order.
    expect(column(scored, 'id')).toEqual(column(holdout, 'id'));
    expect(column(scored, 'score')).toEqual(column(holdout, 'stack'));
    const cut = bundle.decision.cut;
    expect(cut).toBe(JSON.parse(readFileSync(join(runDir, 'metrics.json'), 'utf8')).holdout.stack.cut);
    const decisions = column(scored, 'decision');
    column(scored, 'score').forEach((s, i) => expect(decisions[i]).toBe(Number(s) >= cut ? '1' : '0'));
    const flagged = decisions.filter((d) => d === '1').length;
    expect(flagged).toBeGreaterThanOrEqual(75); // the cut selects ceil(0.1 * 750) rows, ties included
    // leaf-z ran: reasons are input columns of the run, distinct within a row.
    const inputs = new Set(bundle.data.columns.map((c) => c.name));
    const reasons = [1, 2, 3].map((k) => column(scored, `reason_${k}`));
    let named = 0;
    for (let i = 0; i < scored.nRows; i++) {
      const row = reasons.map((r) => r[i]).filter((r) => r !== '');
      for (const r of row) expect(inputs.has(r), r).toBe(true);
      expect(new Set(row).size).toBe(row.length);
      named += row.length;
    }
    expect(named).toBeGreaterThan(scored.nRows); // most rows have some column above the pooled mean
  });

  it('gives the same scores without the target column, with extra columns, and in small chunks', async () => {
    const base = readFileSync(join(dir, 'parity.csv'), 'utf8');
    const noTarget = join(dir, 'no-target.csv');
    writeRows(noTarget, data, isHold, { drop: ['missed_payment_90d'], add: ['extra_notes', (r) => (r % 2 ? 'NaN' : '=1+1')] });
    await scoreFile(bundle, { input: noTarget, out: join(dir, 'no-target-out.csv') });
    expect(readFileSync(join(dir, 'no-target-out.csv'), 'utf8')).toBe(base);
    await scoreFile(bundle, { input: holdCsv, out: join(dir, 'chunked.csv'), chunkRows: 7 });
    expect(readFileSync(join(dir, 'chunked.csv'), 'utf8')).toBe(base);
  });

  it('scores an unseen category with the stage prior and counts it per column', async () => {
    const input = join(dir, 'unseen.csv');
    writeRows(input, data, isHold, { set: { sector: (r, old) => (r % 5 === 0 ? 'deep_sea_mining' : old) } });
    let changed = 0;
    for (let r = 0; r < data.nRows; r++) if (isHold(r) && r % 5 === 0) changed++;
    const res = await scoreFile(bundle, { input, out: join(dir, 'unseen-out.csv') });
    const sector = res.unseen.find((u) => u.name === 'sector');
    expect(sector?.rows).toBe(changed);
    expect(res.unseen.filter((u) => u.name !== 'sector').every((u) => u.rows === 0)).toBe(true);
    const report = JSON.parse(readFileSync(res.driftFile, 'utf8'));
    expect(report.unseen.find((u: { name: string }) => u.name === 'sector').rows).toBe(changed);
    // The encoded value of an unseen level is the rate-encode state's prior.
    const state = bundle.stages.find((s) => s.kind === 'rate-encode')?.state as { prior: number };
    for await (const chunk of readScoringInput(input, bundle.data, 1_000_000)) {
      const scored = scoreColumns(bundle, chunk.columns, chunk.nRows);
      const rate = scored.columns.get('sector__rate');
      const raw = chunk.columns.get('sector');
      if (rate?.type !== 'numeric' || raw?.type !== 'categorical') throw new Error('sector columns missing');
      let seen = 0;
      for (let i = 0; i < chunk.nRows; i++) {
        if (raw.codes[i] >= 0 && raw.levels[raw.codes[i]] === 'deep_sea_mining') {
          expect(rate.values[i]).toBe(state.prior);
          seen++;
        }
      }
      expect(seen).toBe(changed);
    }
  });

  it('stops with a one-line error and writes nothing when a required column is missing', async () => {
    const input = join(dir, 'no-sector.csv');
    writeRows(input, data, isHold, { drop: ['sector'] });
    const out = join(dir, 'sub', 'none.csv');
    mkdirSync(join(dir, 'sub'));
    const err = await scoreFile(bundle, { input, out }).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(ScoreInputError);
    expect((err as ScoreInputError).columns).toEqual(['sector']);
    expect((err as Error).message).toMatch(/missing required column "sector"/);
    expect((err as Error).message).not.toMatch(/\n/);
    expect(readdirSync(join(dir, 'sub'))).toEqual([]);
  });

  it('neutralizes formula-like ids (OWASP CSV injection guidance) and keeps numbers as numbers', async () => {
    const input = join(dir, 'inject.csv');
    const evil = '=HYPERLINK("http://example.invalid","click")';
    let first = true;
    writeRows(input, data, isHold, { set: { application_id: (_r, old) => (first ? ((first = false), evil) : old) } });
    const out = join(dir, 'inject-out.csv');
    await scoreFile(bundle, { input, out });
    const scored = readCsv(out);
    expect(column(scored, 'id')[0]).toBe(`'${evil}`);
    expect(column(scored, 'score')[0]).toBe(column(holdout, 'stack')[0]);
    expect(readFileSync(out, 'utf8').split('\n')[1].startsWith('"\'=HYPERLINK(')).toBe(true);
  });

  it('scores with the champion pointer through the command', async () => {
    const runsDir = join(dir, 'runs');
    const id = runDir.split('/').pop() ?? '';
    mkdirSync(join(runsDir, 'champions'), { recursive: true });
    writeFileSync(join(runsDir, 'champions', 't.json'), JSON.stringify({ format: 1, name: 't', run: id, promoted_at: '2025-01-01T00:00:00.000Z', reason: 'manual' }));
    const out = join(dir, 'champion.csv');
    const code = await scoreCommand.run({ values: { champion: 't', input: holdCsv, out, 'runs-dir': runsDir }, positionals: [] });
    expect(code).toBe(EXIT.ok);
    expect(readFileSync(out, 'utf8')).toBe(readFileSync(join(dir, 'parity.csv'), 'utf8'));
    expect(bundlePathOf(id, runsDir)).toBe(join(runDir, 'bundle.json'));
  });

  it('holds no path of the machine, is valid JSON, and scores the same from a copy elsewhere', async () => {
    const text = readFileSync(join(runDir, 'bundle.json'), 'utf8');
    expect(() => JSON.parse(text)).not.toThrow();
    expect(text.includes(dir)).toBe(false);
    expect(text.includes('/work/')).toBe(false);
    expect(text.includes('/tmp')).toBe(false);
    expect(bundle.prior_correction).toBeNull();
    expect(bundle.stages.map((s) => s.kind)).toEqual(['dates', 'rate-encode', 'tree-bins', 'leaf-z', 'summaries', 'impute']);
    expect(bundle.learners.map((l) => [l.name, l.kind])).toEqual([['lr', 'logistic']]);
    const elsewhere = tempDir('bundle-copy');
    copyFileSync(join(runDir, 'bundle.json'), join(elsewhere, 'bundle.json'));
    const out = join(elsewhere, 'out.csv');
    await scoreFile(readBundle(bundlePathOf(elsewhere, join(elsewhere, 'runs'))), { input: holdCsv, out });
    expect(readFileSync(out, 'utf8')).toBe(readFileSync(join(dir, 'parity.csv'), 'utf8'));
    expect(existsSync(`${out}.drift.json`)).toBe(true);
  });
});
