/**
 * Every command of the CLI, one file each; main.ts registers them in this order (the order of
 * `branchline --help`). A new command: add its file here and one line below.
 */
import type { Command } from 'commander';
import type { CommandContext } from '../io.js';
import { registerModels } from './models.js';
import { registerRun } from './run.js';
import { registerResume } from './resume.js';
import { registerCheck } from './check.js';
import { registerNew } from './new.js';
import { registerRefine } from './refine.js';
import { registerPlot } from './plot.js';
import { registerSettle } from './settle.js';
import { registerFindStates } from './find-states.js';
import { registerCollect } from './collect.js';
import { registerTask } from './task.js';

export const commands: ((program: Command, context: CommandContext) => void)[] = [registerRun, registerSettle, registerFindStates, registerResume, registerCheck, registerModels, registerNew, registerRefine, registerPlot, registerCollect, registerTask];
