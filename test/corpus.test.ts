/**
 * The bad-input corpus (test/corpus/): every file goes through the built CLI as a user would run it.
 * A bad input must end with its documented exit code, exactly two stderr lines ("error: …" then
 * "hint: …", no stack trace unless --debug) and nothing left in the runs folder; inputs that are odd
 * but valid must run. Expectations are this project's own error contract (common practice, no source).
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { EXIT } from '../pipeline/errors.js';
import { tempDir } from './helpers/temp.js';

const ROOT = resolve(import.meta.dirname, '..');
const CLI = join(ROOT, 'dist', 'pipeline', 'cli.js');
const CORPUS = join(ROOT, 'test', 'corpus');

interface Outcome {
  code: number | null;
  stderr: string;
}

let work: string;

function cli(args: readonly string[]): Outcome {
  const r = spawnSync(process.execPath, [CLI, ...args], { encoding: 'utf8', cwd: CORPUS, timeout: 90_000 });
  return { code: r.status, stderr: r.stderr };
}

/** A config for a corpus data file: target y, id id (the corpus data all use these names). */
function configFor(dataFile: string, columns = ''): string {
  const file = join(work, `${dataFile.replace(/[^A-Za-z0-9]/g, '_')}.yaml`);
  writeFileSync(file, `name: corpus\ndata:\n  file: ${JSON.stringify(dataFile)}\n  target: y\n  id: id\n${columns}features:\n  rate-encode: {}\nlearners:\n  lr:\n    kind: logistic\n`);
  return file;
}

function runArgs(config: string, tag: string): { args: string[]; runs: string } {
  const runs = join(work, `runs-${tag}`);
  return { args: ['run', config, '--workers', '1', '--runs-dir', runs, '--cache-dir', join(work, 'cache')], runs };
}

/** Nothing but the (empty) lock folder may remain in the runs folder after a failed run. */
function leftovers(runs: string): string[] {
  if (!existsSync(runs)) return [];
  const out: string[] = [];
  for (const n of readdirSync(runs)) {
    if (n === '.locks') out.push(...readdirSync(join(runs, n)).map((f) => `.locks/${f}`));
    else out.push(n);
  }
  return out;
}

function expectCleanFailure(o: Outcome, code: number, message: RegExp, runs: string): void {
  expect(o.code, o.stderr).toBe(code);
  const lines = o.stderr.split('\n');
  expect(lines, o.stderr).toHaveLength(3);
  expect(lines[0]).toMatch(/^error: /);
  expect(lines[0]).toMatch(message);
  expect(lines[1]).toMatch(/^hint: \S/);
  expect(lines[2]).toBe('');
  expect(o.stderr).not.toMatch(/\n\s+at /);
  expect(leftovers(runs)).toEqual([]);
}

beforeAll(() => {
  // tsc emits even when other files have type errors; what matters is that the CLI exists.
  spawnSync(process.execPath, [join(ROOT, 'node_modules', 'typescript', 'bin', 'tsc'), '-p', join(ROOT, 'tsconfig.json')], { cwd: ROOT, stdio: 'ignore' });
  expect(existsSync(CLI)).toBe(true);
  work = tempDir('corpus');
}, 240_000);

/** Bad data files: [file, exit code, what the error line must say]. */
const BAD_DATA: readonly [string, number, RegExp][] = [
  ['unterminated-quote.csv', EXIT.data, /closing quote/],
  ['quote-in-unquoted.csv', EXIT.data, /quote inside an unquoted field/],
  ['semicolon.csv', EXIT.data, /header of one column/],
  ['binary-garbage.csv', EXIT.data, /NUL byte/],
  ['utf16.csv', EXIT.data, /UTF-16/],
  ['nul-byte.csv', EXIT.data, /NUL byte/],
  ['empty.csv', EXIT.data, /empty file/],
  ['header-only.csv', EXIT.data, /data rows/],
  ['single-class.csv', EXIT.data, /two classes/],
  ['nan-infinity.csv', EXIT.data, /finite number.*"NaN"/],
  ['duplicate-ids.csv', EXIT.data, /unique.*"7"/],
  ['duplicate-header.csv', EXIT.data, /distinct column names/],
  ['ragged-rows.csv', EXIT.data, /expected 5 fields.*found 3/],
  ['decimal-comma-unquoted.csv', EXIT.data, /expected 5 fields.*found 6/],
  ['target-missing.csv', EXIT.data, /column named "y"/],
  ['target-not-binary.csv', EXIT.data, /values 0 and 1/],
  ['target-blank.csv', EXIT.data, /target value on every row/],
  ['only-target.csv', EXIT.data, /column named "id"/],
  ['too-few-rows.csv', EXIT.data, /one class/],
  ['a-directory.csv', EXIT.data, /EISDIR/],
  ['no-such-file.csv', EXIT.data, /ENOENT/],
];

describe('bad data files fail cleanly', () => {
  it.each(BAD_DATA)('%s', (file, code, message) => {
    const { args, runs } = runArgs(configFor(join(CORPUS, 'data', file)), file);
    expectCleanFailure(cli(args), code, message, runs);
  });

  it('semicolon-separated file: the hint names the delimiter', () => {
    const { args } = runArgs(configFor(join(CORPUS, 'data', 'semicolon.csv')), 'semicolon-hint');
    expect(cli(args).stderr).toMatch(/hint: the file looks ";"-separated/);
  });

  it('date out of range (2023-13-45) in a declared date column', () => {
    const { args, runs } = runArgs(configFor(join(CORPUS, 'data', 'date-out-of-range.csv'), '  columns:\n    when: date\n'), 'date');
    expectCleanFailure(cli(args), EXIT.data, /date YYYY-MM-DD that exists, found "2023-13-45"/, runs);
  });

  it('--debug adds the stack trace after the two lines', () => {
    const { args } = runArgs(configFor(join(CORPUS, 'data', 'empty.csv')), 'debug');
    const o = cli([...args, '--debug']);
    expect(o.code).toBe(EXIT.data);
    expect(o.stderr.split('\n')[0]).toMatch(/^error: /);
    expect(o.stderr).toMatch(/\n\s+at /);
  });
});

/** Bad configs (committed in test/corpus/configs/): [file, exit code, what the error line must say]. */
const BAD_CONFIGS: readonly [string, number, RegExp][] = [
  ['alias-bomb.yaml', EXIT.config, /alias/],
  ['deep-nesting.yaml', EXIT.config, /nesting deeper/],
  ['wrong-types.yaml', EXIT.config, /name: expected a name/],
  ['unknown-keys.yaml', EXIT.config, /unknown key "learnrs"/],
  ['missing-name.yaml', EXIT.config, /missing required key "name"/],
  ['empty.yaml', EXIT.config, /expected a mapping/],
  ['not-a-mapping.yaml', EXIT.config, /expected a mapping, got a list/],
  ['yaml-syntax.yaml', EXIT.config, /YAML syntax error/],
  ['tabs.yaml', EXIT.config, /Tabs/],
  ['duplicate-keys.yaml', EXIT.config, /duplicate key/],
  ['bad-name.yaml', EXIT.config, /name: expected a name/],
  ['unknown-learner-kind.yaml', EXIT.config, /unknown learner kind "oracle"/],
  ['unknown-stage.yaml', EXIT.config, /unknown stage kind "magic-stage"/],
  ['folds-too-many.yaml', EXIT.config, /split\.folds/],
  ['holdout-all.yaml', EXIT.config, /split\.holdout\.fraction/],
  ['negative-l2.yaml', EXIT.config, /l2: expected a number ≥ 0/],
  ['huge-number.yaml', EXIT.config, /seed: expected an integer/],
  ['no-learners.yaml', EXIT.config, /at least 1 learner/],
  ['id-is-target.yaml', EXIT.config, /already the target/],
  ['binary.yaml', EXIT.config, /expected a mapping/],
  ['missing-data-file.yaml', EXIT.data, /ENOENT/],
  ['data-is-directory.yaml', EXIT.data, /EISDIR/],
  ['target-not-in-header.yaml', EXIT.data, /column named "Y_label"/],
];

describe('bad configs fail cleanly', () => {
  it.each(BAD_CONFIGS)('%s', (file, code, message) => {
    const { args, runs } = runArgs(join(CORPUS, 'configs', file), file);
    expectCleanFailure(cli(args), code, message, runs);
  });

  it('check rejects the schema-level ones the same way, writing nothing', () => {
    for (const [file, code, message] of BAD_CONFIGS.filter(([, c]) => c === EXIT.config)) {
      const o = cli(['check', join(CORPUS, 'configs', file)]);
      expect(o.code, file).toBe(code);
      expect(o.stderr.split('\n')[0], file).toMatch(message);
      expect(o.stderr.split('\n'), file).toHaveLength(3);
    }
    const missing = cli(['check', join(CORPUS, 'configs', 'missing-data-file.yaml')]);
    expect(missing.code).toBe(EXIT.data); // the same code `run` gives for a missing data file
    expect(missing.stderr).toMatch(/^error: .*no-such-file\.csv/);
  });
});

describe('odd but valid inputs run', () => {
  const valid: readonly [string, string][] = [
    ['good.csv', ''],
    ['constant-column.csv', ''],
    ['all-missing-column.csv', ''],
    ['proto-names.csv', ''],
    ['bom-crlf.csv', ''],
    ['blank-lines.csv', ''],
  ];
  it.each(valid)('%s', (file, columns) => {
    const { args, runs } = runArgs(configFor(join(CORPUS, 'data', file), columns), `ok-${file}`);
    const o = cli(args);
    expect(o.code, o.stderr).toBe(0);
    const finished = readdirSync(runs).filter((n) => !n.startsWith('.'));
    expect(finished).toHaveLength(1);
    expect(existsSync(join(runs, finished[0], 'manifest.json'))).toBe(true);
  });

  it('a BOM + CRLF file gives the same predictions as its plain twin', () => {
    const a = runArgs(configFor(join(CORPUS, 'data', 'good.csv')), 'twin-a');
    const b = runArgs(configFor(join(CORPUS, 'data', 'bom-crlf.csv')), 'twin-b');
    expect(cli(a.args).code).toBe(0);
    expect(cli(b.args).code).toBe(0);
    const oof = (runs: string) => {
      const dir = readdirSync(runs).find((n) => !n.startsWith('.')) ?? '';
      return readFileSync(join(runs, dir, 'oof.csv'), 'utf8');
    };
    expect(oof(b.runs)).toBe(oof(a.runs));
  });

  // Generated rather than committed: 10,000 levels and a 1 MB cell would bloat the repository.
  it('a categorical column with 10,000 levels', () => {
    const file = join(work, 'many-levels.csv');
    const lines = ['id,x,many,y'];
    for (let i = 0; i < 10_000; i++) lines.push(`${i},${((i * 7919) % 1000) / 1000},L${i},${i % 5 === 0 ? 1 : 0}`);
    writeFileSync(file, lines.join('\n') + '\n');
    const { args } = runArgs(configFor(file), 'many');
    const o = cli(args);
    expect(o.code, o.stderr).toBe(0);
  });

  it('a single 1 MB field', () => {
    const file = join(work, 'big-field.csv');
    const lines = ['id,x,txt,y'];
    for (let i = 0; i < 200; i++) lines.push(`${i},${((i * 31) % 97) / 97},${i === 5 ? 'A'.repeat(1 << 20) : 'b'},${i % 4 === 0 ? 1 : 0}`);
    writeFileSync(file, lines.join('\n') + '\n');
    const { args } = runArgs(configFor(file), 'bigfield');
    const o = cli(args);
    expect(o.code, o.stderr).toBe(0);
  });
});

describe('runs folder', () => {
  it('a runs folder under a regular file is a clean failure (ENOTDIR)', () => {
    const blocker = join(work, 'plain-file');
    mkdirSync(work, { recursive: true });
    writeFileSync(blocker, 'x\n');
    const o = cli(['run', join(CORPUS, 'configs', 'good.yaml'), '--workers', '1', '--runs-dir', join(blocker, 'runs'), '--cache-dir', join(work, 'cache')]);
    expect(o.code).toBe(EXIT.runFailure);
    expect(o.stderr).toMatch(/^error: ENOTDIR.*\nhint: .*writable.*\n$/);
  });
});
