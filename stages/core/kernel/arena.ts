/**
 * The WebAssembly kernels (kernels.wat) and the one memory per thread they work in.
 *
 * Why: building histograms is most of the time of boosting and forests, and in plain TypeScript
 * each row-column update costs two or three bounds-checked read-modify-writes. The histogram
 * kernel adds a row's (gradient, hessian) pair to its slot as one 128-bit SIMD add and ran ~3×
 * faster on the same loop (1.0 vs 3–4 ns per update on 100k rows × 8 columns, this machine). The
 * Gram kernel does the same for the logistic Hessian's multiply-adds, two rows per f64x2. Each
 * kernel has a TypeScript twin (tree/histogram.ts, gram.ts) that adds in exactly the same order,
 * so whether a kernel runs changes timing only, never a fitted model.
 *
 * A WebAssembly function can only read its own memory, so a fit that wants a kernel allocates
 * the arrays it reads from a `KernelArena` (views into that memory). A kernel runs only when
 * every array it would read is such a view; anything else — a runtime without WebAssembly SIMD,
 * an arena that ran out of room, a second fit asking while one is open, 16-bit codes — falls
 * back to the twin.
 *
 * The memory only grows (WebAssembly memories cannot shrink), and only in `KernelArena.open`, when
 * no view into it is alive: growing detaches every existing view.
 */
import { KERNEL_WASM_BASE64 } from './binary.js';

/** Bytes [0, PARAM_BYTES) pass the per-call column addresses (see kernels.wat). */
const PARAM_BYTES = 32768;
/** Columns one kernel call can take: PARAM_BYTES / 2 / 4. */
export const MAX_KERNEL_COLUMNS = 4096;
const PAGE_BYTES = 65536;
/** A fit needing more than this does without the kernel rather than pin that much for the thread's life. */
export const MAX_ARENA_BYTES = 1 << 30;

type AccumulateFn = (nCols: number, order: number, start: number, end: number, grad: number, hess: number) => void;
type GramFn = (z: number, sz: number, h: number, d: number, b: number, m: number) => void;

interface Kernel {
  readonly memory: WebAssembly.Memory;
  readonly acc2: AccumulateFn;
  readonly acc3: AccumulateFn;
  readonly gram: GramFn;
}

let loaded: Kernel | null | undefined;
/** Int32 view of the parameter block, re-made whenever the memory grows. */
let params = new Int32Array(0);
let arenaOpen = false;

function kernel(): Kernel | null {
  if (loaded !== undefined) return loaded;
  try {
    const instance = new WebAssembly.Instance(new WebAssembly.Module(Buffer.from(KERNEL_WASM_BASE64, 'base64')));
    const e = instance.exports as { memory: WebAssembly.Memory; acc2: AccumulateFn; acc3: AccumulateFn; gram: GramFn };
    loaded = { memory: e.memory, acc2: e.acc2, acc3: e.acc3, gram: e.gram };
  } catch {
    // no WebAssembly SIMD here: the TypeScript twins do all the work
    loaded = null;
  }
  return loaded;
}

/** True when this runtime compiled the kernels. */
export function kernelAvailable(): boolean {
  return kernel() !== null;
}

/**
 * Bump allocation of zero-filled views into the kernel's memory for the length of one fit.
 * Allocations that do not fit return null; callers then use plain typed arrays.
 */
export class KernelArena {
  private top = PARAM_BYTES;
  private closed = false;

  private constructor(private readonly memory: WebAssembly.Memory) {}

  /**
   * An arena with room for at least `bytes`, or null when the kernel is unavailable, another arena
   * is open on this thread, or `bytes` exceeds MAX_ARENA_BYTES. Close it when the fit ends.
   */
  static open(bytes: number): KernelArena | null {
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
    return new KernelArena(k.memory);
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
 * fn with an arena of at least `bytes` (null when none can be had), closed when fn returns or
 * throws: every fit that uses the kernels opens and closes its arena this way.
 */
export function withKernelArena<T>(bytes: number, fn: (arena: KernelArena | null) => T): T {
  const arena = KernelArena.open(bytes);
  try {
    return fn(arena);
  } finally {
    arena?.close();
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

/**
 * Runs the Gram kernel (see kernels.wat and gram.ts) when Z, SZ and H are views into the kernel's
 * memory; returns false, having done nothing, otherwise.
 */
export function gramInKernel(Z: Float64Array, SZ: Float64Array, H: Float64Array, d: number, B: number, m: number): boolean {
  const k = loaded;
  if (!k) return false;
  const buf = k.memory.buffer;
  if (Z.buffer !== buf || SZ.buffer !== buf || H.buffer !== buf) return false;
  k.gram(Z.byteOffset, SZ.byteOffset, H.byteOffset, d, B, m);
  return true;
}
