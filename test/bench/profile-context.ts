/**
 * Runs one fit context of a config in this process (no worker pool), for profiling with
 * `node --cpu-prof`: `npx tsx test/bench/profile-context.ts <config> <cache-dir> <context> [learner…]`.
 * Stages come from the cache when it holds them; learners listed are renamed (with the process
 * id) so they always miss. Configs with `exclude` rules are refused: the rows would not match.
 */
import { loadConfig } from '../../pipeline/config/index.js';
import { loadFrame } from '../../pipeline/io/load.js';
import { dataKeyOf } from '../../pipeline/runner.js';
import { makePlan } from '../../pipeline/plan.js';
import { runContext, type ContextTask } from '../../pipeline/context-run.js';

const [cfgFile, cacheDir, ctxName, ...only] = process.argv.slice(2);
const config = await loadConfig(cfgFile);
if (config.exclude.length > 0) throw new Error('profile-context does not apply exclude rules; profile a config without them');
const loaded = await loadFrame(config.data.file, { target: config.data.target, positive: config.data.positive, id: config.data.id, columns: config.data.columns, missing: config.data.missing });
const frame = loaded.frame;
const plan = makePlan(config, frame);
const context = plan.contexts.find((c) => c.name === ctxName);
if (!context) throw new Error(`no context ${ctxName}`);
const inputColumns = [...frame.columns.keys()].filter((n) => ['feature', 'date'].includes(frame.roles.get(n) ?? ''));
const task: ContextTask = {
  context,
  columns: frame.columns,
  inputColumns,
  target: frame.target,
  stages: plan.stages,
  learners: plan.learners.filter((l) => only.length === 0 || only.includes(l.name)).map((l) => ({ ...l, name: `${l.name}-profile-${process.pid}` })),
  innerFolds: config.split.innerFolds,
  balance: config.balance,
  seed: config.seed,
  // as the runner derives it, so that stage steps find the runs' cache entries
  dataKey: dataKeyOf(config, loaded.digest),
  cacheDir,
  keepStates: false,
};
const r = runContext(task);
for (const s of r.steps) console.log(s.step, s.hit ? 'hit' : 'miss', s.seconds.toFixed(2));
