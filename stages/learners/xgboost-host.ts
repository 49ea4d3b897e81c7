/**
 * The child-process side of the `xgboost` learner: `node xgboost-host.js <dir>` runs one request
 * against the ml-xgboost WebAssembly build and exits. It runs in its own process because that
 * build can abort (a NaN in the data, an allocation failure) and installs a process-wide
 * `uncaughtException` handler when loaded; neither may reach the pipeline's process.
 *
 * Request files in <dir>: `request.json` (HostRequest), `data.f32` (row-major float32, −1 =
 * missing), and `labels.f32` (fit) or `model.bin` (predict). Replies: `model.bin` (fit) or
 * `pred.f32` (predict), then `done.json`; the parent trusts only a reply with `done.json`.
 *
 * Data goes in through the module's own heap (`_malloc`) and its C entry points directly: the
 * package's wrapper passes whole matrices on the WebAssembly stack, which overflows on large data.
 */
import { readFileSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { join } from 'node:path';

export interface HostFitRequest {
  readonly op: 'fit';
  readonly rows: number;
  readonly cols: number;
  readonly rounds: number;
  /** Parameter name → value, in the order they are set; names were validated by the parent. */
  readonly params: readonly (readonly [string, string])[];
}

export interface HostPredictRequest {
  readonly op: 'predict';
  readonly rows: number;
  readonly cols: number;
}

export type HostRequest = HostFitRequest | HostPredictRequest;

/** The part of the emscripten module this host uses. */
interface XgbModule {
  readonly isReady: Promise<XgbModule>;
  readonly HEAPU8: Uint8Array;
  readonly HEAPF32: Float32Array;
  _malloc(bytes: number): number;
  _free(ptr: number): void;
  _create_model(data: number, labels: number, rows: number, cols: number): number;
  _train_full_model(model: number, rounds: number): void;
  _save_model(model: number): number;
  _get_file_content(ptr: number, size: number): void;
  _load_model(ptr: number, size: number): number;
  _predict_one(model: number, row: number, cols: number, out: number): number;
  _free_memory_model(model: number): void;
  cwrap(name: 'set_param', ret: null, args: ['number', 'string', 'string']): (model: number, key: string, value: string) => void;
}

/**
 * Test-only fault injection, read from the environment by this host alone so no config can reach
 * it: `nan` puts a NaN into the first data cell, which makes the engine abort.
 */
const FAULT_ENV = 'FOLDSTACK_XGBOOST_HOST_FAULT';

function readF32(path: string): Float32Array {
  const b = readFileSync(path);
  return new Float32Array(b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength));
}

function toHeap(x: XgbModule, bytes: Uint8Array): number {
  const ptr = x._malloc(bytes.byteLength);
  if (ptr === 0) throw new Error(`xgboost host: could not allocate ${bytes.byteLength} bytes`);
  x.HEAPU8.set(bytes, ptr);
  return ptr;
}

function fit(x: XgbModule, dir: string, req: HostFitRequest): void {
  const data = readF32(join(dir, 'data.f32'));
  const labels = readF32(join(dir, 'labels.f32'));
  if (data.length !== req.rows * req.cols || labels.length !== req.rows) throw new Error('xgboost host: data size does not match the request');
  if (process.env[FAULT_ENV] === 'nan' && data.length > 0) data[0] = NaN;
  const pData = toHeap(x, new Uint8Array(data.buffer, data.byteOffset, data.byteLength));
  const pLabels = toHeap(x, new Uint8Array(labels.buffer, labels.byteOffset, labels.byteLength));
  const model = x._create_model(pData, pLabels, req.rows, req.cols);
  // the engine copied the matrix into its own DMatrix
  x._free(pData);
  x._free(pLabels);
  try {
    const setParam = x.cwrap('set_param', null, ['number', 'string', 'string']);
    for (const [k, v] of req.params) setParam(model, k, v);
    x._train_full_model(model, req.rounds);
    const size = x._save_model(model);
    if (size <= 0) throw new Error('xgboost host: the engine could not serialise the model');
    const buf = x._malloc(size);
    x._get_file_content(buf, size);
    writeFileSync(join(dir, 'model.bin'), x.HEAPU8.slice(buf, buf + size));
    x._free(buf);
  } finally {
    x._free_memory_model(model);
  }
}

function predict(x: XgbModule, dir: string, req: HostPredictRequest): void {
  const data = readF32(join(dir, 'data.f32'));
  if (data.length !== req.rows * req.cols) throw new Error('xgboost host: data size does not match the request');
  const bytes = readFileSync(join(dir, 'model.bin'));
  const pModel = toHeap(x, bytes);
  const model = x._load_model(pModel, bytes.byteLength);
  x._free(pModel);
  if (model === 0) throw new Error('xgboost host: the engine could not load the model');
  const out = new Float32Array(req.rows);
  const pRow = x._malloc(Math.max(1, req.cols) * 4);
  const pOut = x._malloc(4);
  try {
    for (let i = 0; i < req.rows; i++) {
      x.HEAPF32.set(data.subarray(i * req.cols, (i + 1) * req.cols), pRow >> 2);
      x._predict_one(model, pRow, req.cols, pOut);
      out[i] = x.HEAPF32[pOut >> 2];
    }
  } finally {
    x._free(pRow);
    x._free(pOut);
    x._free_memory_model(model);
  }
  writeFileSync(join(dir, 'pred.f32'), new Uint8Array(out.buffer));
}

async function main(dir: string): Promise<void> {
  const req = JSON.parse(readFileSync(join(dir, 'request.json'), 'utf8')) as HostRequest;
  const load = createRequire(import.meta.url)('ml-xgboost/dist/wasm/xgboost.js') as XgbModule;
  const x = await load.isReady;
  if (req.op === 'fit') fit(x, dir, req);
  else predict(x, dir, req);
  writeFileSync(join(dir, 'done.json'), JSON.stringify({ ok: true }));
}

const dir = process.argv[2];
if (dir) {
  main(dir).catch((err: unknown) => {
    process.stderr.write(`xgboost host: ${err instanceof Error ? err.message : String(err)}\n`);
    process.exit(1);
  });
}
