import { existsSync } from 'node:fs';
import { loadConfig } from '../config/load.js';
import { EXIT, FoldstackError } from '../errors.js';
import { onePositional } from './args.js';
import type { Command } from './command.js';

export const checkCommand: Command = {
  name: 'check',
  summary: 'validate a config (and that its data file exists) without running',
  help: `foldstack check CONFIG

Validates CONFIG against the schema (file, line and column for every problem) and checks that
the data file it names exists. Writes nothing.`,
  options: {},
  async run({ positionals }) {
    const config = await loadConfig(onePositional(positionals, 'CONFIG', 'check'));
    if (!existsSync(config.data.file)) throw new FoldstackError(`data.file ${config.data.file} does not exist`, "paths in a config are relative to the config file's folder", EXIT.data);
    const s = (n: number) => (n === 1 ? '' : 's');
    process.stderr.write(`${config.file}: ok (${config.learners.size} learner${s(config.learners.size)}, ${config.features.size} feature stage${s(config.features.size)})\n`);
    return EXIT.ok;
  },
};
