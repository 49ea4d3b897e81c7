/** Renders a DSL schema as a Markdown reference table: key path, type, default, description. */
import { expectedText } from './describe.js';
import { toJsonValue } from './json-schema.js';
import { absentValue, type Field, type ObjectSchema, type Schema } from './schema-dsl.js';

interface Row {
  readonly key: string;
  readonly type: string;
  readonly default: string;
  readonly description: string;
}

export function referenceMarkdownOf(schema: Schema, heading: string): string {
  const rows: Row[] = [];
  collect(schema, '', '', rows);
  const lines = [
    heading,
    '',
    schema.description,
    '',
    '| Key | Type | Default | Description |',
    '| --- | --- | --- | --- |',
    ...rows.map((r) => `| \`${cell(r.key)}\` | ${cell(r.type)} | ${cell(r.default)} | ${cell(r.description)} |`),
  ];
  return `${lines.join('\n')}\n`;
}

function cell(text: string): string {
  return text.replace(/\|/g, '\\|').replace(/\n/g, ' ');
}

function join(path: string, key: string): string {
  return path === '' ? key : `${path}.${key}`;
}

function typeOf(schema: Schema): string {
  switch (schema.type) {
    case 'object':
    case 'map':
    case 'keyed':
    case 'tagged':
    case 'oneOf':
      return 'mapping';
    default:
      return expectedText(schema);
  }
}

function defaultText(field: Field): string {
  if (field.required) return 'required';
  const value = absentValue(field);
  return value === undefined ? '' : `\`${JSON.stringify(toJsonValue(value))}\``;
}

function collectFields(schema: ObjectSchema, path: string, note: string, rows: Row[]): void {
  for (const [key, field] of schema.fields) {
    const keyPath = join(path, key);
    rows.push({ key: keyPath, type: typeOf(field.schema), default: defaultText(field), description: note + field.schema.description });
    collect(field.schema, keyPath, note, rows);
  }
}

/** Adds rows for the children of `schema` (the schema's own row is its parent's job). */
function collect(schema: Schema, path: string, note: string, rows: Row[]): void {
  switch (schema.type) {
    case 'object':
      collectFields(schema, path, note, rows);
      return;
    case 'map': {
      const keyPath = join(path, `<${schema.keyNoun}>`);
      rows.push({ key: keyPath, type: typeOf(schema.values), default: '', description: schema.values.description });
      collect(schema.values, keyPath, note, rows);
      return;
    }
    case 'keyed':
      for (const [key, value] of schema.entries) {
        const keyPath = join(path, key);
        rows.push({ key: keyPath, type: typeOf(value), default: '', description: value.description });
        collect(value, keyPath, note, rows);
      }
      return;
    case 'tagged':
      rows.push({
        key: join(path, schema.tagKey),
        type: `one of ${[...schema.variants.keys()].join(', ')}`,
        default: 'required',
        description: schema.tagDescription,
      });
      for (const [kind, variant] of schema.variants) collectFields(variant, path, `(${schema.tagKey}: ${kind}) `, rows);
      return;
    case 'oneOf':
      for (const variant of schema.variants) collectFields(variant, path, `(${variant.description}) `, rows);
      return;
    case 'array':
      collect(schema.items, `${path}[]`, note, rows);
      return;
    default:
      return;
  }
}
