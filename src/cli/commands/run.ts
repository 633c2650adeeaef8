import { availableParallelism } from 'node:os';
import { relative, resolve } from 'node:path';
import type { Command } from 'commander';
import { type CommandContext, type Io, processIo } from '../io.js';
import { sideBySideUnknowns } from '../../run/branch-helpers.js';
import { type CaseOutcome, batchLines, hasWorkers, jsonSummary, killWorkers, prepareTargets, runBatch } from '../../run/batch.js';
import { InputError } from '../../run/errors.js';
import { leaveAtOnce } from '../../run/leave.js';
import { type ProgressView, progressView } from '../../run/progress.js';
import { formatSummary } from '../../run/summary.js';
import { toJson } from '../../run/writers.js';
import { parseSweep } from '../../run/sweep.js';
import { drawBatchPlanes } from '../../run/plane-diagram.js';
import { addClusterOptions, clusterSettings } from './cluster.js';
import { type SeveralOptions, runCasesOnSlurm, runSweep } from './several.js';

/** Most worker processes `--jobs` accepts. */
const maxJobs = 64;

/**
 * SIGINT/SIGTERM handlers in two stages: the first signal calls `first` and aborts the returned
 * signal (the work stops cleanly); any later one calls `second` (leave at once). Returns the stop
 * signal and a function that removes the handlers.
 */
export function twoStageSignals(first: (s: NodeJS.Signals) => void, second: (s: NodeJS.Signals, count: number) => void): { signal: AbortSignal; release: () => void } {
  const controller = new AbortController();
  let count = 0;
  const onSignal = (signal: NodeJS.Signals): void => {
    count++;
    if (count > 1) return second(signal, count);
    first(signal);
    controller.abort();
  };
  return { signal: controller.signal, release: onStopSignals(onSignal) };
}

/** Call `handler` on SIGINT and SIGTERM until the returned function is called. */
export function onStopSignals(handler: (signal: NodeJS.Signals) => void): () => void {
  process.on('SIGINT', handler);
  process.on('SIGTERM', handler);
  return () => {
    process.off('SIGINT', handler);
    process.off('SIGTERM', handler);
  };
}

/**
 * SIGINT/SIGTERM while runs go: the first stops them cleanly (the current step is finished, a
 * checkpoint written, run.json marked stopped); a second leaves at once (every run is marked
 * stopped and can be resumed from its last checkpoint; worker processes are ended first).
 */
export function stopOnSignals(io: Io, view: () => Pick<ProgressView, 'log' | 'close'> | undefined): { signal: AbortSignal; release: () => void } {
  return twoStageSignals(
    (signal) => view()?.log(undefined, 'warning', `${signal}: finishing the current step, writing a checkpoint and stopping (${signal} again to leave at once)`),
    (signal, count) => {
      if (count > 2) process.exit(130);
      view()?.close();
      io.err(`branchline: second ${signal}: leaving at once; \`branchline resume DIR\` continues from the last checkpoint\n`);
      // every run this call writes says `stopped` in its run.json and releases its folder's lock
      const reason = `left at once on a second ${signal}; resume goes on from the last checkpoint`;
      if (!hasWorkers()) {
        leaveAtOnce(reason);
        process.exit(130);
      }
      void killWorkers(reason).finally(() => {
        leaveAtOnce(reason);
        process.exit(130);
      });
    },
  );
}

/** Whether progress bars go to a terminal (only for the real process streams). */
export function onTerminal(io: Io): boolean {
  return io === processIo && process.stderr.isTTY === true;
}

/** After the summary of a stopped run: how to go on. */
export function resumeHint(o: Pick<CaseOutcome, 'status' | 'directory'>): string {
  if (o.status !== 'stopped') return '';
  const r = relative(process.cwd(), o.directory);
  return `To continue: branchline resume ${r === '' ? '.' : r.startsWith('..') ? o.directory : r}\n`;
}

export function parseJobs(text: string | undefined): number {
  if (text === undefined) return 1;
  const n = Number(text);
  if (!/^\s*\d+\s*$/.test(text) || !Number.isInteger(n) || n < 1 || n > maxJobs) {
    throw new InputError(`--jobs: '${text}' is not accepted (accepted: a whole number from 1 to ${maxJobs})`);
  }
  return n;
}

/** This machine's processor cores (the default of --cores). */
export function machineCores(): number {
  return Math.max(1, availableParallelism());
}

/** `--cores N`: a whole number from 1; absent: `auto` (this machine's cores where the work is large enough to share). */
export function parseCores(text: string | undefined): number | 'auto' {
  if (text === undefined) return 'auto';
  const n = Number(text);
  if (!/^\s*\d+\s*$/.test(text) || !Number.isInteger(n) || n < 1 || n > maxJobs) {
    throw new InputError(`--cores: '${text}' is not accepted (accepted: a whole number from 1 to ${maxJobs})`);
  }
  return n;
}

/** The --cores option's help (run, resume). */
export const coresHelp = `processor cores a run may use: the branches that start at branch points are traced side by side (default: this machine's cores, ${machineCores()} here, for grids of at least ${sideBySideUnknowns} unknowns, else 1; the files are the same for any number)`;

/** `branchline run CASE...`: trace cases and write their run directories. */
export function registerRun(program: Command, { io, setExit }: CommandContext): void {
  const command = program
    .command('run')
    .description('trace the steady states of case files and write a run directory per case (run.json, points.json, branches/*.csv, solutions/*.npy)')
    .argument('<case...>', 'case files (YAML or JSON); all are checked before any run starts')
    .option('--out <dir>', "output folder (default: the case's output.directory, else runs/<case name>); with several cases, a parent folder holding one folder per case name")
    .option('--force', "replace an earlier run in a non-empty output folder: only the files that run wrote (run.json lists them) are removed, yours stay")
    .option('--jobs <n>', 'run up to n cases at a time, each in its own process (default 1: one after another)')
    .option('--cores <n>', coresHelp)
    .option('--quiet', 'no progress and no log lines on stderr, only warnings')
    .option('--json', 'print a machine-readable summary (JSON) on stdout instead of the text summary')
    .option('--sweep <name=values>', 'run the case once per value of one parameter, e.g. biot=0.5,1,2: a run folder per value under --out (default runs/<case>-<name>-sweep), with sweep.csv, sweep.json and sweep.svg');
  addClusterOptions(command)
    .addHelpText(
      'after',
      `
Progress: a bar per running case on a terminal; otherwise a plain line per case every 10 s.
Checkpoints: every run writes checkpoint.bin in its folder (case keys checkpoint.every-points,
default 25, and checkpoint.every-seconds, default 60); \`branchline resume DIR\` continues a run
that was stopped or killed, losing at most the points since its last checkpoint.
Ctrl-C or SIGTERM: the current step is finished, a checkpoint written, the run marked stopped,
and cases not yet started are skipped; press again to leave at once (exit code 130; resume
continues from the last checkpoint).
One writer per folder: a folder another live process writes (its writer.lock) is refused.
Slurm (--slurm): the cases (or the sweep's values) go to Slurm as one job array; --out DIR is
then always a parent folder (DIR/<case name>, and the job's files in DIR/slurm). The command
waits and shows progress (or returns at once with --no-wait); \`branchline collect DIR\` waits
again, reports each task's end, and with --resubmit sends the unfinished tasks again.
Exit codes: 0 every run finished; 1 a run failed or was stopped; 2 bad input (a case file, an
option or an output folder), found before any run starts.`,
    )
    .action(async (files: string[], opts: SeveralOptions & { sweep?: string; cores?: string }) => {
      const jobs = parseJobs(opts.jobs);
      const cores = parseCores(opts.cores);
      if (opts.sweep !== undefined) return runSweep(files, parseSweep(opts.sweep), opts, jobs, { io, setExit });
      if (opts.slurm) return runCasesOnSlurm(files, opts, { io, setExit });
      // options that belong to Slurm runs are refused here
      clusterSettings(opts, []);
      // every case is checked (and its problem built) before any output folder is touched
      const { targets, problems } = await prepareTargets(files, { ...(opts.out !== undefined ? { out: opts.out } : {}), force: opts.force === true, jobs });
      if (problems.length) {
        for (const p of problems) io.err(`branchline: ${p}\n`);
        if (files.length > 1) io.err(`branchline: nothing was run: ${problems.length} of ${files.length} cases cannot run\n`);
        setExit(2);
        return;
      }
      const several = targets.length > 1;
      const view = progressView({ tty: onTerminal(io), quiet: opts.quiet === true, write: io.err, showNames: several });
      const stop = stopOnSignals(io, () => view);
      let outcomes: CaseOutcome[];
      try {
        outcomes = await runBatch(targets, {
          jobs,
          cores,
          force: opts.force === true,
          signal: stop.signal,
          view,
          onOutcome: (t, o) => {
            if (opts.json) return;
            if (o.result) io.out(formatSummary(o.result, t.prepared) + resumeHint(o) + (several ? '\n' : ''));
            else if (o.status === 'failed') io.err(`branchline: ${several ? `${o.name}: ` : ''}run failed: ${o.reason}\n`);
          },
        });
      } finally {
        view.close();
        stop.release();
      }
      // curve runs of the batch that share a parameter plane: one diagram of all their curves
      const planes = several ? drawBatchPlanes(outcomes.filter((o) => o.result).map((o) => o.directory), opts.out !== undefined ? resolve(opts.out) : undefined) : [];
      if (opts.json) io.out(toJson(jsonSummary(outcomes)));
      else if (several) io.out([...batchLines(outcomes), ...planes.map((p) => `The curves of ${p.runs.length} runs in the plane of ${p.parameter} and ${p.free}: ${relative(process.cwd(), p.file) || p.file}`)].join('\n') + '\n');
      setExit(outcomes.every((o) => o.status === 'finished') ? 0 : 1);
    });
}
