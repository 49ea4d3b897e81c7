/**
 * Cache keys. A key is the sha256 of everything that determines a result: the step's kind and
 * version, its canonical config slice, the key of the step it reads from, the rows it sees and the
 * run seed. The data key (file digest + column-role config) sits at the root of every chain.
 */
import { createHash } from 'node:crypto';
import type { Json } from '../stages/types.js';
import { canonicalJson } from './config/canonical-json.js';

export function hashOf(...parts: readonly (string | Uint8Array)[]): string {
  const h = createHash('sha256');
  for (const p of parts) {
    h.update(typeof p === 'string' ? `s${p.length}:` : `b${p.byteLength}:`);
    h.update(p);
  }
  return h.digest('hex');
}

export function rowsDigest(train: Uint32Array, apply: Uint32Array): string {
  return hashOf(new Uint8Array(train.buffer, train.byteOffset, train.byteLength), new Uint8Array(apply.buffer, apply.byteOffset, apply.byteLength));
}

interface StepIdentity {
  readonly kind: string;
  readonly version: number;
  readonly config: Json;
  readonly upstream: string;
  readonly context: { readonly train: Uint32Array; readonly apply: Uint32Array };
  readonly seed: number;
}

export function stageKey(id: StepIdentity & { readonly innerFolds: number }): string {
  return hashOf('stage', id.kind, String(id.version), canonicalJson(id.config), id.upstream, rowsDigest(id.context.train, id.context.apply), String(id.seed), String(id.innerFolds));
}

export function learnerKey(id: StepIdentity & { readonly name: string }): string {
  // The learner's name is part of its identity only through its seed stream.
  return hashOf('learner', id.kind, String(id.version), canonicalJson(id.config), id.upstream, rowsDigest(id.context.train, id.context.apply), String(id.seed), id.name);
}
