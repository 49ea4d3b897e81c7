/** The content-addressed cache: round trip, digest-verified reads, and corrupt entries as misses. */
import { describe, expect, it } from 'vitest';
import { readdirSync, writeFileSync, rmSync, existsSync } from 'node:fs';
import { join } from 'node:path';
import { Cache, bytesOf, float64From, sha256Hex } from '../pipeline/cache.js';
import { tempDir } from './helpers/temp.js';

const key = sha256Hex('entry');

function filled(): Map<string, Uint8Array> {
  return new Map([
    ['c0.f64', bytesOf(Float64Array.from([1.5, NaN, -0, 1e-300]))],
    ['state.json', Buffer.from('{"a":1}')],
  ]);
}

describe('cache', () => {
  it('round-trips typed arrays bit for bit and leaves no temp folder', () => {
    const c = new Cache(tempDir('cache'));
    c.put(key, filled());
    const got = c.get(key)!;
    const v = float64From(got.get('c0.f64')!);
    expect(Array.from(v)).toEqual([1.5, NaN, -0, 1e-300]);
    expect(Object.is(v[2], -0)).toBe(true);
    expect(readdirSync(join(c.dir, 'tmp'))).toEqual([]);
    expect(c.keys()).toEqual([key]);
  });

  it('is a miss for an absent key', () => {
    expect(new Cache(tempDir('cache')).get(key)).toBeUndefined();
  });

  for (const [what, damage] of [
    ['an altered file', (dir: string) => writeFileSync(join(dir, 'state.json'), '{"a":2}')],
    ['a truncated file', (dir: string) => writeFileSync(join(dir, 'c0.f64'), Buffer.alloc(8))],
    ['a missing file', (dir: string) => rmSync(join(dir, 'c0.f64'))],
    ['a missing meta.json (a write cut short before its rename would leave no folder at all)', (dir: string) => rmSync(join(dir, 'meta.json'))],
    ['garbage meta.json', (dir: string) => writeFileSync(join(dir, 'meta.json'), '{"format":1,')],
  ] as const) {
    it(`treats ${what} as a miss and removes the entry`, () => {
      const c = new Cache(tempDir('cache'));
      c.put(key, filled());
      const dir = join(c.dir, key.slice(0, 2), key);
      damage(dir);
      expect(c.get(key)).toBeUndefined();
      expect(existsSync(dir)).toBe(false);
      c.put(key, filled());
      expect(c.get(key)?.get('state.json')).toBeDefined();
    });
  }

  it('rejects keys and file names that could escape the cache folder', () => {
    const c = new Cache(tempDir('cache'));
    expect(() => c.get('../../etc')).toThrow(/invalid cache key/);
    expect(() => c.put(key, new Map([['../x', new Uint8Array(1)]]))).toThrow(/invalid cache file name/);
  });
});
