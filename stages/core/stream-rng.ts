/**
 * Independent random streams indexed by a number, derived from one seed. A forest draws its seed
 * once from the Rng it is given and gives tree t the stream `streamRng(seed, t)`, so tree t's
 * bootstrap and column draws do not depend on how many draws other trees made or in which order
 * the trees are grown.
 */
import type { Rng } from '../types.js';

/** Two 32-bit words from `rng`: the seed of a family of streams. */
export function drawStreamSeed(rng: Rng): readonly [number, number] {
  return [Math.floor(rng.next() * 4294967296) >>> 0, Math.floor(rng.next() * 4294967296) >>> 0];
}

/**
 * sfc32 (Doty-Humphrey's "small fast counting" generator, PractRand suite; cited from memory),
 * its 128-bit state filled by splitmix32 from (seed, index) so that neighbouring indices give
 * unrelated streams.
 */
export function streamRng(seed: readonly [number, number], index: number): Rng {
  let sm = (seed[0] ^ Math.imul(index + 1, 0x9e3779b9)) >>> 0;
  const split = (): number => {
    sm = (sm + 0x9e3779b9) >>> 0;
    let z = sm ^ seed[1];
    z = Math.imul(z ^ (z >>> 16), 0x85ebca6b);
    z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35);
    return (z ^ (z >>> 16)) >>> 0;
  };
  let a = split();
  let b = split();
  let c = split();
  let d = split() | 1;
  const nextU32 = (): number => {
    const t = (((a + b) | 0) + d) | 0;
    d = (d + 1) | 0;
    a = b ^ (b >>> 9);
    b = (c + (c << 3)) | 0;
    c = (c << 21) | (c >>> 11);
    c = (c + t) | 0;
    return t >>> 0;
  };
  // discard the first outputs, which still echo the seeding (common practice for sfc32, no source)
  for (let i = 0; i < 12; i++) nextU32();
  const next = (): number => nextU32() / 4294967296;
  return { next, int: (n: number) => Math.floor(next() * n) };
}
