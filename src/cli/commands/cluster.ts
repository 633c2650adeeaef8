/**
 * The options that send runs to Slurm (`run`, `refine`, `collect`), and what the commands print
 * about a job. Thin: the job itself is src/slurm/.
 */
import { type Command, Option } from 'commander';
import type { Io } from '../io.js';
import type { PreparedCase } from '../../run/case.js';
import { InputError } from '../../run/errors.js';
import { type SlurmSettings, checkSchedulerOption, checkSetupLine, memoryMiB, timeLimitSeconds } from '../../slurm/script.js';
import type { Submission } from '../../slurm/job.js';

export interface ClusterOptions {
  slurm?: boolean;
  partition?: string;
  timeLimit?: string;
  memory?: string;
  account?: string;
  schedulerOption?: string[];
  setup?: string[];
  stopMargin?: string;
  wait?: boolean;
}

const collect = (value: string, previous: string[] = []): string[] => [...previous, value];

/** Add the scheduler options (`withSwitch`: also --slurm itself and --no-wait). */
export function addClusterOptions(command: Command, withSwitch = true): Command {
  if (withSwitch) command.option('--slurm', 'send the runs to Slurm as one job array instead of running them here (see --partition, --time-limit, --memory)');
  command
    .option('--partition <name>', 'Slurm partition for the tasks (default: the cluster\'s default partition)')
    .option('--time-limit <time>', 'time limit per task in Slurm\'s notation (minutes, HH:MM:SS, D-HH:MM); tasks checkpoint and stop shortly before it')
    .option('--memory <amount>', 'memory per task, e.g. 4G or 4096M (default: our estimate for the largest task)')
    .option('--account <name>', 'Slurm account to charge')
    .addOption(new Option('--scheduler-option <flag>', 'an extra sbatch option, e.g. --scheduler-option=--qos=long (repeatable)').argParser(collect))
    .addOption(new Option('--setup <line>', 'a shell line the job script runs before each task, e.g. "module load nodejs/20" (repeatable; the case key cluster.setup adds more)').argParser(collect))
    .option('--stop-margin <seconds>', 'seconds before the time limit at which tasks checkpoint and stop (default: 300, at most a tenth of the limit)');
  if (withSwitch) command.option('--no-wait', 'return once the job is submitted; `branchline collect DIR` waits for it and writes the results later');
  return command;
}

const nameText = /^[A-Za-z0-9_.,:+-]+$/;

/**
 * The scheduler settings from the options (and the cases' setup lines), or undefined without
 * --slurm. Options that need --slurm are refused without it.
 */
export function clusterSettings(o: ClusterOptions, cases: readonly PreparedCase[], requireSwitch = true): SlurmSettings | undefined {
  const given: [string, unknown][] = [
    ['--partition', o.partition],
    ['--time-limit', o.timeLimit],
    ['--memory', o.memory],
    ['--account', o.account],
    ['--scheduler-option', o.schedulerOption],
    ['--setup', o.setup],
    ['--stop-margin', o.stopMargin],
    ['--no-wait', o.wait === false ? true : undefined],
  ];
  if (requireSwitch && !o.slurm) {
    const stray = given.find(([, v]) => v !== undefined);
    if (stray) throw new InputError(`${stray[0]} needs --slurm (it is an option of runs sent to Slurm)`);
    return undefined;
  }
  for (const [flag, v] of [['--partition', o.partition], ['--account', o.account]] as const) {
    if (v !== undefined && !nameText.test(v)) throw new InputError(`${flag} '${v}' is not accepted (accepted: a Slurm name of letters, digits, dots, dashes and underscores)`);
  }
  let limit: number | null = null;
  if (o.timeLimit !== undefined) limit = timeLimitSeconds(o.timeLimit);
  let margin: number | undefined;
  if (o.stopMargin !== undefined) {
    margin = Number(o.stopMargin);
    if (!/^\s*\d+\s*$/.test(o.stopMargin) || margin < 1 || margin > 65535) throw new InputError(`--stop-margin '${o.stopMargin}' is not accepted (accepted: whole seconds from 1 to 65535)`);
    if (limit !== null && margin >= limit) throw new InputError(`--stop-margin ${margin}: not less than the time limit (${o.timeLimit}, ${limit} s); the tasks would stop at once`);
  }
  const setup: string[] = (o.setup ?? []).map((l) => checkSetupLine(l));
  for (const c of cases) for (const l of c.case.cluster?.setup ?? []) if (!setup.includes(l)) setup.push(l);
  return {
    ...(o.partition !== undefined ? { partition: o.partition } : {}),
    ...(o.timeLimit !== undefined ? { timeLimit: o.timeLimit.trim() } : {}),
    ...(o.memory !== undefined ? { memoryMiB: memoryMiB(o.memory) } : {}),
    ...(o.account !== undefined ? { account: o.account } : {}),
    schedulerOptions: (o.schedulerOption ?? []).map(checkSchedulerOption),
    setup,
    ...(margin !== undefined ? { stopMargin: margin } : {}),
  };
}

/** After a submission that is not waited for: what was submitted and how to go on. */
export function submittedLines(io: Io, s: Submission | undefined, collection: string): void {
  if (!s) return;
  io.out(`Submitted to Slurm as job array ${s.job} (${s.tasks.length} task${s.tasks.length === 1 ? '' : 's'}, ${s.memoryMiB} MiB each).\n`);
  io.out(`Follow it with: squeue -j ${s.job}\n`);
  io.out(`Collect the results with: branchline collect ${collection}\n`);
}
