/**
 * Validates a parsed YAML document against a schema node by node, filling defaults as it goes.
 * Working on the YAML nodes (not on a converted JS object) is what lets every error name the line
 * and column of the offending key or value.
 */
import { isAlias, isCollection, isMap, isScalar, isSeq, type Document, type LineCounter, type Pair, type YAMLMap } from 'yaml';
import { ConfigError } from './errors.js';
import { expectedText } from './describe.js';
import {
  absentValue,
  shapeKeys,
  type ArraySchema,
  type KeyedSchema,
  type MapSchema,
  type NumberSchema,
  type ObjectSchema,
  type OneOfSchema,
  type Schema,
  type StringSchema,
  type TaggedSchema,
} from './schema-dsl.js';
import { suggestionHint } from './suggest.js';

export interface SourceContext {
  /** The file name as the modeler should see it in messages. */
  readonly file: string;
  readonly doc: Document.Parsed;
  readonly lineCounter: LineCounter;
}

const DATE_RE = /^(\d{4})-(\d{2})-(\d{2})$/;

export function validateDocument(schema: Schema, ctx: SourceContext): unknown {
  const root: unknown = ctx.doc.contents;
  return new Validator(ctx).check(schema, root, offsetOf(root, 0), '');
}

/** The offset where a node starts, or `fallback` for nodes without a source range. */
function offsetOf(node: unknown, fallback: number): number {
  if (node !== null && typeof node === 'object' && 'range' in node) {
    const range = (node as { range?: readonly number[] | null }).range;
    if (range) return range[0];
  }
  return fallback;
}

function joinPath(path: string, key: string): string {
  return path === '' ? key : `${path}.${key}`;
}

function gotText(node: unknown): string {
  if (isMap(node)) return 'a mapping';
  if (isSeq(node)) return 'a list';
  if (isScalar(node)) {
    const v = node.value;
    if (v === null || v === undefined) return 'an empty value';
    if (typeof v === 'string') return JSON.stringify(v.length > 40 ? `${v.slice(0, 40)}…` : v);
    if (typeof v === 'number') return node.source ?? String(v);
    return String(v);
  }
  return 'an empty value';
}

function isEmptyValue(node: unknown): boolean {
  return node === null || node === undefined || (isScalar(node) && node.value === null);
}

interface Entry {
  readonly key: string;
  readonly keyAt: number;
  readonly value: unknown;
  readonly valueAt: number;
}

class Validator {
  constructor(private readonly ctx: SourceContext) {}

  check(schema: Schema, rawNode: unknown, at: number, path: string): unknown {
    const node = this.deref(rawNode, at, path);
    switch (schema.type) {
      case 'string':
        return this.checkString(schema, node, at, path);
      case 'number':
        return this.checkNumber(schema, node, at, path);
      case 'boolean': {
        if (!isScalar(node) || typeof node.value !== 'boolean') this.typeError(schema, node, at, path);
        return node.value;
      }
      case 'enum': {
        if (!isScalar(node) || typeof node.value !== 'string') this.typeError(schema, node, at, path);
        const value = node.value;
        if (!schema.values.includes(value)) {
          this.fail(at, path, expectedText(schema), `expected ${expectedText(schema)}, got ${gotText(node)}`, suggestionHint(value, schema.values, 'value'));
        }
        return value;
      }
      case 'array':
        return this.checkArray(schema, node, at, path);
      case 'object': {
        if (schema.nullable && isEmptyValue(node)) return this.checkFields(schema, [], at, path, []);
        return this.checkFields(schema, this.entries(schema, node, at, path), at, path, []);
      }
      case 'map':
        return this.checkMap(schema, node, at, path);
      case 'keyed':
        return this.checkKeyed(schema, node, at, path);
      case 'tagged':
        return this.checkTagged(schema, node, at, path);
      case 'oneOf':
        return this.checkOneOf(schema, node, at, path);
    }
  }

  private checkString(schema: StringSchema, node: unknown, at: number, path: string): string {
    let value: string;
    if (isScalar(node) && typeof node.value === 'string') value = node.value;
    // The label is kept exactly as typed (`1.0` stays "1.0") because it is matched against file text.
    else if (isScalar(node) && typeof node.value === 'number' && schema.acceptNumber) value = node.source ?? String(node.value);
    else return this.typeError(schema, node, at, path);
    const expected = expectedText(schema);
    if (value.length < schema.minLength) this.fail(at, path, expected, `expected ${expected}, got ${gotText(node)}`, schema.description);
    if (schema.pattern !== undefined && !schema.pattern.test(value)) {
      this.fail(at, path, expected, `expected ${expected}, got ${gotText(node)}`, schema.description);
    }
    if (schema.format === 'date' && !isCalendarDate(value)) {
      this.fail(at, path, expected, `expected ${expected}, got ${gotText(node)}`, `${schema.description} — it must be a real calendar date`);
    }
    return value;
  }

  private checkNumber(schema: NumberSchema, node: unknown, at: number, path: string): number {
    if (!isScalar(node) || typeof node.value !== 'number') return this.typeError(schema, node, at, path);
    const v = node.value;
    const ok =
      Number.isFinite(v) &&
      (!schema.integer || Number.isInteger(v)) &&
      (schema.min === undefined || (schema.exclusiveMin ? v > schema.min : v >= schema.min)) &&
      (schema.max === undefined || (schema.exclusiveMax ? v < schema.max : v <= schema.max));
    if (!ok) this.typeError(schema, node, at, path);
    return v;
  }

  private checkArray(schema: ArraySchema, node: unknown, at: number, path: string): unknown[] {
    if (!isSeq(node)) return this.typeError(schema, node, at, path);
    const n = node.items.length;
    if (n < schema.minItems || (schema.maxItems !== undefined && n > schema.maxItems)) {
      const expected = expectedText(schema);
      this.fail(at, path, expected, `expected ${expected}, got ${n} item${n === 1 ? '' : 's'}`, schema.description);
    }
    return node.items.map((item, i) => this.check(schema.items, item, offsetOf(item, at), `${path}[${i}]`));
  }

  private checkMap(schema: MapSchema, node: unknown, at: number, path: string): Map<string, unknown> {
    const out = new Map<string, unknown>();
    for (const e of this.entries(schema, node, at, path)) {
      const keyPath = joinPath(path, e.key);
      if (schema.keyPattern !== undefined && !schema.keyPattern.test(e.key)) {
        const expected = schema.keyPatternText ?? `a ${schema.keyNoun}`;
        this.fail(e.keyAt, keyPath, expected, `expected ${expected}, got ${JSON.stringify(e.key)}`, schema.description);
      }
      if (schema.reservedKeys.includes(e.key)) {
        this.fail(
          e.keyAt,
          keyPath,
          `a ${schema.keyNoun} other than ${schema.reservedKeys.join(', ')}`,
          `"${e.key}" is reserved and cannot be a ${schema.keyNoun}`,
          `pick another name; reserved: ${schema.reservedKeys.join(', ')}`,
        );
      }
      out.set(e.key, this.check(schema.values, e.value, e.valueAt, keyPath));
    }
    if (out.size < schema.minEntries) {
      const expected = `at least ${schema.minEntries} ${schema.keyNoun}`;
      this.fail(at, path, expected, `expected ${expected}, got ${out.size}`, schema.description);
    }
    return out;
  }

  private checkKeyed(schema: KeyedSchema, node: unknown, at: number, path: string): Map<string, unknown> {
    const out = new Map<string, unknown>();
    const known = [...schema.entries.keys()];
    for (const e of this.entries(schema, node, at, path)) {
      const valueSchema = schema.entries.get(e.key);
      const keyPath = joinPath(path, e.key);
      if (valueSchema === undefined) {
        this.fail(e.keyAt, keyPath, `one of ${known.join(', ')}`, `unknown ${schema.keyNoun} "${e.key}"`, suggestionHint(e.key, known, schema.keyNoun));
      }
      out.set(e.key, this.check(valueSchema, e.value, e.valueAt, keyPath));
    }
    return out;
  }

  private checkTagged(schema: TaggedSchema, node: unknown, at: number, path: string): Record<string, unknown> {
    const entries = this.entries(schema, node, at, path);
    const tag = entries.find((e) => e.key === schema.tagKey);
    const kinds = [...schema.variants.keys()];
    const tagPath = joinPath(path, schema.tagKey);
    if (tag === undefined) {
      this.fail(at, tagPath, `one of ${kinds.join(', ')}`, `missing required key "${schema.tagKey}"`, `add "${schema.tagKey}: <${kinds.join(' | ')}>" — ${schema.tagDescription}`);
    }
    const tagNode = this.deref(tag.value, tag.valueAt, tagPath);
    const kind = isScalar(tagNode) && typeof tagNode.value === 'string' ? tagNode.value : undefined;
    const variant = kind === undefined ? undefined : schema.variants.get(kind);
    if (variant === undefined) {
      const problem = kind === undefined ? `expected one of ${kinds.join(', ')}, got ${gotText(tagNode)}` : `unknown ${schema.tagNoun} "${kind}"`;
      this.fail(tag.valueAt, tagPath, `one of ${kinds.join(', ')}`, problem, suggestionHint(kind ?? '', kinds, schema.tagNoun));
    }
    const rest = entries.filter((e) => e !== tag);
    return { [schema.tagKey]: kind, ...this.checkFields(variant, rest, at, path, [schema.tagKey]) };
  }

  private checkOneOf(schema: OneOfSchema, node: unknown, at: number, path: string): Record<string, unknown> {
    const entries = this.entries(schema, node, at, path);
    const present = new Set(entries.map((e) => e.key));
    const matching = schema.variants.filter((v) => shapeKeys(v).some((k) => present.has(k)));
    const forms = schema.variants.map((v) => shapeKeys(v).join(' + '));
    if (matching.length === 0) {
      const expected = expectedText(schema);
      this.fail(at, path, expected, `expected ${expected}`, `${schema.description}; forms: ${forms.join(' | ')}`);
    }
    if (matching.length > 1) {
      const used = matching.map((v) => shapeKeys(v).filter((k) => present.has(k)).join(' + '));
      this.fail(at, path, expectedText(schema), `mixes keys of different forms (${used.join(' and ')})`, `use exactly one form: ${forms.join(' | ')}`);
    }
    return this.checkFields(matching[0], entries, at, path, []);
  }

  /** Checks present entries in document order (so the first error is the first in the file), then fills absent fields. */
  private checkFields(schema: ObjectSchema, entries: readonly Entry[], at: number, path: string, extraKeys: readonly string[]): Record<string, unknown> {
    const out: Record<string, unknown> = {};
    const allowed = [...extraKeys, ...schema.fields.keys()];
    for (const e of entries) {
      const field = schema.fields.get(e.key);
      const keyPath = joinPath(path, e.key);
      if (field === undefined) {
        this.fail(e.keyAt, keyPath, `one of ${allowed.join(', ')}`, `unknown key "${e.key}"`, suggestionHint(e.key, allowed, 'key'));
      }
      out[e.key] = this.check(field.schema, e.value, e.valueAt, keyPath);
    }
    for (const [key, field] of schema.fields) {
      if (Object.hasOwn(out, key)) continue;
      if (field.required) {
        const where = path === '' ? 'at the top level' : `under ${path}`;
        this.fail(at, joinPath(path, key), expectedText(field.schema), `missing required key "${key}"`, `add "${key}:" ${where} — ${field.schema.description}`);
      }
      const value = absentValue(field);
      if (value !== undefined) out[key] = value;
    }
    return out;
  }

  /** The key/value pairs of a mapping node with keys as text; non-mappings are a type error. */
  private entries(schema: Schema, node: unknown, at: number, path: string): Entry[] {
    if (!isMap(node)) return this.typeError(schema, node, at, path);
    const seen = new Set<string>();
    return (node as YAMLMap<unknown, unknown>).items.map((pair: Pair<unknown, unknown>) => {
      const keyAt = offsetOf(pair.key, at);
      const keyNode = this.deref(pair.key, keyAt, path);
      let key: string;
      if (isScalar(keyNode) && typeof keyNode.value === 'string') key = keyNode.value;
      // A key typed as `2019` or `true` is still a name; keep the characters as written.
      else if (isScalar(keyNode) && (typeof keyNode.value === 'number' || typeof keyNode.value === 'boolean')) key = keyNode.source ?? String(keyNode.value);
      else return this.fail(keyAt, path, 'a plain-text key', `expected a plain-text key, got ${gotText(keyNode)}`, 'keys are names written as text');
      if (seen.has(key)) {
        this.fail(keyAt, joinPath(path, key), 'each key once', `duplicate key "${key}"`, 'each key may appear only once in a mapping');
      }
      seen.add(key);
      // Problems with a whole mapping (a missing key, the wrong form) read best at the key that owns it.
      const valueAt = isCollection(pair.value) ? keyAt : offsetOf(pair.value, keyAt);
      return { key, keyAt, value: pair.value, valueAt };
    });
  }

  private deref(node: unknown, at: number, path: string): unknown {
    if (!isAlias(node)) return node;
    const target = node.resolve(this.ctx.doc);
    if (target === undefined) {
      this.fail(at, path, 'an anchor defined before its alias', `alias *${node.source} refers to no anchor`, `define "&${node.source}" before using "*${node.source}"`);
    }
    return target;
  }

  private typeError(schema: Schema, node: unknown, at: number, path: string): never {
    const expected = expectedText(schema);
    return this.fail(at, path, expected, `expected ${expected}, got ${gotText(node)}`, schema.description);
  }

  private fail(at: number, path: string, expected: string, problem: string, hint: string): never {
    const { line, col } = this.ctx.lineCounter.linePos(at);
    throw new ConfigError({ file: this.ctx.file, line, column: col, path, expected, problem, hint });
  }
}

function isCalendarDate(text: string): boolean {
  const m = DATE_RE.exec(text);
  if (m === null) return false;
  const y = Number(m[1]);
  const mo = Number(m[2]);
  const d = Number(m[3]);
  const t = new Date(Date.UTC(y, mo - 1, d));
  return t.getUTCFullYear() === y && t.getUTCMonth() === mo - 1 && t.getUTCDate() === d;
}
