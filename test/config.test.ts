import { readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { stageRegistry, learnerRegistry } from '../stages/index.js';
import { stageKinds, learnerKinds } from '../pipeline/config/kinds.js';
import { STAGE_ORDER } from '../pipeline/plan.js';
import { describe, expect, it } from 'vitest';
import {
  canonicalJson,
  ConfigError,
  configReferenceMarkdown,
  formatConfigError,
  loadConfig,
  parseConfig,
  toJsonSchema,
  type ResolvedConfig,
} from '../pipeline/config/index.js';

const here = path.dirname(fileURLToPath(import.meta.url));
const fixtures = path.join(here, 'fixtures', 'config');
const fixture = (name: string) => path.join(fixtures, name);

async function loadError(name: string): Promise<ConfigError> {
  const err: unknown = await loadConfig(fixture(name)).then(
    () => undefined,
    (e: unknown) => e,
  );
  if (!(err instanceof ConfigError)) throw new Error(`${name}: expected a ConfigError, got ${String(err)}`);
  return err;
}

function parseError(text: string, file = 'inline.yaml'): ConfigError {
  try {
    parseConfig(text, file);
  } catch (err) {
    if (err instanceof ConfigError) return err;
    throw err;
  }
  throw new Error('expected a ConfigError, the config was accepted');
}

interface BadCase {
  file: string;
  line: number;
  column: number;
  path: string;
  message: string;
  hint: string;
}

// Lines and columns are 1-based positions read off the fixture files by hand.
const badCases: BadCase[] = [
  { file: 'unknown-top-key.yaml', line: 2, column: 1, path: 'sede', message: 'unknown key "sede"', hint: 'did you mean "seed"?' },
  { file: 'unknown-nested-key.yaml', line: 7, column: 3, path: 'split.inner_flods', message: 'unknown key "inner_flods"', hint: 'did you mean "inner_folds"?' },
  { file: 'wrong-type.yaml', line: 8, column: 9, path: 'learners.lr.l2', message: 'expected a number ≥ 0, got "high"', hint: 'L2 penalty' },
  { file: 'out-of-range.yaml', line: 6, column: 10, path: 'split.folds', message: 'expected an integer from 2 to 20, got 50', hint: 'outer folds' },
  { file: 'missing-target.yaml', line: 2, column: 1, path: 'data.target', message: 'missing required key "target"', hint: 'add "target:" under data' },
  { file: 'missing-name.yaml', line: 2, column: 1, path: 'name', message: 'missing required key "name"', hint: 'add "name:" at the top level' },
  { file: 'holdout-both-forms.yaml', line: 6, column: 3, path: 'split.holdout', message: 'mixes keys of different forms (fraction and column + from)', hint: 'use exactly one form: fraction | column + from' },
  { file: 'holdout-fraction-too-big.yaml', line: 6, column: 23, path: 'split.holdout.fraction', message: 'expected a number in (0, 0.9], got 1.5', hint: 'Share of rows held out' },
  { file: 'holdout-bad-date.yaml', line: 8, column: 11, path: 'split.holdout.from', message: 'expected a date written YYYY-MM-DD, got "2023-02-30"', hint: 'real calendar date' },
  { file: 'duplicate-key.yaml', line: 9, column: 5, path: 'learners.lr.l2', message: 'duplicate key', hint: 'only once' },
  // yaml's accounting: *a weighs 1, *b weighs 9 (nine *a before it), so the 6th *b on line 3 makes 6 × 9 = 54 > 50.
  { file: 'alias-bomb.yaml', line: 3, column: 28, path: '', message: 'too many alias expansions', hint: 'write the repeated values out' },
  // Root mapping is level 1, `data` 2, so the 63rd "[" (column 12 + 62) is level 65.
  { file: 'too-deep.yaml', line: 5, column: 74, path: 'data.missing', message: 'nesting deeper than 64 levels', hint: 'runaway brackets' },
  // yaml notices the unclosed flow mapping of line 6 where the next block key starts.
  { file: 'syntax-error.yaml', line: 7, column: 1, path: '', message: 'YAML syntax error: Flow map', hint: 'closing brackets' },
  { file: 'unknown-stage-kind.yaml', line: 7, column: 3, path: 'features.rate-encod', message: 'unknown stage kind "rate-encod"', hint: 'did you mean "rate-encode"?' },
  { file: 'unknown-learner-kind.yaml', line: 7, column: 11, path: 'learners.lr.kind', message: 'unknown learner kind "logistc"', hint: 'did you mean "logistic"?' },
  { file: 'unknown-learner-option.yaml', line: 8, column: 5, path: 'learners.lr.max_iters', message: 'unknown key "max_iters"', hint: 'did you mean "max_iter"?' },
  { file: 'bad-column-type.yaml', line: 7, column: 23, path: 'data.columns.requested_amount', message: 'expected one of numeric, categorical, date, ignore, protected, got "numerc"', hint: 'did you mean "numeric"?' },
  { file: 'bad-stage-option.yaml', line: 7, column: 16, path: 'features.tree-bins.max_depth', message: 'expected an integer from 1 to 8, got 9', hint: 'depth' },
  { file: 'reserved-learner-name.yaml', line: 6, column: 3, path: 'learners.stack', message: '"stack" is reserved', hint: 'reserved: stack, id, fold, target' },
  { file: 'no-learners.yaml', line: 5, column: 1, path: 'learners', message: 'expected at least 1 learner name, got 0', hint: 'Base learners' },
  { file: 'bad-name.yaml', line: 1, column: 7, path: 'name', message: 'got "my run/1"', hint: 'folder names' },
  { file: 'id-is-target.yaml', line: 5, column: 3, path: 'data.id', message: 'is already the target', hint: 'must be different columns' },
];

describe('bad configs are rejected at the offending line and column', () => {
  it.each(badCases)('$file', async (c) => {
    const err = await loadError(c.file);
    const file = fixture(c.file);
    expect(err).toBeInstanceOf(Error);
    expect(err.file).toBe(file);
    expect([err.line, err.column]).toEqual([c.line, c.column]);
    expect(err.path).toBe(c.path);
    const prefix = c.path === '' ? `${file}:${c.line}:${c.column}: ` : `${file}:${c.line}:${c.column}: ${c.path}: `;
    expect(err.message.startsWith(prefix)).toBe(true);
    expect(err.message).toContain(c.message);
    expect(err.message).not.toContain('\n');
    expect(err.hint).toContain(c.hint);
    expect(err.expected).not.toBe('');
  });
});

describe('error details', () => {
  it('lists the allowed keys when nothing is within edit distance 2', () => {
    const err = parseError('name: demo\nzzzzzz: 1\n');
    expect(err.path).toBe('zzzzzz');
    expect(err.hint).toBe('allowed keys: name, seed, data, split, features, learners, exclude, balance, stack, evaluate, promote');
  });

  it('formats for the CLI as the message line plus a hint line', () => {
    const err = parseError('name: demo\nsede: 1\n', 'configs/demo.yaml');
    expect(formatConfigError(err)).toBe('configs/demo.yaml:2:1: sede: unknown key "sede"\nhint: did you mean "seed"?');
  });

  it('rejects a stage kind named __proto__ as unknown instead of reaching the prototype', () => {
    const err = parseError('name: d\ndata: {file: a.csv, target: y}\nfeatures: {__proto__: {}}\nlearners: {m: {kind: logistic}}\n');
    expect(err.path).toBe('features.__proto__');
    expect(err.message).toContain('unknown stage kind "__proto__"');
  });

  it('rejects an alias that names no anchor', () => {
    const err = parseError('name: demo\nseed: *nope\n');
    expect([err.line, err.column]).toEqual([2, 7]);
    expect(err.message).toContain('alias *nope refers to no anchor');
  });

  it('turns nesting deep enough to exhaust the YAML parser\'s stack into the same nesting error', () => {
    const n = 100_000;
    const err = parseError(`name: d\nseed: ${'['.repeat(n)}${']'.repeat(n)}\n`);
    expect(err.line).toBe(2);
    expect(err.message).toContain('nesting deeper than 64 levels');
  });

  it('rejects an empty document and a document that is not a mapping', () => {
    expect(parseError('').message).toBe('inline.yaml:1:1: expected a mapping, got an empty value');
    expect(parseError('- a\n- b\n').message).toBe('inline.yaml:1:1: expected a mapping, got a list');
  });

  it('rejects a non-integer seed and a string where a number is expected', () => {
    expect(parseError('name: d\nseed: 1.5\n').message).toContain('seed: expected an integer ≥ 0, got 1.5');
    expect(parseError('name: d\nseed: "3"\n').message).toContain('got "3"');
  });

  it('rejects a date pair that is not exactly two columns', () => {
    const err = parseError(
      'name: d\ndata: {file: a.csv, target: y}\nfeatures:\n  dates:\n    pairs: [[a, b, c]]\nlearners: {m: {kind: logistic}}\n',
    );
    expect(err.path).toBe('features.dates.pairs[0]');
    expect([err.line, err.column]).toEqual([5, 13]);
    expect(err.message).toContain('got 3 items');
  });
});

describe('good configs', () => {
  it('fills every default in the minimal config', async () => {
    const cfg = await loadConfig(path.join(here, '..', 'configs', 'minimal.yaml'));
    expect(cfg.file).toBe(path.resolve(here, '..', 'configs', 'minimal.yaml'));
    expect(cfg.seed).toBe(1);
    expect(cfg.data.file).toBe(path.resolve(here, '..', 'data-demo', 'demo.csv'));
    expect(cfg.data.target).toBe('missed_payment_90d');
    expect(cfg.data.positive).toBe('yes');
    expect(cfg.data.id).toBe('application_id');
    expect(cfg.data.columns).toEqual(new Map());
    expect(cfg.data.missing).toEqual(['', 'NA']);
    expect(cfg.split).toEqual({ folds: 5, innerFolds: 5, holdout: { type: 'fraction', fraction: 0.2 } });
    expect(cfg.features).toEqual(new Map([['rate-encode', { smoothing: 20 }]]));
    expect(cfg.learners).toEqual(new Map([['lr', { kind: 'logistic', options: { l2: 1, max_iter: 100, tol: 1e-10 } }]]));
    expect(cfg.stack).toEqual({ nonnegative: true, passthrough: [] });
    expect(cfg.evaluate).toEqual({ budget: 0.1, budgets: [0.1] });
  });

  it('points editors at the JSON Schema on its first line', () => {
    const first = readFileSync(path.join(here, '..', 'configs', 'minimal.yaml'), 'utf8').split('\n')[0];
    expect(first).toBe('# yaml-language-server: $schema=../config.schema.json');
  });

  it('reads every section of a full config', async () => {
    const cfg = await loadConfig(fixture('good-full.yaml'));
    expect(cfg.name).toBe('full.example-1');
    expect(cfg.seed).toBe(42);
    expect(cfg.data.file).toBe(path.join(fixtures, 'data', 'demo.csv'));
    // A numeric label is kept as typed so it matches the file's text.
    expect(cfg.data.positive).toBe('1');
    expect(cfg.data.missing).toEqual(['', 'NA', '-']);
    expect(cfg.data.columns.get('2019')).toBe('numeric');
    expect(cfg.split).toEqual({ folds: 4, innerFolds: 3, holdout: { type: 'time', column: 'application_date', from: '2023-07-01' } });
    expect([...cfg.features.keys()]).toEqual(['dates', 'tree-bins', 'leaf-z', 'summaries']);
    expect(cfg.features.get('dates')).toEqual({ pairs: [['application_date', 'registered_date']], fiscal_start_month: 4, holiday_window_days: 7 });
    expect(cfg.features.get('tree-bins')).toEqual({ monotone: 'auto', max_bins: 255, min_leaf: 30, max_depth: 3, smoothing: 20 });
    expect(cfg.features.get('leaf-z')).toEqual({});
    expect(cfg.features.get('summaries')).toEqual({ high_z: 1 });
    expect([...cfg.learners.keys()]).toEqual(['lr_strong', 'lr_weak']);
    expect(cfg.learners.get('lr_strong')).toEqual({ kind: 'logistic', options: { max_iter: 200, l2: 10, tol: 1e-10 } });
    expect(cfg.stack).toEqual({ nonnegative: false, passthrough: [] });
    expect(cfg.evaluate).toEqual({ budget: 0.1, budgets: [0.05, 0.1, 0.2] });
  });

  it('keeps a numeric label exactly as written', () => {
    const cfg = parseConfig('name: d\ndata: {file: a.csv, target: y, positive: 1.0}\nlearners: {m: {kind: logistic}}\n', 'c.yaml');
    expect(cfg.data.positive).toBe('1.0');
  });

  it('resolves data.file against the config file folder, and leaves absolute paths alone', () => {
    const text = (file: string) => `name: d\ndata: {file: ${file}, target: y}\nlearners: {m: {kind: logistic}}\n`;
    const configFile = path.join(path.sep, 'projects', 'risk', 'configs', 'a.yaml');
    expect(parseConfig(text('../data/x.csv'), configFile).data.file).toBe(path.join(path.sep, 'projects', 'risk', 'data', 'x.csv'));
    expect(parseConfig(text('/srv/x.csv'), configFile).data.file).toBe('/srv/x.csv');
    expect(parseConfig(text('x.csv'), configFile).file).toBe(configFile);
  });

  it('accepts __proto__ and constructor as column names without touching prototypes', async () => {
    const before = Object.getOwnPropertyNames(Object.prototype).sort();
    const cfg = await loadConfig(fixture('good-full.yaml'));
    expect(cfg.data.columns.get('__proto__')).toBe('protected');
    expect(cfg.data.columns.get('constructor')).toBe('ignore');
    expect(cfg.data.columns.size).toBe(4);
    expect(Object.getOwnPropertyNames(Object.prototype).sort()).toEqual(before);
    const plain: Record<string, unknown> = {};
    expect(plain.protected).toBeUndefined();
    expect(Object.getPrototypeOf(plain)).toBe(Object.prototype);
    expect(canonicalJson(cfg.data.columns)).toBe('{"2019":"numeric","__proto__":"protected","constructor":"ignore","sector":"categorical"}');
  });

  it('accepts modest use of anchors and aliases', () => {
    const cfg = parseConfig(
      'name: d\ndata: {file: a.csv, target: y}\nlearners:\n  a: &opts {kind: logistic, l2: 3}\n  b: *opts\n',
      'c.yaml',
    );
    expect(cfg.learners.get('b')).toEqual({ kind: 'logistic', options: { l2: 3, max_iter: 100, tol: 1e-10 } });
  });
});

describe('canonicalJson', () => {
  it('gives byte-equal text for configs that differ only in key order', () => {
    const a = parseConfig(
      'name: d\nseed: 3\ndata: {file: a.csv, target: y, columns: {b: date, a: numeric}}\nlearners: {m: {kind: logistic, l2: 2, tol: 0.001}}\n',
      '/x/c.yaml',
    );
    const b = parseConfig(
      'learners: {m: {tol: 0.001, l2: 2, kind: logistic}}\ndata: {columns: {a: numeric, b: date}, target: y, file: a.csv}\nseed: 3\nname: d\n',
      '/x/c.yaml',
    );
    expect(canonicalJson(a)).toBe(canonicalJson(b));
  });

  it('sorts keys, writes Maps as objects, and has no whitespace', () => {
    const value = { b: [1, { d: true, c: null }], a: new Map<string, unknown>([['z', 'é'], ['y', 0.5]]) };
    expect(canonicalJson(value)).toBe('{"a":{"y":0.5,"z":"é"},"b":[1,{"c":null,"d":true}]}');
  });

  it('distinguishes configs that differ in one setting', () => {
    const text = (l2: number) => `name: d\ndata: {file: a.csv, target: y}\nlearners: {m: {kind: logistic, l2: ${l2}}}\n`;
    const a: ResolvedConfig = parseConfig(text(1), '/x/c.yaml');
    const b: ResolvedConfig = parseConfig(text(2), '/x/c.yaml');
    expect(canonicalJson(a.learners)).not.toBe(canonicalJson(b.learners));
  });

  it('refuses values that JSON cannot carry faithfully', () => {
    expect(() => canonicalJson({ x: Number.NaN })).toThrow(/NaN at x/);
    expect(() => canonicalJson(new Map<unknown, unknown>([[1, 'a']]))).toThrow(/Map key/);
  });
});

type Json = string | number | boolean | null | Json[] | { [k: string]: Json };

/** Every subschema of a JSON Schema document, found by walking its schema-valued keywords. */
function subschemas(schema: { [k: string]: Json }): { [k: string]: Json }[] {
  const out = [schema];
  const visit = (value: Json | undefined): void => {
    if (value !== undefined && value !== null && typeof value === 'object' && !Array.isArray(value)) out.push(...subschemas(value));
  };
  // propertyNames constrains keys, not values, so it is not a subschema of the document's data.
  for (const key of ['items', 'additionalProperties']) visit(schema[key]);
  const props = schema.properties;
  if (props !== undefined && props !== null && typeof props === 'object' && !Array.isArray(props)) Object.values(props).forEach(visit);
  const oneOf = schema.oneOf;
  if (Array.isArray(oneOf)) oneOf.forEach(visit);
  return out;
}

describe('JSON Schema export', () => {
  const schema = JSON.parse(JSON.stringify(toJsonSchema())) as { [k: string]: Json };
  const all = subschemas(schema);

  it('is a draft 2020-12 document with a title and the top-level keys', () => {
    expect(schema.$schema).toBe('https://json-schema.org/draft/2020-12/schema');
    expect(schema.title).toBe('foldstack config');
    expect(Object.keys(schema.properties as object)).toEqual(['name', 'seed', 'data', 'split', 'features', 'learners', 'exclude', 'balance', 'stack', 'evaluate', 'promote']);
    expect(schema.required).toEqual(['name', 'data', 'learners']);
  });

  it('closes every object with fixed keys and describes every schema', () => {
    const withProperties = all.filter((s) => s.properties !== undefined);
    expect(withProperties.length).toBeGreaterThan(10);
    for (const s of withProperties) expect(s.additionalProperties).toBe(false);
    for (const s of all.filter((x) => x.type === 'object' && x.properties === undefined)) {
      // Name-keyed maps (columns, learners) constrain their values instead.
      expect(typeof s.additionalProperties).toBe('object');
    }
    for (const s of all) expect(typeof s.description).toBe('string');
  });

  it('carries the same constraints and defaults as the validator', () => {
    const props = schema.properties as { [k: string]: { [k: string]: Json } };
    const split = props.split.properties as { [k: string]: { [k: string]: Json } };
    expect(split.folds).toMatchObject({ type: 'integer', minimum: 2, maximum: 20, default: 5 });
    expect(split.holdout.default).toEqual({ fraction: 0.2 });
    const learners = props.learners;
    expect(learners.propertyNames).toEqual({ pattern: '^[A-Za-z0-9][A-Za-z0-9_.-]{0,63}$', not: { enum: ['stack', 'id', 'fold', 'target'] } });
    expect(learners.minProperties).toBe(1);
    const logistic = (learners.additionalProperties as { oneOf: { [k: string]: Json }[] }).oneOf[0];
    expect(logistic.required).toEqual(['kind']);
    expect((logistic.properties as { [k: string]: { [k: string]: Json } }).kind.const).toBe('logistic');
    const features = props.features.properties as { [k: string]: { [k: string]: Json } };
    expect(Object.keys(features)).toEqual([...stageKinds.keys()]);
    expect(features['tree-bins'].type).toEqual(['object', 'null']);
  });
});

describe('schema and stage registry', () => {
  it('every configurable stage and learner kind has a module, and every module but impute a schema entry', () => {
    expect([...stageKinds.keys()].sort()).toEqual([...stageRegistry.keys()].filter((k) => k !== 'impute').sort());
    expect([...learnerKinds.keys()].sort()).toEqual([...learnerRegistry.keys()].sort());
    for (const kind of stageKinds.keys()) expect(STAGE_ORDER, kind).toContain(kind);
  });
});

describe('Markdown reference', () => {
  it('has a row per key with type, default and description', () => {
    const md = configReferenceMarkdown();
    expect(md).toContain('| Key | Type | Default | Description |');
    expect(md).toContain('| `split.folds` | an integer from 2 to 20 | `5` | Number of stratified outer folds over the non-holdout rows. |');
    expect(md).toContain('| `learners.<learner name>.l2` | a number ≥ 0 | `1` | (kind: logistic) L2 penalty');
    expect(md).toContain('| `data.columns.<column>` | one of numeric, categorical, date, ignore, protected |');
    expect(md).toContain('| `features.tree-bins.monotone` | one of auto, up, down, none | `"none"` |');
  });
});
