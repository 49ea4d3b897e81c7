/**
 * The tree core's WebAssembly histogram kernel (histogram.wat) and the one memory per thread it
 * works in.
 *
 * Why: building histograms is most of the time of boosting and forests, and in plain TypeScript
 * each row-column update costs two or three bounds-checked read-modify-writes. The kernel adds a
 * row's (gradient, hessian) pair to its slot as one 128-bit SIMD add and ran ~3× faster on the
 * same loop (1.0 vs 3–4 ns per update on 100k rows × 8 columns, this machine). Its sums are
 * bit-identical to the TypeScript loops (same additions per slot, in the same row order), so
 * whether it runs changes timing only, never a fitted tree.
 *
 * A WebAssembly function can only read its own memory, so a fit that wants the kernel allocates
 * its codes, gradients, hessians, row order and histograms from a `TreeArena` (views into that
 * memory). `accumulateInKernel` runs the kernel only when every array it would read is such a
 * view; anything else — a runtime without WebAssembly SIMD, an arena that ran out of room, a
 * second fit asking while one is open, 16-bit codes — falls back to the TypeScript loops.
 *
 * The memory only grows (WebAssembly memories cannot shrink), and only in `TreeArena.open`, when
 * no view into it is alive: growing detaches every existing view.
 */
import { KERNEL_WASM_BASE64 } from './binary.js';

/** Bytes [0, PARAM_BYTES) pass the per-call column addresses (see histogram.wat). */
const PARAM_BYTES = 32768;
/** Columns one kernel call can take: PARAM_BYTES / 2 / 4. */
export const MAX_KERNEL_COLUMNS = 4096;
const PAGE_BYTES = 65536;
/** A fit needing more than this does without the kernel rather than pin that much for the thread's life. */
export const MAX_ARENA_BYTES = 1 << 30;

type AccumulateFn = (nCols: number, order: number, start: number, end: number, grad: number, hess: number) => void;

interface Kernel {
  readonly memory: WebAssembly.Memory;
  readonly acc2: AccumulateFn;
  readonly acc3: AccumulateFn;
}

let loaded: Kernel | null | undefined;
/** Int32 view of the parameter block, re-made whenever the memory grows. */
let params = new Int32Array(0);
let arenaOpen = false;

function kernel(): Kernel | null {
  if (loaded !== undefined) return loaded;
  try {
    const instance = new WebAssembly.Instance(new WebAssembly.Module(Buffer.from(KERNEL_WASM_BASE64, 'base64')));
    const e = instance.exports as { memory: WebAssembly.Memory; acc2: AccumulateFn; acc3: AccumulateFn };
    loaded = { memory: e.memory, acc2: e.acc2, acc3: e.acc3 };
  } catch {
    // no WebAssembly SIMD here: every histogram is built by the TypeScript loops instead
    loaded = null;
  }
  return loaded;
}

/** True when this runtime compiled the kernel. */
export function kernelAvailable(): boolean {
  return kernel() !== null;
}

/**
 * Bump allocation of zero-filled views into the kernel's memory for the length of one fit.
 * Allocations that do not fit return null; callers then use plain typed arrays.
 */
export class TreeArena {
  private top = PARAM_BYTES;
  private closed = false;

  private constructor(private readonly memory: WebAssembly.Memory) {}

  /**
   * An arena with room for at least `bytes`, or null when the kernel is unavailable, another arena
   * is open on this thread, or `bytes` exceeds MAX_ARENA_BYTES. Close it when the fit ends.
   */
  static open(bytes: number): TreeArena | null {
    const k = kernel();
    if (k === null || arenaOpen || !(bytes >= 0 && bytes <= MAX_ARENA_BYTES)) return null;
    const need = PARAM_BYTES + bytes;
    const have = k.memory.buffer.byteLength;
    if (need > have) {
      try {
        k.memory.grow(Math.ceil((need - have) / PAGE_BYTES));
      } catch {
        return null;
      }
    }
    arenaOpen = true;
    return new TreeArena(k.memory);
  }

  /** The memory is not shared, so its buffer is a plain ArrayBuffer. */
  private get buffer(): ArrayBuffer {
    return this.memory.buffer as ArrayBuffer;
  }

  private take(bytes: number): number {
    const at = (this.top + 15) & ~15;
    if (this.closed || at + bytes > this.buffer.byteLength) return -1;
    this.top = at + bytes;
    return at;
  }

  u8(n: number): Uint8Array<ArrayBuffer> | null {
    const at = this.take(n);
    return at < 0 ? null : new Uint8Array(this.buffer, at, n).fill(0);
  }

  u32(n: number): Uint32Array<ArrayBuffer> | null {
    const at = this.take(4 * n);
    return at < 0 ? null : new Uint32Array(this.buffer, at, n).fill(0);
  }

  f64(n: number): Float64Array<ArrayBuffer> | null {
    const at = this.take(8 * n);
    return at < 0 ? null : new Float64Array(this.buffer, at, n).fill(0);
  }

  /** Ends the fit's use of the memory; views handed out must not be used afterwards. */
  close(): void {
    if (this.closed) return;
    this.closed = true;
    arenaOpen = false;
  }
}

/**
 * Runs the kernel over rows order[start..end) for columns cols[0..nCols) when every array is a
 * view into the kernel's memory (and the codes are 8-bit); returns false, having done nothing,
 * otherwise. The caller has zeroed the columns' slots. `stats` is 2 or 3 values per slot and
 * `offset` the first slot of each column, as in histogram.ts.
 */
export function accumulateInKernel(
  hist: Float64Array,
  stats: number,
  offset: Int32Array,
  codes: readonly (Uint8Array | Uint16Array)[],
  cols: Int32Array,
  nCols: number,
  order: Uint32Array,
  start: number,
  end: number,
  grad: Float64Array,
  hess: Float64Array,
): boolean {
  const k = loaded;
  if (!k || nCols > MAX_KERNEL_COLUMNS || (stats !== 2 && stats !== 3)) return false;
  const buf = k.memory.buffer;
  if (hist.buffer !== buf || order.buffer !== buf || grad.buffer !== buf || hess.buffer !== buf) return false;
  if (params.buffer !== buf) params = new Int32Array(buf, 0, PARAM_BYTES / 4);
  const slotBytes = stats * 8;
  for (let j = 0; j < nCols; j++) {
    const c = cols[j];
    const x = codes[c];
    if (x.buffer !== buf || x.BYTES_PER_ELEMENT !== 1) return false;
    params[j] = x.byteOffset;
    params[MAX_KERNEL_COLUMNS + j] = hist.byteOffset + offset[c] * slotBytes;
  }
  (stats === 3 ? k.acc3 : k.acc2)(nCols, order.byteOffset, start, end, grad.byteOffset, hess.byteOffset);
  return true;
}
