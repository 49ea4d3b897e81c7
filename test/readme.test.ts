/**
 * The README's config reference is generated from the one schema; this keeps them in step.
 * After changing the schema, regenerate it with: UPDATE_README=1 npx vitest run test/readme.test.ts
 */
import { describe, expect, it } from 'vitest';
import { readFileSync, writeFileSync } from 'node:fs';
import { configReferenceMarkdown } from '../pipeline/config/schema.js';

const START = '<!-- config-reference:start -->';
const END = '<!-- config-reference:end -->';

describe('README', () => {
  it('carries the config reference generated from the schema', () => {
    const readme = readFileSync('README.md', 'utf8');
    const a = readme.indexOf(START);
    const b = readme.indexOf(END);
    expect(a).toBeGreaterThan(0);
    expect(b).toBeGreaterThan(a);
    const generated = `${START}\n${configReferenceMarkdown().replace(/^# .*\n+/, '')}\n${END}`;
    const current = readme.slice(a, b + END.length);
    if (process.env.UPDATE_README === '1' && current !== generated) {
      writeFileSync('README.md', readme.slice(0, a) + generated + readme.slice(b + END.length));
      return;
    }
    expect(current, 'run UPDATE_README=1 npx vitest run test/readme.test.ts').toBe(generated);
  });

  it('states the job first and the two quick-start commands, and carries the cautions', () => {
    const readme = readFileSync('README.md', 'utf8').replace(/\s+/g, ' ');
    expect(readme).toContain('npm ci && npm run demo');
    expect(readme).toContain('npm ci && npm test');
    for (const phrase of ['decision support', 'fair-lending', 'privacy', 'model-risk', 'Protected characteristics', 'local law']) expect(readme).toContain(phrase);
  });
});
