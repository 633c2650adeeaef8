import { statSync, statfsSync, existsSync } from 'node:fs';
import { totalmem } from 'node:os';
import { dirname } from 'node:path';
import type { Command } from 'commander';
import type { CommandContext } from '../io.js';
import { estimateFactorMemory } from '../../../discretisations/index.js';
import { outputFolderProblem } from '../../run/batch.js';
import { InputError } from '../../run/errors.js';
import type { CodeModelChoice } from '../../run/resume-code.js';
import { type PreparedSettleCase, prepareSettleCase } from '../../run/settle-case.js';
import { settleView } from '../../run/settle-progress.js';
import { type SettleResult, prepareSettleResume, settleDirectory } from '../../run/settle.js';
import { settleCaseInThread } from '../../run/run-thread.js';
import { formatSettleSummary, settleJson } from '../../run/settle-summary.js';
import { toJson } from '../../run/writers.js';
import type { FolderLock } from '../../run/lock.js';
import { onTerminal, stopOnSignals } from './run.js';

/**
 * What an integration needs that may not fit, refused up front (one line): memory for the LU of
 * the iteration matrix (twice with eigenvalues), disk for the snapshots.
 */
function resourceProblem(prepared: PreparedSettleCase, outDir: string): string | undefined {
  const d = prepared.problem.describe();
  const factor = estimateFactorMemory(d.axes.map((a) => a.nodes), Math.max(1, d.fields.length), prepared.problem.extraUnknowns.length).bytes;
  const memory = factor * (prepared.case.stability.eigenvalues > 0 ? 2 : 1) + 16 * 8 * prepared.problem.size;
  const gib = (b: number) => `${(b / 1024 ** 3).toFixed(1)} GiB`;
  if (memory > 0.8 * totalmem()) return `${prepared.label}: grid.intervals: the integration would need about ${gib(memory)} of memory (the sparse LU of the iteration matrix), more than this machine has (${gib(totalmem())}); use fewer intervals`;
  const s = prepared.time.snapshots;
  const count = s === 'none' ? 2 : s === 'auto' ? 22 : Math.floor(prepared.time.end / s.every) + 2;
  const bytes = count * 8 * d.axes.reduce((a, x) => a * x.nodes, 1) * Math.max(1, d.fields.length);
  let probe = outDir;
  while (!existsSync(probe) && dirname(probe) !== probe) probe = dirname(probe);
  try {
    const fs = statfsSync(probe);
    const free = fs.bavail * fs.bsize;
    if (statSync(probe) && bytes > free) return `${prepared.label}: time.snapshots: ${count} snapshots would write about ${gib(bytes)}, but only ${gib(free)} is free under ${probe}; take a longer interval or snapshots: none`;
  } catch {
    // file systems that cannot say how much is free: go on
  }
  return undefined;
}

/** Print the outcome and set the exit code: 0 steady, 1 anything else. */
function report(result: SettleResult, prepared: PreparedSettleCase, json: boolean, { io, setExit }: CommandContext): void {
  if (json) io.out(toJson(settleJson(result, prepared)));
  else io.out(formatSettleSummary(result, prepared));
  setExit(result.status === 'finished' && result.outcome?.kind === 'steady' ? 0 : 1);
}

/** Run (or resume) one integration here with progress and signals. */
export async function settleSession(
  prepared: PreparedSettleCase,
  outDir: string,
  opts: { force?: boolean; quiet?: boolean; json?: boolean; resume?: Awaited<ReturnType<typeof prepareSettleResume>>['resume']; lock?: FolderLock },
  context: CommandContext,
): Promise<void> {
  const { io } = context;
  const view = settleView({ tty: onTerminal(io), quiet: opts.quiet === true, write: io.err });
  const stop = stopOnSignals(io, () => view);
  let result: SettleResult;
  try {
    // in a worker thread: a long factorisation never keeps the signals waiting (see run-thread.ts)
    result = await settleCaseInThread(prepared, {
      outDir,
      ...(opts.force ? { force: true } : {}),
      signal: stop.signal,
      log: (level, message) => view.log(undefined, level, message),
      progress: (p) => view.progress(p),
      ...(opts.resume ? { resume: opts.resume } : {}),
      ...(opts.lock ? { lock: opts.lock } : {}),
    });
  } catch (e) {
    // the files disagree with the checkpoint (a file cut short or replaced by hand)
    if (opts.resume && !(e instanceof InputError)) throw new InputError(`${outDir}: cannot resume: ${e instanceof Error ? e.message : String(e)}`);
    throw e;
  } finally {
    view.close();
    stop.release();
  }
  report(result, prepared, opts.json === true, context);
}

/** `branchline resume DIR` for a time integration (called by the resume command). */
export async function resumeSettle(
  dirGiven: string,
  opts: { force?: boolean; quiet?: boolean; json?: boolean },
  context: CommandContext,
  code: CodeModelChoice = {},
): Promise<void> {
  const { prepared, outDir, resume, lock } = await prepareSettleResume(dirGiven, { force: opts.force === true, code });
  try {
    if (!opts.quiet) {
      for (const s of resume.skipped) context.io.err(`branchline: warning: ${s}; using ${resume.file}\n`);
      context.io.err(`branchline: resuming the integration ${prepared.case.name} (was ${resume.previousStatus}) from ${resume.file} written ${resume.checkpoint.written}: ${resume.checkpoint.ledger.points} steps\n`);
    }
    await settleSession(prepared, outDir, { quiet: opts.quiet === true, json: opts.json === true, resume, lock }, context);
  } finally {
    lock.release();
  }
}

/** `branchline settle CASE`: integrate in time until the state settles. */
export function registerSettle(program: Command, context: CommandContext): void {
  program
    .command('settle')
    .description('integrate a case in time from its initial state until it settles into a steady state (or is seen to oscillate, drift or blow up); writes a run folder')
    .argument('<case>', 'a case file (YAML or JSON) with a time: section (time: {end: T, ...})')
    .option('--out <dir>', "output folder (default: the case's output.directory, else runs/<case name>)")
    .option('--force', "replace an earlier run in a non-empty output folder: only the files that run wrote (run.json lists them) are removed, yours stay")
    .option('--quiet', 'no progress and no log lines on stderr, only warnings')
    .option('--json', 'print a machine-readable summary (JSON) on stdout instead of the text summary')
    .addHelpText(
      'after',
      `
Method: variable-step BDF2 (order 2, L-stable; backward Euler first step) with local error
control (time.tolerance), on the model's Jacobian and the sparse LU, refactorised only when the
step or the Jacobian has changed enough. Steady when the scaled residual falls below
time.steady-tolerance; the state is then polished by Newton's method (time.newton).
Outcomes: steady; oscillating (with the period); still changing at time.end or time.max-steps;
blown up (max |u| past time.blow-up); failed.
Files: run.json, monitors.csv (one row per step), snapshots/*.npy, solutions/final.npy,
monitors.svg, plots/initial.svg, plots/final.svg. A case for branchline run can start from the
final state: start: {run: DIR, point: final}.
Checkpoints and Ctrl-C/SIGTERM as for runs; branchline resume DIR continues.
Exit codes: 0 a steady state was reached; 1 it was not (oscillating, still changing, blown up,
failed or stopped; the files and the reason are kept); 2 bad input.`,
    )
    .action(async (file: string, opts: { out?: string; force?: boolean; quiet?: boolean; json?: boolean }) => {
      const prepared = await prepareSettleCase(file);
      const outDir = settleDirectory(prepared, opts.out);
      const folder = outputFolderProblem(outDir, opts.force === true);
      if (folder) throw new InputError(folder);
      const need = resourceProblem(prepared, outDir);
      if (need) throw new InputError(need);
      await settleSession(prepared, outDir, opts, context);
    });
}
