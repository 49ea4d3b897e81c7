/**
 * `npm run demo`: generate the invented demo data if it is not there yet, then run configs/demo.yaml
 * through the real command line, exactly as a user would.
 */
import { existsSync } from 'node:fs';
import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { dirname, join } from 'node:path';
import { generateDemo } from './generate.js';

const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const csv = join(root, 'data-demo', 'demo.csv');

if (!existsSync(csv)) {
  process.stderr.write('generating the invented demo data (20,000 rows, seed 7) → data-demo/demo.csv\n');
  await generateDemo({ rows: 20_000, seed: 7, out: csv });
}
const cli = join(root, 'dist', 'pipeline', 'cli.js');
const result = spawnSync(process.execPath, [cli, 'run', join(root, 'configs', 'demo.yaml'), ...process.argv.slice(2)], { stdio: 'inherit', cwd: root });
process.exitCode = result.status ?? 1;
