/** Shared set-up for tests that run the whole pipeline in-process on small generated data. */
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { parseConfig } from '../../pipeline/config/load.js';
import { runPipeline, type RunOutcome } from '../../pipeline/runner.js';

export { tempDir } from './temp.js';

/** Write `yaml` as `<dir>/config.yaml`, parse it, run it. */
export async function runYaml(dir: string, yaml: string, opts: { workers: number; cacheDir?: string; runsDir?: string }): Promise<RunOutcome> {
  const file = join(dir, 'config.yaml');
  writeFileSync(file, yaml);
  const config = parseConfig(yaml, file);
  return runPipeline(config, { workers: opts.workers, runsDir: opts.runsDir ?? join(dir, 'runs'), cacheDir: opts.cacheDir ?? join(dir, 'cache') });
}
