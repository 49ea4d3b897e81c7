/**
 * Canonical JSON: object keys sorted, Maps written as objects with sorted keys, no whitespace.
 * The runner hashes config slices with it, so equal configs must give byte-equal text whatever
 * the key order in the file.
 */
export class CanonicalJsonError extends Error {
  constructor(
    readonly path: string,
    readonly valueType: string,
  ) {
    super(`canonicalJson: cannot encode ${valueType} at ${path === '' ? 'the root' : path}`);
    this.name = 'CanonicalJsonError';
  }
}

export function canonicalJson(value: unknown): string {
  return encode(value, '');
}

function encode(value: unknown, path: string): string {
  if (value === null) return 'null';
  switch (typeof value) {
    case 'string':
    case 'boolean':
      return JSON.stringify(value);
    case 'number':
      // A hash must not silently turn NaN or Infinity into null.
      if (!Number.isFinite(value)) throw new CanonicalJsonError(path, String(value));
      return JSON.stringify(value);
    case 'object':
      break;
    default:
      throw new CanonicalJsonError(path, typeof value);
  }
  if (Array.isArray(value)) return `[${value.map((v, i) => encode(v, `${path}[${i}]`)).join(',')}]`;
  let entries: [string, unknown][];
  if (value instanceof Map) {
    entries = [];
    for (const [k, v] of value) {
      if (typeof k !== 'string') throw new CanonicalJsonError(path, `Map key of type ${typeof k}`);
      entries.push([k, v]);
    }
  } else {
    const proto: unknown = Object.getPrototypeOf(value);
    if (proto !== Object.prototype && proto !== null) throw new CanonicalJsonError(path, 'non-plain object');
    entries = Object.entries(value);
  }
  entries = entries.filter(([, v]) => v !== undefined);
  // Code-unit order, not locale order: the same on every machine.
  entries.sort(([a], [b]) => (a < b ? -1 : a > b ? 1 : 0));
  return `{${entries.map(([k, v]) => `${JSON.stringify(k)}:${encode(v, path === '' ? k : `${path}.${k}`)}`).join(',')}}`;
}
