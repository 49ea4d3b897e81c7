/**
 * One row block's share of the logistic Hessian: H[a·d + k] += Σ_t SZ[a·B + t] · Z[k·B + t] for
 * every 0 <= k <= a < d over the block's rows t < m, where column j of the block lives at j·B
 * (Z holds the design columns, SZ the same times the Hessian weights).
 *
 * Every entry sums its even rows and its odd rows separately, each in row order, and adds
 * (even + odd) to H: the order in which the WebAssembly kernel's two f64x2 lanes add, so the
 * kernel and the loop below give bit-identical Hessians. An odd block is padded with one zero row.
 */
import { gramInKernel } from './arena.js';

export function gramBlock(Z: Float64Array, SZ: Float64Array, H: Float64Array, d: number, B: number, m: number): void {
  if (m % 2 === 1) {
    // a zero row adds +0 to the odd sums, as the kernel's second lane then does
    for (let j = 0; j < d; j++) {
      Z[j * B + m] = 0;
      SZ[j * B + m] = 0;
    }
    m++;
  }
  if (gramInKernel(Z, SZ, H, d, B, m)) return;
  // Rows a and a + 1 of the lower triangle together, two columns at a time: each loaded value
  // feeds two of the eight accumulators.
  let a = 0;
  for (; a + 1 < d; a += 2) {
    const sa = a * B;
    const sb = sa + B;
    let k = 0;
    for (; k + 1 <= a; k += 2) {
      const z0 = k * B;
      const z1 = z0 + B;
      let a0e = 0, a0o = 0, a1e = 0, a1o = 0, b0e = 0, b0o = 0, b1e = 0, b1o = 0;
      for (let t = 0; t < m; t += 2) {
        const u = SZ[sa + t];
        const v = SZ[sb + t];
        const w0 = Z[z0 + t];
        const w1 = Z[z1 + t];
        a0e += u * w0;
        a1e += u * w1;
        b0e += v * w0;
        b1e += v * w1;
        const u2 = SZ[sa + t + 1];
        const v2 = SZ[sb + t + 1];
        const x0 = Z[z0 + t + 1];
        const x1 = Z[z1 + t + 1];
        a0o += u2 * x0;
        a1o += u2 * x1;
        b0o += v2 * x0;
        b1o += v2 * x1;
      }
      H[a * d + k] += a0e + a0o;
      H[a * d + k + 1] += a1e + a1o;
      H[(a + 1) * d + k] += b0e + b0o;
      H[(a + 1) * d + k + 1] += b1e + b1o;
    }
    for (; k <= a + 1; k++) {
      const zk = k * B;
      let ae = 0, ao = 0, be = 0, bo = 0;
      for (let t = 0; t < m; t += 2) {
        ae += SZ[sa + t] * Z[zk + t];
        ao += SZ[sa + t + 1] * Z[zk + t + 1];
        be += SZ[sb + t] * Z[zk + t];
        bo += SZ[sb + t + 1] * Z[zk + t + 1];
      }
      if (k <= a) H[a * d + k] += ae + ao;
      H[(a + 1) * d + k] += be + bo;
    }
  }
  if (a < d) {
    const sa = a * B;
    for (let k = 0; k <= a; k++) {
      const zk = k * B;
      let e = 0, o = 0;
      for (let t = 0; t < m; t += 2) {
        e += SZ[sa + t] * Z[zk + t];
        o += SZ[sa + t + 1] * Z[zk + t + 1];
      }
      H[a * d + k] += e + o;
    }
  }
}
