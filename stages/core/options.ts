/**
 * Reading a stage's or learner's option mapping: unknown keys and out-of-range values fail with
 * the kind, the key and the value, so a bad config is reported where it was written.
 */

export class OptionError extends Error {
  constructor(
    message: string,
    readonly kind: string,
    readonly key: string,
    readonly value: unknown,
  ) {
    super(`${kind}: ${message} (got ${key} = ${JSON.stringify(value)})`);
    this.name = 'OptionError';
  }
}

/** The raw mapping merged over `defaults`; null/undefined = all defaults. */
export function readOptions(kind: string, raw: unknown, defaults: Readonly<Record<string, unknown>>): Record<string, unknown> {
  const r = raw === undefined || raw === null ? {} : raw;
  if (typeof r !== 'object' || Array.isArray(r)) throw new OptionError('config must be a mapping', kind, '', raw);
  const o = r as Record<string, unknown>;
  for (const k of Object.keys(o)) {
    if (!(k in defaults)) throw new OptionError(`unknown option (known: ${Object.keys(defaults).join(', ')})`, kind, k, o[k]);
  }
  return { ...defaults, ...o };
}

export function intOption(kind: string, o: Record<string, unknown>, key: string, min: number, max: number): number {
  const v = o[key];
  if (typeof v !== 'number' || !Number.isInteger(v) || v < min || v > max) throw new OptionError(`${key} must be an integer in [${min}, ${max}]`, kind, key, v);
  return v;
}

export function numberOption(kind: string, o: Record<string, unknown>, key: string, ok: (v: number) => boolean, expected: string): number {
  const v = o[key];
  if (typeof v !== 'number' || !Number.isFinite(v) || !ok(v)) throw new OptionError(`${key} must be ${expected}`, kind, key, v);
  return v;
}

export function booleanOption(kind: string, o: Record<string, unknown>, key: string): boolean {
  const v = o[key];
  if (typeof v !== 'boolean') throw new OptionError(`${key} must be true or false`, kind, key, v);
  return v;
}

/** A leaf-size option: a count when >= 1 (must then be an integer), else a fraction of the fit rows. */
export function minLeafOption(kind: string, o: Record<string, unknown>, key: string): number {
  return numberOption(kind, o, key, (v) => v > 0 && (v < 1 || Number.isInteger(v)), 'a fraction in (0, 1) or an integer count >= 1');
}

/** The leaf size as a row count for a fit on `nRows` rows. */
export function minLeafCount(minLeaf: number, nRows: number): number {
  return minLeaf < 1 ? Math.max(1, Math.ceil(minLeaf * nRows)) : minLeaf;
}
