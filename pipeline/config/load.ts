/** Entry points: YAML text or file → validated, defaulted, path-resolved ResolvedConfig. */
import { readFile } from 'node:fs/promises';
import path from 'node:path';
import { isMap, isScalar } from 'yaml';
import { ConfigError } from './errors.js';
import type { ColumnDecl, HoldoutConfig, LearnerConfig, PromoteConfig, ResolvedConfig } from './types.js';
import { configSchema } from './schema.js';
import { validateDocument, type SourceContext } from './validate.js';
import { readYaml } from './yaml-source.js';
import { ExclusionRuleError, resolveExclusions, type ExclusionRule } from '../../stages/exclude.js';

/** The validator's output shape for `configSchema` (keys as in the file, defaults filled). */
interface RawConfig {
  name: string;
  seed: number;
  data: { file: string; target: string; positive?: string; id?: string; columns: Map<string, ColumnDecl>; missing: string[] };
  split: { folds: number; inner_folds: number; holdout: { fraction: number } | { column: string; from: string } };
  features: Map<string, Record<string, unknown>>;
  learners: Map<string, Record<string, unknown>>;
  exclude: Record<string, unknown>[];
  balance?: { ratio: number };
  stack: { nonnegative: boolean; passthrough: string[] };
  evaluate: { budget: number; budgets?: number[] };
  promote: { metric: PromoteConfig['metric']; min_gain: number; max_p: number };
}

export async function loadConfig(file: string): Promise<ResolvedConfig> {
  return parseConfig(await readFile(file, 'utf8'), file);
}

/** Pure: no file access. `file` names the config in messages, and relative paths resolve against its folder. */
export function parseConfig(text: string, file: string): ResolvedConfig {
  const ctx = readYaml(text, file);
  // The cast is sound because validateDocument returns only values that conform to configSchema.
  const raw = validateDocument(configSchema, ctx) as RawConfig;
  checkRoles(raw, ctx);
  const absoluteFile = path.resolve(file);
  return {
    file: absoluteFile,
    name: raw.name,
    seed: raw.seed,
    data: {
      ...raw.data,
      file: path.resolve(path.dirname(absoluteFile), raw.data.file),
    },
    split: { folds: raw.split.folds, innerFolds: raw.split.inner_folds, holdout: holdoutOf(raw.split.holdout) },
    features: raw.features,
    learners: new Map([...raw.learners].map(([name, spec]) => [name, learnerOf(spec)])),
    exclude: exclusionsOf(raw.exclude, ctx),
    balance: raw.balance ?? null,
    stack: raw.stack,
    evaluate: {
      budget: raw.evaluate.budget,
      budgets: [...new Set([raw.evaluate.budget, ...(raw.evaluate.budgets ?? [])])].sort((a, b) => a - b),
    },
    promote: { metric: raw.promote.metric, minGain: raw.promote.min_gain, maxP: raw.promote.max_p },
  };
}

/** Numbers in `below`/`above` arrive as their source text (they may also be dates); the stage's own resolver checks the rest. */
function exclusionsOf(rules: Record<string, unknown>[], ctx: SourceContext): ExclusionRule[] {
  const plain = rules.map((r) => {
    const out: Record<string, unknown> = { ...r };
    for (const k of ['below', 'above']) {
      const v = out[k];
      if (typeof v === 'string' && !/^\d{4}-\d{2}-\d{2}$/.test(v) && Number.isFinite(Number(v))) out[k] = Number(v);
    }
    return out;
  });
  try {
    return resolveExclusions(plain);
  } catch (err) {
    if (!(err instanceof ExclusionRuleError) || err.index < 0) throw err;
    const field = err.field === '' ? 'column' : err.field;
    failAt(ctx, ['exclude', String(err.index), field], `exclude[${err.index}].${field}`, 'a valid exclusion rule', err.message.replace(/^exclude\[\d+\]: /, ''), 'each rule has a reason, a column and exactly one of in, not_in, below, above, missing');
  }
}

function holdoutOf(h: RawConfig['split']['holdout']): HoldoutConfig {
  return 'fraction' in h ? { type: 'fraction', fraction: h.fraction } : { type: 'time', column: h.column, from: h.from };
}

function learnerOf(spec: Record<string, unknown>): LearnerConfig {
  const { kind, ...options } = spec;
  return { kind: String(kind), options };
}

/** The target and id have fixed roles; declaring them again, or making them one column, is a mistake. */
function checkRoles(raw: RawConfig, ctx: SourceContext): void {
  const { target, id, columns } = raw.data;
  if (id !== undefined && id === target) {
    failAt(ctx, ['data', 'id'], 'data.id', 'a column other than data.target', `"${id}" is already the target`, 'the id column and the target must be different columns');
  }
  for (const column of [target, id]) {
    if (column !== undefined && columns.has(column)) {
      failAt(
        ctx,
        ['data', 'columns', column],
        `data.columns.${column}`,
        'a column other than the target and id',
        `"${column}" is the ${column === target ? 'target' : 'id'} column and cannot be declared here`,
        'the target and id columns have fixed roles; remove this entry',
      );
    }
  }
}

function failAt(ctx: SourceContext, keys: readonly string[], keyPath: string, expected: string, problem: string, hint: string): never {
  // Sequence items are addressed by number.
  const parent = ctx.doc.getIn(keys.slice(0, -1).map((k) => (/^\d+$/.test(k) ? Number(k) : k)), true);
  const last = keys[keys.length - 1];
  const pair = isMap(parent) ? parent.items.find((p) => isScalar(p.key) && String(p.key.value) === last) : undefined;
  const offset = isScalar(pair?.key) ? (pair.key.range?.[0] ?? 0) : 0;
  const { line, col } = ctx.lineCounter.linePos(offset);
  throw new ConfigError({ file: ctx.file, line, column: col, path: keyPath, expected, problem, hint });
}
