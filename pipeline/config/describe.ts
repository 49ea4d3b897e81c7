/** Schemas in words, shared by error messages (`expected ...`) and the Markdown reference. */
import type { NumberSchema, Schema } from './schema-dsl.js';
import { shapeKeys } from './schema-dsl.js';

export function expectedText(schema: Schema): string {
  switch (schema.type) {
    case 'string':
      if (schema.format === 'date') return 'a date written YYYY-MM-DD';
      if (schema.patternText !== undefined) return schema.patternText;
      if (schema.acceptNumber) return 'a string or number';
      return schema.minLength > 0 ? 'a non-empty string' : 'a string';
    case 'number':
      return numberText(schema);
    case 'boolean':
      return 'true or false';
    case 'enum':
      return `one of ${schema.values.join(', ')}`;
    case 'array': {
      const size =
        schema.maxItems !== undefined && schema.maxItems === schema.minItems
          ? ` of exactly ${schema.minItems}`
          : schema.minItems > 0
            ? ` of at least ${schema.minItems}`
            : '';
      return `a list${size} (each ${expectedText(schema.items)})`;
    }
    case 'object':
      return schema.nullable ? 'a mapping (or empty for defaults)' : 'a mapping';
    case 'map':
      return `a mapping from ${schema.keyNoun} to ${expectedText(schema.values)}`;
    case 'keyed':
      return `a mapping from ${schema.keyNoun} to its settings`;
    case 'tagged':
      return `a mapping with ${schema.tagKey}: ${[...schema.variants.keys()].join(' | ')}`;
    case 'oneOf':
      return `a mapping with either ${schema.variants.map((v) => shapeKeys(v).join(' and ')).join(', or ')}`;
  }
}

function numberText(s: NumberSchema): string {
  const noun = s.integer ? 'an integer' : 'a number';
  const lo = s.min;
  const hi = s.max;
  if (lo !== undefined && hi !== undefined) {
    if (s.integer && !s.exclusiveMin && !s.exclusiveMax) return `${noun} from ${lo} to ${hi}`;
    return `${noun} in ${s.exclusiveMin ? '(' : '['}${lo}, ${hi}${s.exclusiveMax ? ')' : ']'}`;
  }
  if (lo !== undefined) return `${noun} ${s.exclusiveMin ? '>' : '≥'} ${lo}`;
  if (hi !== undefined) return `${noun} ${s.exclusiveMax ? '<' : '≤'} ${hi}`;
  return noun;
}
