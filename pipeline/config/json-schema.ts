/** Renders a DSL schema as JSON Schema (draft 2020-12) with descriptions and defaults. */
import { absentValue, shapeKeys, type Field, type ObjectSchema, type Schema } from './schema-dsl.js';

export type JsonValue = string | number | boolean | null | JsonValue[] | JsonObject;
export interface JsonObject {
  [key: string]: JsonValue;
}

const DATE_PATTERN = '^\\d{4}-\\d{2}-\\d{2}$';

export function jsonSchemaOf(schema: Schema): JsonObject {
  const description = schema.description;
  switch (schema.type) {
    case 'string': {
      const out: JsonObject = { type: schema.acceptNumber ? ['string', 'number'] : 'string', description };
      if (schema.minLength > 0) out.minLength = schema.minLength;
      if (schema.pattern !== undefined) out.pattern = schema.pattern.source;
      if (schema.format === 'date') {
        out.format = 'date';
        out.pattern = DATE_PATTERN;
      }
      return out;
    }
    case 'number': {
      const out: JsonObject = { type: schema.integer ? 'integer' : 'number', description };
      if (schema.min !== undefined) out[schema.exclusiveMin ? 'exclusiveMinimum' : 'minimum'] = schema.min;
      if (schema.max !== undefined) out[schema.exclusiveMax ? 'exclusiveMaximum' : 'maximum'] = schema.max;
      return out;
    }
    case 'boolean':
      return { type: 'boolean', description };
    case 'enum':
      return { type: 'string', enum: [...schema.values], description };
    case 'array': {
      const out: JsonObject = { type: 'array', description, items: jsonSchemaOf(schema.items) };
      if (schema.minItems > 0) out.minItems = schema.minItems;
      if (schema.maxItems !== undefined) out.maxItems = schema.maxItems;
      return out;
    }
    case 'object':
      return objectJson(schema, new Map(), []);
    case 'map': {
      const out: JsonObject = { type: 'object', description, additionalProperties: jsonSchemaOf(schema.values) };
      const names: JsonObject = {};
      if (schema.keyPattern !== undefined) names.pattern = schema.keyPattern.source;
      if (schema.reservedKeys.length > 0) names.not = { enum: [...schema.reservedKeys] };
      if (Object.keys(names).length > 0) out.propertyNames = names;
      if (schema.minEntries > 0) out.minProperties = schema.minEntries;
      return out;
    }
    case 'keyed': {
      const properties: JsonObject = {};
      for (const [key, value] of schema.entries) properties[key] = jsonSchemaOf(value);
      return { type: 'object', description, properties, additionalProperties: false };
    }
    case 'tagged':
      return {
        description,
        oneOf: [...schema.variants].map(([kind, variant]) =>
          objectJson(variant, new Map([[schema.tagKey, { const: kind, description: schema.tagDescription }]]), [schema.tagKey]),
        ),
      };
    case 'oneOf':
      return { description, oneOf: schema.variants.map((v) => objectJson(v, new Map(), [])) };
  }
}

function objectJson(schema: ObjectSchema, extraProperties: ReadonlyMap<string, JsonObject>, extraRequired: readonly string[]): JsonObject {
  const properties: JsonObject = {};
  for (const [key, prop] of extraProperties) properties[key] = prop;
  for (const [key, field] of schema.fields) properties[key] = fieldJson(field);
  const requiredKeys = [...extraRequired, ...shapeKeys(schema)];
  const out: JsonObject = {
    type: schema.nullable ? ['object', 'null'] : 'object',
    description: schema.description,
    properties,
    additionalProperties: false,
  };
  if (requiredKeys.length > 0) out.required = requiredKeys;
  return out;
}

function fieldJson(field: Field): JsonObject {
  const out = jsonSchemaOf(field.schema);
  const value = absentValue(field);
  if (value !== undefined) out.default = toJsonValue(value);
  return out;
}

/** Defaults in output form hold Maps; JSON has only objects. */
export function toJsonValue(value: unknown): JsonValue {
  if (value instanceof Map) {
    const out: JsonObject = {};
    for (const [k, v] of value) Object.defineProperty(out, String(k), { value: toJsonValue(v), enumerable: true, writable: true, configurable: true });
    return out;
  }
  if (Array.isArray(value)) return value.map(toJsonValue);
  if (value !== null && typeof value === 'object') {
    const out: JsonObject = {};
    for (const [k, v] of Object.entries(value)) out[k] = toJsonValue(v);
    return out;
  }
  if (typeof value === 'string' || typeof value === 'number' || typeof value === 'boolean' || value === null) return value;
  throw new TypeError(`not representable in JSON: ${typeof value}`);
}
