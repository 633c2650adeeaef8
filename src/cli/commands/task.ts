import type { Command } from 'commander';
import type { CommandContext } from '../io.js';
import { InputError } from '../../run/errors.js';
import type { TaskResult } from '../../slurm/job.js';
import { runTask } from '../../slurm/task.js';

/**
 * `branchline task FOLDER` (not listed in --help): one task of a Slurm job array, started by the
 * job script on a compute node. Slurm's signal before the time limit (SIGUSR2), SIGTERM and
 * SIGINT stop the run cleanly with a checkpoint.
 */
export function registerTask(program: Command, { io, setExit }: CommandContext): void {
  program
    .command('task', { hidden: true })
    .description('run one task of a branchline Slurm job (started by the job script)')
    .argument('<folder>', 'the job folder (…/slurm)')
    .option('--index <n>', 'the task (default: $SLURM_ARRAY_TASK_ID)')
    .action(async (folder: string, opts: { index?: string }) => {
      const text = opts.index ?? process.env.SLURM_ARRAY_TASK_ID;
      if (text === undefined || !/^\d+$/.test(text)) throw new InputError(`task: no task number (accepted: --index N, or $SLURM_ARRAY_TASK_ID set by Slurm)`);
      const controller = new AbortController();
      let cause: TaskResult['stop'];
      const onSignal = (signal: NodeJS.Signals): void => {
        cause ??= signal === 'SIGUSR2' ? 'time-limit' : 'terminated';
        io.out(`${signal}: finishing the current step, writing a checkpoint and stopping\n`);
        controller.abort();
      };
      for (const s of ['SIGUSR2', 'SIGTERM', 'SIGINT'] as const) process.on(s, onSignal);
      try {
        const code = await runTask({ folder, index: Number(text), signal: controller.signal, stopCause: () => cause, write: io.out });
        setExit(code);
      } finally {
        for (const s of ['SIGUSR2', 'SIGTERM', 'SIGINT'] as const) process.off(s, onSignal);
      }
    });
}
