/**
 * Seeded randomness. Every draw in foldstack comes from a generator built here from a seed that
 * is derived by hashing (run seed, stage, context, ...), never from scheduling order, so any
 * worker count gives the same numbers.
 */
import { createHash } from 'node:crypto';
import type { Rng } from '../stages/types.js';

/** 128-bit seed material from the run seed and a path of names. */
export function deriveSeed(seed: number, ...path: readonly (string | number)[]): Uint32Array {
  const h = createHash('sha256');
  h.update(`foldstack-seed\u0000${seed}`);
  for (const p of path) h.update(`\u0000${String(p)}`);
  const d = h.digest();
  return new Uint32Array([d.readUInt32LE(0), d.readUInt32LE(4), d.readUInt32LE(8), d.readUInt32LE(12)]);
}

/**
 * xoshiro128** (Blackman & Vigna, 2018): small state, good equidistribution, fast in 32-bit
 * integer arithmetic, which is what JavaScript does well.
 */
export class Xoshiro128 implements Rng {
  private s0: number;
  private s1: number;
  private s2: number;
  private s3: number;

  constructor(state: Uint32Array) {
    this.s0 = state[0] | 0;
    this.s1 = state[1] | 0;
    this.s2 = state[2] | 0;
    this.s3 = state[3] | 0;
    // The all-zero state is a fixed point of the generator.
    if ((this.s0 | this.s1 | this.s2 | this.s3) === 0) this.s0 = 0x9e3779b9 | 0;
  }

  private nextUint32(): number {
    const result = Math.imul(rotl(Math.imul(this.s1, 5), 7), 9) >>> 0;
    const t = this.s1 << 9;
    this.s2 ^= this.s0;
    this.s3 ^= this.s1;
    this.s1 ^= this.s2;
    this.s0 ^= this.s3;
    this.s2 ^= t;
    this.s3 = rotl(this.s3, 11);
    return result;
  }

  next(): number {
    // 53 random bits, the full precision of a double in [0, 1).
    const hi = this.nextUint32() >>> 5;
    const lo = this.nextUint32() >>> 6;
    return (hi * 67108864 + lo) / 9007199254740992;
  }

  int(n: number): number {
    return Math.floor(this.next() * n);
  }
}

function rotl(x: number, k: number): number {
  return (x << k) | (x >>> (32 - k));
}

export function createRng(seed: number, ...path: readonly (string | number)[]): Rng {
  return new Xoshiro128(deriveSeed(seed, ...path));
}

/** Fisher–Yates shuffle in place. */
export function shuffleInPlace(a: Uint32Array, rng: Rng): void {
  for (let i = a.length - 1; i > 0; i--) {
    const j = rng.int(i + 1);
    const t = a[i];
    a[i] = a[j];
    a[j] = t;
  }
}
