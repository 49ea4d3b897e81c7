/**
 * The runner: config and data in, a finished run folder out. It plans the contexts, sends each
 * context to the pool, blends the learners with the stack, evaluates, and writes the run folder.
 */
import { performance } from 'node:perf_hooks';
import { pino, type DestinationStream } from 'pino';
import type { ResolvedConfig } from './config/types.js';
import { gather, type CategoricalColumn, type Column, type Frame } from './frame.js';
import { loadFrame } from './io/load.js';
import { makePlan, type Plan } from './plan.js';
import { ContextPool } from './pool.js';
import type { ContextResult, ContextTask, StepRecord } from './context-run.js';
import { Cache, bytesOf, float64From } from './cache.js';
import { hashOf } from './keys.js';
import { canonicalJson as canonical } from './config/canonical-json.js';
import { fitStack, applyStack, type StackModel } from '../stages/stack.js';
import type { MetricSet } from './metrics/evaluate.js';
import { foldRows } from './folds.js';
import { learnerRegistry, stageRegistry } from '../stages/index.js';
import type { Json, Learner, Stage, StageReport } from '../stages/types.js';
import { RunFolder } from './run-folder.js';
import { REPORT_FILE, writeReport } from './report/build.js';
import { bundleOfRun } from './bundle/build.js';
import { RunInterrupted } from './errors.js';
import { applyExclusions, type ExclusionReportRow } from '../stages/exclude.js';
import { PlanError } from './errors.js';
import { disparityTable, type DisparityTable } from './disparity.js';

export const CODE_VERSION = '0.1.0';

export interface RunOptions {
  readonly workers: number;
  readonly runsDir: string;
  readonly cacheDir: string;
  /** Where JSON log lines go besides the run folder's log.jsonl (e.g. stdout when not a TTY). */
  readonly logStream?: DestinationStream;
  /** Human progress lines (stderr on a TTY); silent when absent. */
  readonly progress?: (line: string) => void;
  readonly now?: Date;
  /** Aborting stops the run at the next step boundary (running workers are terminated) and removes its partial folder. */
  readonly signal?: AbortSignal;
  /** The business date the run stands for (`--as-of`, YYYY-MM-DD), recorded in the manifest. */
  readonly asOf?: string;
}

export interface RunOutcome {
  readonly runDir: string;
  readonly metrics: Metrics;
  readonly manifest: Manifest;
}

export interface Metrics {
  readonly oof: Record<string, MetricSet>;
  readonly holdout: Record<string, MetricSet>;
  readonly stack: {
    readonly weights: Record<string, number>;
    readonly intercept: number;
    readonly nonnegative: boolean;
    /** `stack.passthrough` columns: weight per standardized unit, and the fit rows' mean and sd (absent in older runs). */
    readonly passthrough?: Record<string, { readonly weight: number; readonly mean: number; readonly sd: number }>;
  };
  readonly stages: Record<string, Json>;
  /** Selection rates by protected group at the budget cut, on the holdout rows (absent in older runs). */
  readonly disparity?: DisparityTable;
  /** The same on the development rows, with the stack's out-of-fold scores and OOF cut. */
  readonly disparity_oof?: DisparityTable;
}

export interface Manifest {
  readonly format: 1;
  readonly name: string;
  readonly code_version: string;
  readonly created: string;
  readonly config_file: string;
  readonly config: Json;
  readonly config_digest: string;
  /** `rows`/`events` count the rows left after exclusions. */
  readonly data: { readonly file: string; readonly digest: string; readonly key: string; readonly rows: number; readonly events: number; readonly rows_in_file: number };
  readonly exclusions: ExclusionReportRow[];
  readonly seed: number;
  readonly split: { readonly folds: number; readonly dev_rows: number; readonly holdout_rows: number; readonly digest: string };
  readonly workers: number;
  readonly steps: StepRecord[];
  readonly seconds: number;
  readonly as_of?: string;
  readonly complete: true;
}

/** Holds stack and evaluation results in the cache, so a repeated run is all hits. */
interface BlendResult {
  model: StackModel;
  /** Stack predictions for dev rows, cross-validated over the outer folds (the stack's honest OOF). */
  oof: Float64Array;
  holdout: Float64Array;
}

export async function runPipeline(config: ResolvedConfig, opts: RunOptions): Promise<RunOutcome> {
  const t0 = performance.now();
  const say = opts.progress ?? (() => undefined);
  const folder = RunFolder.begin(opts.runsDir, config.name, opts.now ?? new Date());
  const fileLog = pino.destination({ dest: folder.path('log.jsonl'), sync: true });
  const streams: { stream: DestinationStream }[] = [{ stream: fileLog }];
  if (opts.logStream) streams.push({ stream: opts.logStream });
  const runLog = pino({ base: { run: folder.id } }, pino.multistream(streams));
  let pool: ContextPool | undefined;
  const checkpoint = () => {
    if (opts.signal?.aborted) throw new RunInterrupted(String(opts.signal.reason ?? 'abort'));
  };
  try {
    checkpoint();
    say(`loading ${config.data.file}`);
    const loaded = await loadFrame(config.data.file, {
      target: config.data.target,
      positive: config.data.positive,
      id: config.data.id,
      columns: config.data.columns,
      missing: config.data.missing,
    });
    const exclusions = applyExclusions(loaded.frame, config.exclude);
    const frame = shareFrame(keepRows(loaded.frame, exclusions.keep));
    for (const r of exclusions.report) {
      runLog.info({ exclusion: r }, 'rows excluded');
      say(`excluded ${r.rows} rows (${r.reason}: ${r.column} ${r.condition})`);
    }
    const dataKey = dataKeyOf(config, loaded.digest);
    const events = countEvents(frame.target);
    runLog.info({ rows: frame.nRows, events, digest: loaded.digest }, 'data loaded');
    say(`${frame.nRows} rows, ${events} events (${((100 * events) / frame.nRows).toFixed(2)}%)`);

    const plan = makePlan(config, frame);
    const inputColumns = [...frame.columns.keys()].filter((n) => {
      const role = frame.roles.get(n);
      return role === 'feature' || role === 'date';
    });
    const cache = new Cache(opts.cacheDir);
    const contextPool = new ContextPool(opts.workers);
    pool = contextPool;
    let results: ContextResult[];
    {
      let done = 0;
      checkpoint();
      results = await untilAborted(opts.signal, Promise.all(
        plan.contexts.map(async (context) => {
          const task: ContextTask = {
            context,
            columns: frame.columns,
            inputColumns,
            target: frame.target,
            stages: plan.stages,
            learners: plan.learners,
            innerFolds: config.split.innerFolds,
            balance: config.balance,
            seed: config.seed,
            dataKey,
            cacheDir: opts.cacheDir,
            keepStates: context.name === 'final',
            stackPassthrough: config.stack.passthrough,
          };
          const r = await contextPool.run(task);
          done++;
          const hits = r.steps.filter((s) => s.hit).length;
          say(`context ${r.context} done (${done}/${plan.contexts.length}; ${hits}/${r.steps.length} steps from cache)`);
          for (const s of r.steps) runLog.info({ step: s.step, key: s.key, hit: s.hit, seconds: s.seconds }, 'step');
          return r;
        }),
      ));
    }
    // The fit contexts leave every worker's heap at its high-water mark, and V8 keeps it: ending
    // those threads here, and evaluating on fresh ones, keeps the run's peak memory at the contexts'.
    await contextPool.close();
    checkpoint();
    const byName = new Map(results.map((r) => [r.context, r]));
    const learnerNames = plan.learners.map((l) => l.name);
    const { oof: oofPreds, hold: holdPreds } = assembleByContext(plan, byName, learnerNames, frame.nRows, (r) => r.predictions, 'predictions');
    const passthrough = assembleByContext(plan, byName, config.stack.passthrough, frame.nRows, (r) => r.passthrough, 'passthrough values');

    const steps: StepRecord[] = plan.contexts.flatMap((c) => byName.get(c.name)?.steps ?? []);
    const stackKey = hashOf('stack', canonical(config.stack), ...plan.contexts.flatMap((c) => learnerNames.map((n) => byName.get(c.name)?.learnerKeys.get(n) ?? '')));
    const tStack = performance.now();
    const cachedBlend = cache.get(stackKey);
    const blend = cachedBlend ? decodeBlend(cachedBlend) : blendAndStore(cache, stackKey, plan, learnerNames, oofPreds, holdPreds, passthrough, frame.target, config);
    steps.push({ step: 'stack', key: stackKey, hit: cachedBlend !== undefined, seconds: (performance.now() - tStack) / 1000 });
    say(`stack weights: ${learnerNames.map((n, i) => `${n} ${blend.model.weights[i].toFixed(3)}`).join(', ')}`);

    const final = byName.get('final');
    if (!final) throw new Error('internal: the final context did not run');
    const stageReports = describeStages(final.states);
    if (final.dropped.length > 0) {
      runLog.warn({ columns: final.dropped }, 'columns not encoded by any stage are not used by the learners');
      say(`warning: ${final.dropped.length} column(s) reach no learner because no stage encodes them: ${final.dropped.join(', ')}`);
    }

    const tEval = performance.now();
    const evalKey = hashOf('evaluate', stackKey, canonical(config.evaluate), String(config.seed), 'v2');
    const cachedEval = cache.get(evalKey);
    let metrics: Metrics;
    if (cachedEval) {
      metrics = JSON.parse(Buffer.from(cachedEval.get('metrics.json') ?? new Uint8Array()).toString('utf8')) as Metrics;
    } else {
      const evalPool = new ContextPool(opts.workers);
      pool = evalPool;
      metrics = await untilAborted(opts.signal, evaluateAll(evalPool, config, plan, learnerNames, oofPreds, holdPreds, blend, frame.target, stageReports));
      await evalPool.close();
      cache.put(evalKey, new Map([['metrics.json', Buffer.from(JSON.stringify(metrics))]]));
    }
    steps.push({ step: 'evaluate', key: evalKey, hit: cachedEval !== undefined, seconds: (performance.now() - tEval) / 1000 });
    // Outside the evaluation cache entry: it is one pass over the rows, and entries written before it existed stay valid.
    metrics = { ...metrics, ...disparityOf(frame, config.evaluate.budget, plan, metrics, blend) };

    await folder.writeOof(frame, plan, learnerNames, oofPreds, blend.oof);
    await folder.writeHoldout(frame, plan, learnerNames, holdPreds, blend.holdout);
    for (const r of stageReports) for (const [name, table] of Object.entries(r.report.tables ?? {})) await folder.writeTable(name, table);
    // Learner tables (e.g. a forest's importances) are named after the learner: two forests must not collide.
    for (const r of describeLearners(plan.learners, final.models)) for (const [name, table] of Object.entries(r.report.tables ?? {})) await folder.writeTable(`${r.name}_${name}`, table);
    checkpoint();
    folder.writeJson('metrics.json', metrics);
    const cut = metrics.holdout.stack.cut;
    if (cut === null) {
      runLog.warn('the holdout stack has no decision cut, so no bundle.json was written');
      say('warning: the holdout stack has no decision cut, so no bundle.json was written');
    } else {
      const configDigest = hashOf('config', canonical(configForManifest(config)));
      folder.writeJson('bundle.json', bundleOfRun({ config, codeVersion: CODE_VERSION, configDigest, frame, plan, final, stack: blend.model, cut }));
    }
    const manifest: Manifest = {
      format: 1,
      name: config.name,
      code_version: CODE_VERSION,
      created: folder.created,
      config_file: config.file,
      config: configForManifest(config),
      config_digest: hashOf('config', canonical(configForManifest(config))),
      data: { file: config.data.file, digest: loaded.digest, key: dataKey, rows: frame.nRows, events, rows_in_file: loaded.frame.nRows },
      exclusions: exclusions.report,
      seed: config.seed,
      split: { folds: plan.split.folds, dev_rows: plan.split.dev.length, holdout_rows: plan.split.holdout.length, digest: hashOf('split', bytesOf(plan.split.isHoldout), bytesOf(plan.split.devFold)) },
      workers: opts.workers,
      steps,
      seconds: (performance.now() - t0) / 1000,
      ...(opts.asOf === undefined ? {} : { as_of: opts.asOf }),
      complete: true,
    };
    folder.writeJson('manifest.json', manifest);
    // Built from the folder's own files, so `foldstack report` can rebuild it byte for byte later.
    await writeReport(folder.path('.'), folder.path(REPORT_FILE));
    runLog.info({ seconds: manifest.seconds }, 'run complete');
    fileLog.flushSync();
    const runDir = folder.finish();
    return { runDir, metrics, manifest };
  } catch (err) {
    runLog.error({ err }, 'run failed');
    folder.abandon();
    throw err;
  } finally {
    await pool?.close();
    fileLog.end();
  }
}

/** The root of every cache key: the file's digest and everything in the config that shapes the loaded rows. */
export function dataKeyOf(config: ResolvedConfig, digest: string): string {
  return hashOf('data', digest, canonical({ target: config.data.target, positive: config.data.positive ?? null, id: config.data.id ?? null, columns: config.data.columns, missing: config.data.missing, exclude: config.exclude }));
}

/** The frame restricted to the rows `keep` marks (a copy, made once, only when rules excluded rows). */
function keepRows(frame: Frame, keep: Uint8Array): Frame {
  let n = 0;
  for (let i = 0; i < keep.length; i++) n += keep[i];
  if (n === frame.nRows) return frame;
  if (n === 0) throw new PlanError('the exclusion rules remove every row', 'check the exclude rules in the config');
  const rows = new Uint32Array(n);
  for (let i = 0, j = 0; i < keep.length; i++) if (keep[i]) rows[j++] = i;
  const columns = new Map<string, Column>();
  for (const [name, c] of frame.columns) {
    if (c.type === 'numeric') columns.set(name, { ...c, values: gather(c.values, rows) });
    else if (c.type === 'date') columns.set(name, { ...c, days: gather(c.days, rows) });
    else columns.set(name, { ...c, codes: gather(c.codes, rows) });
  }
  return { ...frame, nRows: n, columns, target: gather(frame.target, rows), ids: Array.from(rows, (r) => frame.ids[r]) };
}

/** Rejects with RunInterrupted as soon as `signal` aborts, so the pool can be torn down mid-context. */
function untilAborted<T>(signal: AbortSignal | undefined, work: Promise<T>): Promise<T> {
  if (!signal) return work;
  let onAbort = (): void => undefined;
  const aborted = new Promise<never>((_, reject) => {
    onAbort = () => reject(new RunInterrupted(String(signal.reason ?? 'abort')));
    if (signal.aborted) onAbort();
    else signal.addEventListener('abort', onAbort, { once: true });
  });
  return Promise.race([work, aborted]).finally(() => signal.removeEventListener('abort', onAbort));
}

/** Copy column buffers into SharedArrayBuffers once, so every worker reads them without a copy. */
function shareFrame(frame: Frame): Frame {
  const columns = new Map<string, Column>();
  for (const [name, c] of frame.columns) {
    if (c.type === 'numeric') columns.set(name, { ...c, values: shared(Float64Array, c.values) });
    else if (c.type === 'date') columns.set(name, { ...c, days: shared(Float64Array, c.days) });
    else columns.set(name, { ...c, codes: shared(Int32Array, c.codes) });
  }
  return { ...frame, columns, target: shared(Uint8Array, frame.target) };
}

function shared<T extends Float64Array | Int32Array | Uint8Array>(Ctor: { new (b: SharedArrayBuffer): T; BYTES_PER_ELEMENT: number }, src: T): T {
  // The loader already builds its columns on SharedArrayBuffers; copying those again would only double memory.
  if (src.buffer instanceof SharedArrayBuffer) return src;
  const out = new Ctor(new SharedArrayBuffer(src.length * Ctor.BYTES_PER_ELEMENT));
  out.set(src);
  return out;
}

function countEvents(target: Uint8Array): number {
  let e = 0;
  for (let i = 0; i < target.length; i++) e += target[i];
  return e;
}

/**
 * Full-length arrays of per-context apply-row values (learner predictions, stack passthrough
 * columns): dev rows from the outer fold contexts, holdout rows from the final one; NaN elsewhere.
 */
function assembleByContext(plan: Plan, byName: ReadonlyMap<string, ContextResult>, names: readonly string[], nRows: number, pick: (r: ContextResult) => ReadonlyMap<string, Float64Array>, what: string) {
  const oof = names.map(() => new Float64Array(nRows).fill(NaN));
  const hold = names.map(() => new Float64Array(nRows).fill(NaN));
  for (const ctx of plan.contexts) {
    const r = byName.get(ctx.name);
    if (!r) throw new Error(`internal: context ${ctx.name} did not run`);
    const into = ctx.name === 'final' ? hold : oof;
    names.forEach((name, j) => {
      const p = pick(r).get(name);
      if (!p) throw new Error(`internal: ${name} has no ${what} in ${ctx.name}`);
      for (let i = 0; i < ctx.apply.length; i++) into[j][ctx.apply[i]] = p[i];
    });
  }
  return { oof, hold };
}

const STACK_L2 = 1;

function blendAndStore(cache: Cache, key: string, plan: Plan, names: readonly string[], oof: Float64Array[], hold: Float64Array[], passthrough: { oof: Float64Array[]; hold: Float64Array[] }, target: Uint8Array, config: ResolvedConfig): BlendResult {
  const opts = { nonnegative: config.stack.nonnegative, l2: STACK_L2 };
  const extra = { names: config.stack.passthrough, values: passthrough.oof };
  const model = fitStack(names, oof, plan.split.dev, target, opts, extra);
  const holdout = applyStack(model, hold, plan.split.holdout, passthrough.hold);
  // The stack's own out-of-fold estimate: refit it over the OOF matrix with the same outer folds.
  const nRows = target.length;
  const full = new Float64Array(nRows).fill(NaN);
  for (let k = 0; k < plan.split.folds; k++) {
    const fitRows = foldRows(plan.split.dev, plan.split.devFold, k, false);
    const applyRows = foldRows(plan.split.dev, plan.split.devFold, k, true);
    const m = fitStack(names, oof, fitRows, target, opts, extra);
    const p = applyStack(m, oof, applyRows, passthrough.oof);
    for (let i = 0; i < applyRows.length; i++) full[applyRows[i]] = p[i];
  }
  const stackOof = new Float64Array(plan.split.dev.length);
  for (let i = 0; i < plan.split.dev.length; i++) stackOof[i] = full[plan.split.dev[i]];
  cache.put(key, new Map([['model.json', Buffer.from(JSON.stringify(model))], ['oof.f64', bytesOf(stackOof)], ['holdout.f64', bytesOf(holdout)]]));
  return { model, oof: stackOof, holdout };
}

function decodeBlend(files: ReadonlyMap<string, Uint8Array>): BlendResult {
  const get = (n: string): Uint8Array => {
    const v = files.get(n);
    if (!v) throw new Error(`internal: cached stack lacks ${n}`);
    return v;
  };
  return { model: JSON.parse(Buffer.from(get('model.json')).toString('utf8')) as StackModel, oof: float64From(get('oof.f64')), holdout: float64From(get('holdout.f64')) };
}

/**
 * Every learner's and the stack's metrics on the out-of-fold and holdout rows, each set scored in
 * a pool thread (their bootstraps dominate; each is seeded by its own part and name).
 */
async function evaluateAll(pool: ContextPool, config: ResolvedConfig, plan: Plan, names: readonly string[], oof: Float64Array[], hold: Float64Array[], blend: BlendResult, target: Uint8Array, reports: { kind: string; report: StageReport }[]): Promise<Metrics> {
  const yDev = gather(target, plan.split.dev);
  const yHold = gather(target, plan.split.holdout);
  const score = (part: 'oof' | 'holdout', name: string, y: Uint8Array, p: Float64Array): Promise<MetricSet> =>
    pool.evaluate({ y, p, budget: config.evaluate.budget, budgets: config.evaluate.budgets, seed: config.seed, part, name, replicates: 1000 });
  const sets = [
    ...names.map((n, j) => ['oof', n, yDev, gather(oof[j], plan.split.dev)] as const),
    ...names.map((n, j) => ['holdout', n, yHold, gather(hold[j], plan.split.holdout)] as const),
    ['oof', 'stack', yDev, blend.oof] as const,
    ['holdout', 'stack', yHold, blend.holdout] as const,
  ];
  const scored = await Promise.all(sets.map(([part, name, y, p]) => score(part, name, y, p)));
  const oofM: Record<string, MetricSet> = {};
  const holdM: Record<string, MetricSet> = {};
  sets.forEach(([part, name], k) => ((part === 'oof' ? oofM : holdM)[name] = scored[k]));
  const weights: Record<string, number> = {};
  names.forEach((n, j) => (weights[n] = blend.model.weights[j]));
  const stages: Record<string, Json> = {};
  for (const r of reports) if (r.report.metrics !== undefined) stages[r.kind] = r.report.metrics;
  const passthrough: Record<string, { weight: number; mean: number; sd: number }> = {};
  const pt = blend.model.passthrough;
  pt?.names.forEach((n, j) => (passthrough[n] = { weight: pt.weights[j], mean: pt.means[j], sd: pt.sds[j] }));
  return { oof: oofM, holdout: holdM, stack: { weights, intercept: blend.model.intercept, nonnegative: blend.model.nonnegative, passthrough }, stages };
}

function disparityOf(frame: Frame, budget: number, plan: Plan, metrics: Metrics, blend: BlendResult): Pick<Metrics, 'disparity' | 'disparity_oof'> {
  const columns: CategoricalColumn[] = [];
  for (const [name, role] of frame.roles) {
    const c = frame.columns.get(name);
    if (role !== 'protected' || !c) continue;
    if (c.type !== 'categorical') throw new Error(`internal: protected column ${name} was not loaded as categorical`);
    columns.push(c);
  }
  const holdCut = metrics.holdout.stack?.cut;
  const oofCut = metrics.oof.stack?.cut;
  return {
    ...(typeof holdCut === 'number' ? { disparity: disparityTable({ budget, cut: holdCut, columns, rows: plan.split.holdout, scores: blend.holdout, target: frame.target }) } : {}),
    ...(typeof oofCut === 'number' ? { disparity_oof: disparityTable({ budget, cut: oofCut, columns, rows: plan.split.dev, scores: blend.oof, target: frame.target }) } : {}),
  };
}

function describeStages(states: readonly { kind: string; state: Json }[]): { kind: string; report: StageReport }[] {
  const out: { kind: string; report: StageReport }[] = [];
  for (const s of states) {
    const stage = stageRegistry.get(s.kind) as Stage<unknown, Json> | undefined;
    if (stage?.describe) out.push({ kind: s.kind, report: stage.describe(s.state) });
  }
  return out;
}

function describeLearners(learners: readonly { name: string; kind: string }[], models: readonly { name: string; model: Json }[]): { name: string; report: StageReport }[] {
  const out: { name: string; report: StageReport }[] = [];
  for (const l of learners) {
    const learner = learnerRegistry.get(l.kind) as Learner<unknown, Json> | undefined;
    const model = models.find((m) => m.name === l.name)?.model;
    if (learner?.describe && model !== undefined) out.push({ name: l.name, report: learner.describe(model) });
  }
  return out;
}

/** The resolved config as plain JSON (Maps become objects with sorted keys). */
export function configForManifest(config: ResolvedConfig): Json {
  return JSON.parse(canonical({ ...config, file: undefined })) as Json;
}
