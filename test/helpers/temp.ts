import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

export function tempDir(prefix: string): string {
  return mkdtempSync(join(tmpdir(), `foldstack-${prefix}-`));
}
