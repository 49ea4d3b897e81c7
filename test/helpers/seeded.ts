/** Shared test scaffolding: a small seeded generator for test data and learner rngs, and row ranges. */
import type { Rng } from '../../stages/types.js';

/** mulberry32: seeded, fast, and independent of the project's own generator. */
export function testRng(seed: number): Rng {
  let a = seed >>> 0;
  const next = (): number => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  return { next, int: (n: number) => Math.floor(next() * n) };
}

/** Rows 0..n-1. */
export const iota = (n: number): Uint32Array => Uint32Array.from({ length: n }, (_, i) => i);

/** An rng for code that must draw nothing: any draw fails the test with `message`. */
export function noDraws(message: string): Rng {
  const fail = (): never => {
    throw new Error(message);
  };
  return { next: fail, int: fail };
}
