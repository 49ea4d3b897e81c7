/**
 * A small schema language for the config file. One schema value drives three things: node-by-node
 * validation of the YAML (so every error has a line and column), default filling, and the
 * exported JSON Schema / Markdown reference. Keeping them one definition means they cannot drift.
 *
 * Every schema carries a description; an object field's description is its schema's description.
 */

interface Described {
  readonly description: string;
}

export interface StringSchema extends Described {
  readonly type: 'string';
  readonly minLength: number;
  readonly pattern?: RegExp;
  /** The pattern in words, used in error messages (`expected ...`). */
  readonly patternText?: string;
  /** `date` = a real calendar date written YYYY-MM-DD. */
  readonly format?: 'date';
  /** Accept a YAML number and keep the digits exactly as written (labels like `1` or `1.0`). */
  readonly acceptNumber: boolean;
}

export interface NumberSchema extends Described {
  readonly type: 'number';
  readonly integer: boolean;
  readonly min?: number;
  readonly max?: number;
  readonly exclusiveMin: boolean;
  readonly exclusiveMax: boolean;
}

export interface BooleanSchema extends Described {
  readonly type: 'boolean';
}

export interface EnumSchema extends Described {
  readonly type: 'enum';
  readonly values: readonly string[];
}

export interface ArraySchema extends Described {
  readonly type: 'array';
  readonly items: Schema;
  readonly minItems: number;
  readonly maxItems?: number;
}

export interface Field {
  readonly schema: Schema;
  readonly required: boolean;
  /** The value used when the key is absent, in output form. Absent objects and maps fill themselves. */
  readonly default?: unknown;
}

/** A mapping with a fixed set of keys; output is a plain object with exactly those keys that have values. */
export interface ObjectSchema extends Described {
  readonly type: 'object';
  readonly fields: ReadonlyMap<string, Field>;
  /** An empty value (`key:` or `null`) means "all defaults". */
  readonly nullable: boolean;
}

/** A mapping from data-chosen names to values of one schema; output is a Map (names may be `__proto__`). */
export interface MapSchema extends Described {
  readonly type: 'map';
  readonly values: Schema;
  /** What a key is, for messages ("column", "learner name"). */
  readonly keyNoun: string;
  readonly keyPattern?: RegExp;
  readonly keyPatternText?: string;
  readonly reservedKeys: readonly string[];
  readonly minEntries: number;
}

/** A mapping whose keys come from a closed registry, each with its own value schema; output is a Map. */
export interface KeyedSchema extends Described {
  readonly type: 'keyed';
  readonly entries: ReadonlyMap<string, Schema>;
  readonly keyNoun: string;
}

/**
 * A mapping whose `tagKey` names a variant; the other keys are validated by that variant's object schema.
 * Output is the variant's object plus the tag key.
 */
export interface TaggedSchema extends Described {
  readonly type: 'tagged';
  readonly tagKey: string;
  readonly tagDescription: string;
  readonly variants: ReadonlyMap<string, ObjectSchema>;
  readonly tagNoun: string;
}

/**
 * One of several object shapes, chosen by which keys are present: a variant matches when the mapping
 * has any of its required keys. Exactly one variant must match.
 */
export interface OneOfSchema extends Described {
  readonly type: 'oneOf';
  readonly variants: readonly ObjectSchema[];
}

export type Schema =
  | StringSchema
  | NumberSchema
  | BooleanSchema
  | EnumSchema
  | ArraySchema
  | ObjectSchema
  | MapSchema
  | KeyedSchema
  | TaggedSchema
  | OneOfSchema;

export function string(
  description: string,
  opts: { minLength?: number; pattern?: RegExp; patternText?: string; format?: 'date'; acceptNumber?: boolean } = {},
): StringSchema {
  return { type: 'string', description, ...opts, minLength: opts.minLength ?? 0, acceptNumber: opts.acceptNumber ?? false };
}

export function number(
  description: string,
  opts: { integer?: boolean; min?: number; max?: number; exclusiveMin?: boolean; exclusiveMax?: boolean } = {},
): NumberSchema {
  return {
    type: 'number',
    description,
    ...opts,
    integer: opts.integer ?? false,
    exclusiveMin: opts.exclusiveMin ?? false,
    exclusiveMax: opts.exclusiveMax ?? false,
  };
}

export function integer(description: string, opts: { min?: number; max?: number } = {}): NumberSchema {
  return number(description, { ...opts, integer: true });
}

export function boolean(description: string): BooleanSchema {
  return { type: 'boolean', description };
}

export function oneOfValues(description: string, values: readonly string[]): EnumSchema {
  return { type: 'enum', description, values };
}

export function arrayOf(items: Schema, description: string, opts: { minItems?: number; maxItems?: number } = {}): ArraySchema {
  return { type: 'array', description, items, ...opts, minItems: opts.minItems ?? 0 };
}

export function required(schema: Schema): Field {
  return { schema, required: true };
}

export function optional(schema: Schema, defaultValue?: unknown): Field {
  return defaultValue === undefined ? { schema, required: false } : { schema, required: false, default: defaultValue };
}

export function object(description: string, fields: Record<string, Field>, opts: { nullable?: boolean } = {}): ObjectSchema {
  return { type: 'object', description, fields: new Map(Object.entries(fields)), nullable: opts.nullable ?? false };
}

export function mapOf(
  values: Schema,
  description: string,
  opts: { keyNoun: string; keyPattern?: RegExp; keyPatternText?: string; reservedKeys?: readonly string[]; minEntries?: number },
): MapSchema {
  return { type: 'map', description, values, ...opts, reservedKeys: opts.reservedKeys ?? [], minEntries: opts.minEntries ?? 0 };
}

export function keyed(entries: ReadonlyMap<string, Schema>, description: string, keyNoun: string): KeyedSchema {
  return { type: 'keyed', description, entries, keyNoun };
}

export function tagged(
  description: string,
  opts: { tagKey: string; tagDescription: string; tagNoun: string; variants: ReadonlyMap<string, ObjectSchema> },
): TaggedSchema {
  return { type: 'tagged', description, ...opts };
}

export function oneOfShapes(description: string, variants: readonly ObjectSchema[]): OneOfSchema {
  return { type: 'oneOf', description, variants };
}

/**
 * The value an absent key takes: the field's declared default, else what an all-absent object or
 * an empty map fills to; `undefined` when the key simply stays unset.
 */
export function absentValue(field: Field): unknown {
  if (field.default !== undefined) return structuredClone(field.default);
  if (field.required) return undefined;
  return implicitDefault(field.schema);
}

function implicitDefault(schema: Schema): unknown {
  switch (schema.type) {
    case 'object': {
      const out: Record<string, unknown> = {};
      for (const [key, field] of schema.fields) {
        if (field.required) return undefined;
        const value = absentValue(field);
        if (value !== undefined) out[key] = value;
      }
      return out;
    }
    case 'map':
      return schema.minEntries > 0 ? undefined : new Map<string, unknown>();
    case 'keyed':
      return new Map<string, unknown>();
    default:
      return undefined;
  }
}

/** The required keys of a variant — the keys that identify its shape. */
export function shapeKeys(variant: ObjectSchema): string[] {
  return [...variant.fields].filter(([, f]) => f.required).map(([k]) => k);
}
