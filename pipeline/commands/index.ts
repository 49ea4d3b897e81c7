/** Every `foldstack` subcommand, in the order `--help` lists them. One file per command. */
import type { Command } from './command.js';
import { runCommand } from './run.js';
import { checkCommand } from './check.js';
import { schemaCommand } from './schema.js';
import { scheduleCommand } from './schedule.js';
import { pruneCommand } from './prune.js';
import { reportCommand } from './report.js';
import { runsCommand } from './runs.js';
import { compareCommand } from './compare.js';
import { promoteCommand } from './promote.js';
import { scoreCommand } from './score.js';

export const commands: readonly Command[] = [runCommand, checkCommand, schemaCommand, runsCommand, compareCommand, promoteCommand, scoreCommand, reportCommand, scheduleCommand, pruneCommand];
