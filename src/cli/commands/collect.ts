import { resolve } from 'node:path';
import type { Command } from 'commander';
import type { CommandContext } from '../io.js';
import { formatStudySummary, runStudy } from '../../refine/study.js';
import { prepareCaseObject, showValue } from '../../run/case.js';
import { InputError } from '../../run/errors.js';
import type { ExecuteOptions, PieceOutcome, RunExecutor, RunPiece } from '../../run/executor.js';
import { progressView } from '../../run/progress.js';
import type { SweepSpec } from '../../run/sweep.js';
import type { PointSpec } from '../../run/start.js';
import { jobCaseCode, jobCodeModels, jobPieces, readJob, refreshStates, resubmit, storedCommands, waitForJob } from '../../slurm/job.js';
import { type ClusterOptions, addClusterOptions, clusterSettings } from './cluster.js';
import { onTerminal } from './run.js';
import { reportRuns, reportSweep, stopWaitingOnSignals } from './several.js';

/** The executor of a job already submitted: it only waits (or looks once). */
class Collector implements RunExecutor {
  readonly where = 'Slurm';
  constructor(
    private readonly collection: string,
    private readonly wait: boolean,
  ) {}
  async execute(_pieces: readonly RunPiece[], o: ExecuteOptions): Promise<PieceOutcome[]> {
    return this.wait ? waitForJob(this.collection, o) : refreshStates(this.collection);
  }
}

/** `branchline collect DIR`: wait for a Slurm job of branchline, report its tasks, merge the results. */
export function registerCollect(program: Command, ctx: CommandContext): void {
  const { io, setExit } = ctx;
  const command = program
    .command('collect')
    .description('wait for the Slurm job array of a folder (runs, a sweep or a refinement study), report how each task ended, and write the merged results; --resubmit sends the unfinished tasks again from their checkpoints')
    .argument('<dir>', 'the folder given to --out of `run --slurm` or `refine --slurm` (it holds slurm/job.json)')
    .option('--resubmit', 'first resubmit the tasks that failed, were cancelled or hit their time limit (not runs that failed numerically); each resumes from its checkpoint')
    .option('--no-wait', 'do not wait: report the tasks as they are now')
    .option('--load-code-model', "load the code model the job's cases name (its path is printed first; a folder alone never loads code)")
    .option('--run-setup', "with --resubmit: run the setup lines and pass the sbatch options stored in the job folder (they are printed first; a folder alone never runs commands)")
    .option('--quiet', 'no progress lines on stderr, only warnings')
    .option('--json', 'machine-readable summary on stdout (runs and sweeps)');
  addClusterOptions(command, false)
    .addHelpText(
      'after',
      `
The scheduler options (--partition, --time-limit, --memory, --account, --scheduler-option, --setup,
--stop-margin) apply to a resubmission and replace those of the last submission.
Exit codes: 0 every task finished; 1 a task failed, stopped or is still queued; 2 bad input.`,
    )
    .action(async (dirGiven: string, opts: ClusterOptions & { resubmit?: boolean; wait?: boolean; loadCodeModel?: boolean; runSetup?: boolean; quiet?: boolean; json?: boolean }) => {
      const dir = resolve(dirGiven);
      const job = readJob(dir);
      // a job folder is data: its code models (which its tasks and this command would load) load only when asked for
      const code = jobCodeModels(job);
      const allowCode = opts.loadCodeModel === true;
      if (code.length > 0 && !allowCode) {
        throw new InputError(
          `${dirGiven}: the job's cases use the code model ${code.map((m) => showValue(m)).join(', ')}, and a folder never loads code by itself; pass --load-code-model to load ${code.length === 1 ? 'that module' : 'those modules'}`,
        );
      }
      for (const m of code) io.err(`branchline: loading the code model ${showValue(m)}, as the job's cases name it (--load-code-model)\n`);
      const overrides = clusterSettings({ ...opts, slurm: true, wait: true }, []);
      const asked = [opts.partition, opts.timeLimit, opts.memory, opts.account, opts.schedulerOption, opts.setup, opts.stopMargin].some((v) => v !== undefined);
      if (asked && !opts.resubmit) throw new InputError('the scheduler options apply to a resubmission: add --resubmit');
      const log = (level: 'info' | 'warning', message: string): void => {
        if (level === 'warning' || !opts.quiet) io.err(`branchline: ${level === 'warning' ? 'warning: ' : ''}${message}\n`);
      };
      if (opts.resubmit) {
        // the job record's setup lines are shell commands and its sbatch options reach the
        // scheduler: like a code model, they run only when the user says so
        const stored = storedCommands(job, opts.setup !== undefined, opts.schedulerOption !== undefined);
        const lines = [...stored.setup.map((l) => `setup line ${showValue(l)}`), ...stored.schedulerOptions.map((o) => `sbatch option ${showValue(o)}`)];
        if (lines.length > 0 && opts.runSetup !== true) {
          throw new InputError(`${dirGiven}: resubmitting would run what the job folder stores (${lines.join(', ')}), and a folder never runs commands by itself; pass --run-setup to run them, or give your own with --setup and --scheduler-option`);
        }
        for (const l of lines) io.err(`branchline: resubmitting with the job folder's ${l} (--run-setup)\n`);
        // only what was given replaces the last submission's settings
        const given = {
          ...(opts.partition !== undefined ? { partition: overrides!.partition } : {}),
          ...(opts.timeLimit !== undefined ? { timeLimit: overrides!.timeLimit } : {}),
          ...(opts.memory !== undefined ? { memoryMiB: overrides!.memoryMiB } : {}),
          ...(opts.account !== undefined ? { account: overrides!.account } : {}),
          ...(opts.schedulerOption !== undefined ? { schedulerOptions: overrides!.schedulerOptions } : {}),
          ...(opts.setup !== undefined ? { setup: overrides!.setup } : {}),
          ...(opts.stopMargin !== undefined ? { stopMargin: overrides!.stopMargin } : {}),
        };
        if (!resubmit(dir, given, log)) log('info', 'nothing to resubmit: no task ended unfinished');
      }
      const wait = opts.wait !== false;
      const collector = new Collector(dir, wait);
      const stop = stopWaitingOnSignals(io, dir);
      try {
        if (job.kind === 'refine') {
          const c = job.context as { case: Record<string, unknown>; label: string; baseDir: string; file?: string; grids: number[]; point?: PointSpec; branch?: number; 'expected-order'?: number | null };
          const prepared = await prepareCaseObject(c.case, { label: c.label, baseDir: c.baseDir, ...(c.file !== undefined ? { file: c.file } : {}), ...jobCaseCode(c.case, c.baseDir, allowCode) });
          const result = await runStudy(prepared, {
            grids: c.grids,
            outDir: dir,
            ...(c.point ? { point: c.point } : {}),
            ...(c.branch !== undefined ? { branch: c.branch } : {}),
            ...(c['expected-order'] !== undefined ? { expectedOrder: c['expected-order'] } : {}),
            executor: collector,
            keepFolder: true,
            signal: stop.signal,
            log,
          });
          if (result.status === 'submitted') {
            io.out(`The study's grids are still queued or running; wait for them with: branchline collect ${dirGiven}${allowCode ? ' --load-code-model' : ''}\n`);
            setExit(1);
          } else {
            io.out(formatStudySummary(result));
            const again = (await refreshStatesSafe(dir)).filter((o) => o.resubmit).length;
            if (again) io.out(`To resubmit the ${again} unfinished grid${again === 1 ? '' : 's'} from their checkpoints: branchline collect ${dirGiven} --resubmit${allowCode ? ' --load-code-model' : ''}\n`);
            setExit(result.status === 'finished' ? 0 : 1);
          }
          return;
        }
        const pieces = await jobPieces(dir, job, allowCode);
        const view = progressView({ tty: onTerminal(io), quiet: opts.quiet === true, write: io.err, showNames: pieces.length > 1 });
        let outcomes: PieceOutcome[];
        try {
          outcomes = await collector.execute(pieces, { signal: stop.signal, view, log: (level, message) => view.log(undefined, level, message) });
        } finally {
          view.close();
        }
        if (job.kind === 'sweep') {
          const c = job.context as { case: Record<string, unknown>; label: string; baseDir: string; file?: string; sweep: SweepSpec };
          const prepared = await prepareCaseObject(c.case, { label: c.label, baseDir: c.baseDir, ...(c.file !== undefined ? { file: c.file } : {}), ...jobCaseCode(c.case, c.baseDir, allowCode) });
          reportSweep(ctx, prepared, c.sweep, dir, pieces, outcomes, opts.json);
          const again = outcomes.filter((o) => (o as { resubmit?: boolean }).resubmit).length;
          if (again && !opts.json) io.out(`To resubmit the ${again} unfinished from their checkpoints: branchline collect ${dirGiven} --resubmit${allowCode ? ' --load-code-model' : ''}\n`);
        } else {
          reportRuns(ctx, pieces, outcomes, { ...(opts.json ? { json: true } : {}), collection: dirGiven });
        }
      } finally {
        stop.release();
      }
    });
}

async function refreshStatesSafe(dir: string): Promise<{ resubmit: boolean }[]> {
  try {
    return refreshStates(dir);
  } catch {
    return [];
  }
}
