/**
 * Content-addressed cache of stage results. An entry is a folder of files (raw little-endian typed
 * arrays for columns, JSON for fitted states) plus `meta.json` listing each file's sha256.
 *
 * Writes are atomic: files go into a private temp folder, which is renamed into place. Reads verify
 * every digest; anything missing, truncated or altered is a miss (and is removed), never a crash and
 * never a wrong result.
 *
 * Entries are not fsynced. After a power loss a renamed entry may hold files the disk never got;
 * the digest check turns that into a miss, so the cost is one recomputation. Syncing every entry
 * (about 150 MB of stage columns per fit context on 200k rows) cost ~0.3–1 s per context on the
 * pipeline's critical path. Run folders and bundles, which are results rather than caches, are
 * still written with fsync (run-folder.ts, io/csv-writer.ts).
 */
import { createHash, randomBytes } from 'node:crypto';
import { closeSync, mkdirSync, openSync, readFileSync, renameSync, rmSync, writeSync, readdirSync, statSync } from 'node:fs';
import { join } from 'node:path';

export type CacheFiles = ReadonlyMap<string, Uint8Array>;

interface Meta {
  readonly format: 1;
  readonly key: string;
  readonly files: Record<string, { sha256: string; bytes: number }>;
}

const KEY_RE = /^[0-9a-f]{64}$/;
const NAME_RE = /^[A-Za-z0-9_.-]{1,200}$/;

export function sha256Hex(data: Uint8Array | string): string {
  return createHash('sha256').update(data).digest('hex');
}

export class Cache {
  constructor(readonly dir: string) {}

  private entryDir(key: string): string {
    if (!KEY_RE.test(key)) throw new Error(`invalid cache key ${key}`);
    return join(this.dir, key.slice(0, 2), key);
  }

  /** The entry's files, or undefined on a miss (absent, partial or corrupt). */
  get(key: string): CacheFiles | undefined {
    const dir = this.entryDir(key);
    let meta: Meta;
    try {
      meta = JSON.parse(readFileSync(join(dir, 'meta.json'), 'utf8')) as Meta;
    } catch {
      this.discardIfPresent(dir);
      return undefined;
    }
    if (meta.format !== 1 || meta.key !== key || typeof meta.files !== 'object' || meta.files === null) {
      this.discardIfPresent(dir);
      return undefined;
    }
    const out = new Map<string, Uint8Array>();
    for (const [name, info] of Object.entries(meta.files)) {
      let data: Buffer;
      try {
        data = readFileSync(join(dir, name));
      } catch {
        this.discardIfPresent(dir);
        return undefined;
      }
      if (data.length !== info.bytes || sha256Hex(data) !== info.sha256) {
        this.discardIfPresent(dir);
        return undefined;
      }
      out.set(name, new Uint8Array(data.buffer, data.byteOffset, data.byteLength));
    }
    return out;
  }

  /** Store an entry atomically. A concurrent writer of the same key wins harmlessly: contents are identical by construction. */
  put(key: string, files: CacheFiles): void {
    const finalDir = this.entryDir(key);
    const tmpRoot = join(this.dir, 'tmp');
    mkdirSync(tmpRoot, { recursive: true });
    const tmp = join(tmpRoot, `${key}-${process.pid}-${randomBytes(6).toString('hex')}`);
    mkdirSync(tmp);
    try {
      const meta: Meta = { format: 1, key, files: {} };
      for (const [name, data] of files) {
        if (!NAME_RE.test(name) || name === 'meta.json') throw new Error(`invalid cache file name ${name}`);
        writeWhole(join(tmp, name), data);
        meta.files[name] = { sha256: sha256Hex(data), bytes: data.byteLength };
      }
      writeWhole(join(tmp, 'meta.json'), Buffer.from(JSON.stringify(meta)));
      mkdirSync(join(this.dir, key.slice(0, 2)), { recursive: true });
      this.discardIfPresent(finalDir);
      try {
        renameSync(tmp, finalDir);
      } catch (err) {
        if (!isCode(err, 'ENOTEMPTY') && !isCode(err, 'EEXIST')) throw err;
      }
    } finally {
      rmSync(tmp, { recursive: true, force: true });
    }
  }

  private discardIfPresent(dir: string): void {
    rmSync(dir, { recursive: true, force: true });
  }

  /** Every stored key (for pruning). */
  keys(): string[] {
    const keys: string[] = [];
    let shards: string[];
    try {
      shards = readdirSync(this.dir);
    } catch {
      return keys;
    }
    for (const s of shards) {
      if (!/^[0-9a-f]{2}$/.test(s)) continue;
      for (const k of readdirSync(join(this.dir, s))) if (KEY_RE.test(k) && statSync(join(this.dir, s, k)).isDirectory()) keys.push(k);
    }
    return keys.sort();
  }
}

function writeWhole(path: string, data: Uint8Array): void {
  const fd = openSync(path, 'w');
  try {
    let off = 0;
    while (off < data.byteLength) off += writeSync(fd, data, off, data.byteLength - off);
  } finally {
    closeSync(fd);
  }
}

function isCode(err: unknown, code: string): boolean {
  return typeof err === 'object' && err !== null && (err as { code?: unknown }).code === code;
}

/** Little-endian bytes of a typed array (the platform is little-endian; checked once at load). */
export function bytesOf(a: Float64Array | Uint8Array | Int32Array | Uint32Array): Uint8Array {
  return new Uint8Array(a.buffer, a.byteOffset, a.byteLength);
}

export function float64From(bytes: Uint8Array): Float64Array {
  const copy = new Uint8Array(bytes.byteLength);
  copy.set(bytes);
  return new Float64Array(copy.buffer);
}

export function int32From(bytes: Uint8Array): Int32Array {
  const copy = new Uint8Array(bytes.byteLength);
  copy.set(bytes);
  return new Int32Array(copy.buffer);
}

if (new Uint8Array(new Uint16Array([1]).buffer)[0] !== 1) {
  throw new Error('foldstack stores arrays little-endian and needs a little-endian machine');
}
