import { toJsonSchema } from '../config/schema.js';
import { EXIT } from '../errors.js';
import type { Command } from './command.js';

export const schemaCommand: Command = {
  name: 'schema',
  summary: "print the config's JSON Schema (point your editor at it)",
  help: `foldstack schema

Prints the config's JSON Schema (draft 2020-12) on stdout, e.g.
  foldstack schema > config.schema.json
and point your editor's YAML support at it.`,
  options: {},
  async run() {
    process.stdout.write(JSON.stringify(toJsonSchema(), null, 2) + '\n');
    return EXIT.ok;
  },
};
