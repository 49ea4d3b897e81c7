/**
 * The WebAssembly kernels (stages/core/kernel/): histogram accumulation for the tree core and the
 * Gram (Hessian) block for the logistic fit. They are a speed path only: every sum must equal, bit
 * for bit, what their TypeScript twins produce, and a fit must give the same model whether or not
 * they run. The references here are the project's own TypeScript loops, themselves checked against
 * scikit-learn, rpart and XGBoost in the tree-core, tree-bins, boosted and logistic tests; the Gram
 * block is also checked against a plain double loop.
 *
 * `UPDATE_KERNEL=1 npx vitest run test/kernels.test.ts` recompiles kernels.wat into binary.ts
 * (WABT 1.0.39, the `wabt` npm package); without it, the test fails when they differ.
 */
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import wabtInit from 'wabt';
import { describe, expect, it } from 'vitest';
import { boosted, resolveBoostedConfig } from '../stages/learners/boosted.js';
import { forest } from '../stages/learners/forest.js';
import { tree } from '../stages/learners/tree.js';
import { logistic } from '../stages/learners/logistic.js';
import { gramBlock } from '../stages/core/kernel/gram.js';
import { accumulate, histogramLayout, STATS, STATS_NO_COUNT } from '../stages/core/tree/histogram.js';
import { accumulateInKernel, kernelAvailable, KernelArena } from '../stages/core/kernel/arena.js';
import { KERNEL_WASM_BASE64 } from '../stages/core/kernel/binary.js';
import { createRng } from '../pipeline/rng.js';
import { iota, testRng } from './helpers/seeded.js';

const KERNEL_DIR = join(import.meta.dirname, '..', 'stages', 'core', 'kernel');

/** Plain or arena-backed copies of the same data; `arena` null gives plain arrays. */
function histogramCase(seed: number, n: number, nBinsPerCol: number[], arena: KernelArena | null) {
  const rng = testRng(seed);
  const u8 = (k: number) => arena?.u8(k) ?? new Uint8Array(k);
  const f64 = (k: number) => arena?.f64(k) ?? new Float64Array(k);
  const codes = nBinsPerCol.map((nb) => {
    const x = u8(n);
    // about 5% missing (code nb), the rest spread over the value bins
    for (let r = 0; r < n; r++) x[r] = rng.next() < 0.05 ? nb : rng.int(nb);
    return x;
  });
  const grad = f64(n);
  const hess = f64(n);
  for (let r = 0; r < n; r++) {
    grad[r] = rng.next() - 0.6;
    hess[r] = rng.next() * 0.25;
  }
  // an ascending subset of rows, as a node's range of the grower's row order
  const kept = iota(n).filter(() => rng.next() < 0.55);
  const order = arena?.u32(kept.length) ?? new Uint32Array(kept.length);
  order.set(kept);
  return { codes, grad, hess, order };
}

describe('histogram kernel', () => {
  it('is the compiled form of kernels.wat', async () => {
    const wabt = await wabtInit();
    const src = readFileSync(join(KERNEL_DIR, 'kernels.wat'), 'utf8');
    const mod = wabt.parseWat('kernels.wat', src);
    mod.validate();
    const compiled = Buffer.from(mod.toBinary({}).buffer).toString('base64');
    mod.destroy();
    if (process.env.UPDATE_KERNEL) {
      writeFileSync(
        join(KERNEL_DIR, 'binary.ts'),
        `// Generated from kernels.wat by \`UPDATE_KERNEL=1 npx vitest run test/kernels.test.ts\`; do not edit.\nexport const KERNEL_WASM_BASE64 =\n  '${compiled}';\n`,
      );
      return;
    }
    expect(KERNEL_WASM_BASE64).toBe(compiled);
  });

  it('compiles on this runtime (Node 20 has WebAssembly SIMD), so fits do not silently lose it', () => {
    expect(kernelAvailable()).toBe(true);
  });

  for (const stats of [STATS_NO_COUNT, STATS]) {
    it(`gives bit-identical sums to the TypeScript loops (${stats} values per slot), for 1 to 19 columns`, () => {
      const n = 5000;
      for (const nCols of [1, 2, 3, 4, 5, 7, 8, 9, 12, 13, 19]) {
        const nBins = Array.from({ length: nCols + 2 }, (_, c) => [2, 17, 255, 64][c % 4]);
        const layout = histogramLayout(Int32Array.from(nBins), stats);
        // not every column, as a forest's split draws them (ascending, distinct)
        const cols = Int32Array.from({ length: nCols }, (_, k) => k + 1);
        const plain = histogramCase(nCols, n, nBins, null);
        const expected = new Float64Array(layout.size).fill(NaN);
        accumulate(expected, layout, plain.codes, cols, nCols, plain.order, 3, plain.order.length - 2, plain.grad, plain.hess);

        const arena = KernelArena.open(n * (nBins.length + 40) + layout.size * 8 + 4096);
        expect(arena).not.toBeNull();
        try {
          const a = histogramCase(nCols, n, nBins, arena);
          const hist = arena!.f64(layout.size)!;
          hist.fill(NaN);
          // accumulate zeroes the drawn columns' slots, then hands the work to the kernel
          accumulate(hist, layout, a.codes, cols, nCols, a.order, 3, a.order.length - 2, a.grad, a.hess);
          expect(Array.from(hist)).toEqual(Array.from(expected));
          // and the kernel really ran: called directly it accepts these arrays
          expect(accumulateInKernel(hist, stats, layout.offset, a.codes, cols, nCols, a.order, 3, a.order.length - 2, a.grad, a.hess)).toBe(true);
        } finally {
          arena?.close();
        }
      }
    });
  }

  it('declines, doing nothing, when any array lies outside its memory or codes are 16-bit', () => {
    const n = 300;
    const nBins = [4, 9, 6];
    const layout = histogramLayout(Int32Array.from(nBins), STATS);
    const cols = Int32Array.from([0, 1, 2]);
    const arena = KernelArena.open(64 * 1024);
    try {
      const a = histogramCase(3, n, nBins, arena);
      const hist = arena!.f64(layout.size)!;
      const plain = histogramCase(3, n, nBins, null);
      const outside = new Float64Array(layout.size);
      expect(accumulateInKernel(outside, STATS, layout.offset, a.codes, cols, 3, a.order, 0, a.order.length, a.grad, a.hess)).toBe(false);
      expect(outside.every((v) => v === 0)).toBe(true);
      expect(accumulateInKernel(hist, STATS, layout.offset, a.codes, cols, 3, plain.order, 0, plain.order.length, a.grad, a.hess)).toBe(false);
      expect(accumulateInKernel(hist, STATS, layout.offset, a.codes, cols, 3, a.order, 0, a.order.length, plain.grad, a.hess)).toBe(false);
      expect(accumulateInKernel(hist, STATS, layout.offset, [a.codes[0], plain.codes[1], a.codes[2]], cols, 3, a.order, 0, a.order.length, a.grad, a.hess)).toBe(false);
      expect(accumulateInKernel(hist, STATS, layout.offset, [a.codes[0], Uint16Array.from(a.codes[1]), a.codes[2]], cols, 3, a.order, 0, a.order.length, a.grad, a.hess)).toBe(false);
      expect(hist.every((v) => v === 0)).toBe(true);
    } finally {
      arena?.close();
    }
  });

  it('opens one arena per thread at a time, hands out zeroed views, and returns null when full', () => {
    const a = KernelArena.open(1024);
    expect(a).not.toBeNull();
    expect(KernelArena.open(16)).toBeNull();
    const x = a!.f64(16)!;
    x.fill(7);
    a!.close();
    a!.close();
    expect(a!.f64(1)).toBeNull();
    const b = KernelArena.open(1024)!;
    expect(b).not.toBeNull();
    // the same memory again: fresh views must not show the last fit's values
    expect(Array.from(b.f64(16)!)).toEqual(new Array(16).fill(0));
    expect(b.u8(1 << 30)).toBeNull();
    b.close();
    expect(KernelArena.open(2 ** 31)).toBeNull();
  });
});

/** A learner's model with and without the kernel: holding an arena open makes the fit fall back to plain arrays. */
function withAndWithout<T>(fit: () => T): { kernel: T; plain: T } {
  const kernel = fit();
  const hold = KernelArena.open(0);
  expect(hold).not.toBeNull();
  try {
    return { kernel, plain: fit() };
  } finally {
    hold!.close();
  }
}

describe('learners grow the same trees with and without the kernel', () => {
  const n = 6000;
  const p = 11;
  const rng = testRng(42);
  const features = Array.from({ length: p }, (_, j) => Float64Array.from({ length: n }, () => (j % 4 === 1 && rng.next() < 0.08 ? NaN : Math.round(rng.next() * (j < 3 ? 1000 : 20)))));
  const target = Uint8Array.from({ length: n }, (_, i) => (rng.next() < 0.1 + 0.5 * (features[0][i] > 600 ? 1 : 0) * (features[5][i] > 8 ? 1 : 0.3) ? 1 : 0));
  const names = features.map((_, j) => `x${j}`);
  const rows = iota(n).filter((i) => i % 5 !== 0);

  it('boosted (row and column subsampling, missing values)', () => {
    const config = resolveBoostedConfig({ rounds: 40, max_depth: 4, learning_rate: 0.2, subsample: 0.8, colsample: 0.7, early_stop: { rounds: 5, fraction: 0.1 } });
    const r = withAndWithout(() => boosted.fit({ features, names, rows, target, config, rng: createRng(9, 'k') }));
    expect(r.kernel.trees.length).toBeGreaterThan(5);
    expect(JSON.stringify(r.kernel)).toBe(JSON.stringify(r.plain));
  });

  it('forest (bootstrap, per-split column sampling, permutation importance)', () => {
    const config = forest.resolveConfig({ trees: 25, max_depth: 6, min_leaf: 10 });
    const r = withAndWithout(() => forest.fit({ features, names, rows, target, config, rng: createRng(9, 'k'), report: true }));
    expect(r.kernel.permutation).not.toBeNull();
    expect(JSON.stringify(r.kernel)).toBe(JSON.stringify(r.plain));
  });

  it('forest without column sampling (histogram subtraction)', () => {
    const config = forest.resolveConfig({ trees: 5, max_depth: 5, min_leaf: 10, max_features: p });
    const r = withAndWithout(() => forest.fit({ features, names, rows, target, config, rng: createRng(9, 'k'), report: false }));
    expect(JSON.stringify(r.kernel)).toBe(JSON.stringify(r.plain));
  });

  it('tree (8-bit codes through the kernel; more than 255 bins falls back per column)', () => {
    for (const max_bins of [255, 1024]) {
      const config = tree.resolveConfig({ max_depth: 6, min_leaf: 20, max_bins });
      const r = withAndWithout(() => tree.fit({ features, names, rows, target, config, rng: createRng(9, 'k') }));
      expect(r.kernel.tree.feature.filter((f: number) => f >= 0).length).toBeGreaterThan(5);
      expect(JSON.stringify(r.kernel)).toBe(JSON.stringify(r.plain));
    }
  });
});

describe('Gram kernel', () => {
  /** Z and SZ blocks (d columns of B values) and a d × d H, in the arena when given. */
  function gramCase(seed: number, d: number, B: number, arena: KernelArena | null) {
    const rng = testRng(seed);
    const f64 = (k: number) => arena?.f64(k) ?? new Float64Array(k);
    const Z = f64(d * B);
    const SZ = f64(d * B);
    const H = f64(d * d);
    for (let i = 0; i < d * B; i++) {
      Z[i] = rng.next() * 6 - 3;
      SZ[i] = Z[i] * rng.next() * 0.25;
    }
    for (let i = 0; i < d * d; i++) H[i] = rng.next();
    return { Z, SZ, H };
  }

  it('gives bit-identical Hessian blocks to its TypeScript twin, and the plain double loop to 1e-12', () => {
    const B = 64;
    for (const d of [1, 2, 3, 4, 5, 6, 7, 9, 14]) {
      for (const m of [1, 2, 3, 8, 63, 64]) {
        const plain = gramCase(d * 100 + m, d, B, null);
        const start = Float64Array.from(plain.H);
        gramBlock(plain.Z, plain.SZ, plain.H, d, B, m);
        const arena = KernelArena.open(8 * (3 * d * B + d * d) + 256);
        expect(arena).not.toBeNull();
        try {
          const k = gramCase(d * 100 + m, d, B, arena);
          gramBlock(k.Z, k.SZ, k.H, d, B, m);
          expect(Array.from(k.H)).toEqual(Array.from(plain.H));
        } finally {
          arena?.close();
        }
        // the definition: lower triangle gains Σ_t SZ[a][t]·Z[k][t]; the upper triangle is untouched
        const ref = gramCase(d * 100 + m, d, B, null);
        for (let a = 0; a < d; a++) {
          for (let k = 0; k < d; k++) {
            if (k > a) {
              expect(plain.H[a * d + k]).toBe(start[a * d + k]);
              continue;
            }
            let sum = 0;
            for (let t = 0; t < m; t++) sum += ref.SZ[a * B + t] * ref.Z[k * B + t];
            expect(Math.abs(plain.H[a * d + k] - (start[a * d + k] + sum))).toBeLessThan(1e-12 * (1 + Math.abs(sum)));
          }
        }
      }
    }
  });

  it('the logistic learner fits the same model with and without it', () => {
    const n = 3001;
    const rng = testRng(17);
    const features = Array.from({ length: 9 }, (_, j) => Float64Array.from({ length: n }, () => rng.next() * (j + 1)));
    const target = Uint8Array.from({ length: n }, (_, i) => (rng.next() < 1 / (1 + Math.exp(-(features[0][i] - 0.3 * features[3][i] + 0.5))) ? 1 : 0));
    const names = features.map((_, j) => `x${j}`);
    const config = logistic.resolveConfig({ l2: 1 });
    const r = withAndWithout(() => logistic.fit({ features, names, rows: iota(n), target, config, rng: createRng(1, 'lr') }));
    expect(JSON.stringify(r.kernel)).toBe(JSON.stringify(r.plain));
  });
});
