/**
 * `run` with runs that go elsewhere or come in sets: a sweep of one case over a parameter's
 * values (here or on Slurm), and cases sent to Slurm; and what `run` and `collect` print about
 * such sets. Thin: sweeps are src/run/sweep.ts, the Slurm job src/slurm/job.ts.
 */
import { mkdirSync } from 'node:fs';
import { join, resolve } from 'node:path';
import type { CommandContext, Io } from '../io.js';
import { type CaseOutcome, type RunTarget, jsonSummary, outputFolderProblem, prepareTargets, resourceProblems, runBatch } from '../../run/batch.js';
import { type PreparedCase, caseDocument, prepareCase } from '../../run/case.js';
import { InputError } from '../../run/errors.js';
import type { PieceOutcome, RunPiece } from '../../run/executor.js';
import { progressView, type ProgressView } from '../../run/progress.js';
import { formatSummary } from '../../run/summary.js';
import { type SweepSpec, formatSweepSummary, sweepFolderProblem, sweepPieces, writeSweepSummary } from '../../run/sweep.js';
import { toJson } from '../../run/writers.js';
import { SlurmExecutor, type TaskOutcome } from '../../slurm/job.js';
import { type ClusterOptions, clusterSettings, submittedLines } from './cluster.js';
import { onStopSignals, onTerminal, stopOnSignals } from './run.js';

export interface SeveralOptions extends ClusterOptions {
  out?: string;
  force?: boolean;
  jobs?: string;
  quiet?: boolean;
  json?: boolean;
}

/** A checked case as a piece of a job (its resolved case document is what runs). */
export function pieceOf(t: RunTarget): RunPiece {
  return {
    name: t.prepared.case.name,
    outDir: t.outDir,
    doc: t.doc ?? caseDocument(t.prepared.case),
    label: t.label,
    baseDir: t.prepared.baseDir,
    ...(t.prepared.file !== undefined ? { file: t.prepared.file } : {}),
    prepared: t.prepared,
  };
}

/**
 * While waiting for Slurm: Ctrl-C or SIGTERM stops waiting (the job goes on); the files stay as
 * the tasks leave them and `collect` waits again.
 */
export function stopWaitingOnSignals(io: Io, collection: string): { signal: AbortSignal; release: () => void } {
  const controller = new AbortController();
  const onSignal = (signal: NodeJS.Signals): void => {
    io.err(`branchline: ${signal}: no longer waiting; the job goes on in Slurm (collect it later with: branchline collect ${collection})\n`);
    controller.abort();
  };
  return { signal: controller.signal, release: onStopSignals(onSignal) };
}

/** Print how each run went (its summary, or why not) and the overall lines; sets the exit code. */
export function reportRuns(ctx: CommandContext, pieces: readonly RunPiece[], outcomes: readonly PieceOutcome[], o: { json?: boolean; collection?: string }): void {
  const { io, setExit } = ctx;
  const cases: CaseOutcome[] = pieces.map((p, i) => ({
    name: p.prepared.case.name,
    caseFile: p.prepared.file ?? null,
    directory: p.outDir,
    status: outcomes[i].status as CaseOutcome['status'],
    ...(outcomes[i].reason !== undefined ? { reason: outcomes[i].reason } : {}),
    ...(outcomes[i].result ? { result: outcomes[i].result } : {}),
  }));
  if (o.json) {
    const doc = jsonSummary(cases) as { status: string; cases: Record<string, unknown>[] };
    outcomes.forEach((out, i) => {
      const s = (out as Partial<TaskOutcome>).scheduler;
      if (s) doc.cases[i].slurm = { job: s.job, task: s.task, state: s.state, ...(s.reason ? { reason: s.reason } : {}), ...(s.exitCode ? { 'exit-code': s.exitCode } : {}) };
    });
    if (outcomes.some((x) => x.status === 'submitted')) doc.status = 'submitted';
    io.out(toJson(doc));
  } else {
    pieces.forEach((p, i) => {
      const out = outcomes[i];
      if (out.result) io.out(formatSummary(out.result, p.prepared) + (out.status !== 'finished' && out.reason ? `Slurm task: ${out.reason}\n` : '') + (pieces.length > 1 ? '\n' : ''));
      else if (out.status !== 'submitted') io.err(`branchline: ${pieces.length > 1 ? `${p.prepared.case.name}: ` : ''}${out.reason ?? `${out.status} (no reason recorded)`}\n`);
    });
    const count = (s: string): number => outcomes.filter((x) => x.status === s).length;
    const parts = ['finished', 'failed', 'stopped', 'submitted', 'not-started'].filter((s) => count(s) > 0).map((s) => `${count(s)} ${s === 'submitted' ? 'still queued or running' : s.replace('-', ' ')}`);
    io.out(`${outcomes.length} run${outcomes.length === 1 ? '' : 's'}: ${parts.join(', ')}.\n`);
    const again = outcomes.filter((x) => (x as Partial<TaskOutcome>).resubmit === true).length;
    if (o.collection && again > 0) io.out(`To resubmit the ${again} unfinished from their checkpoints: branchline collect ${o.collection} --resubmit\n`);
    else if (o.collection && count('submitted') > 0) io.out(`To wait for them: branchline collect ${o.collection}\n`);
  }
  setExit(outcomes.every((x) => x.status === 'finished') ? 0 : 1);
}

/** `run CASE... --slurm --out DIR`: the cases as one job array. */
export async function runCasesOnSlurm(files: readonly string[], opts: SeveralOptions, ctx: CommandContext): Promise<void> {
  const { io, setExit } = ctx;
  if (opts.jobs !== undefined) throw new InputError('--jobs runs cases side by side on this machine; with --slurm each case is its own task (leave --jobs out)');
  if (opts.out === undefined) throw new InputError('--slurm needs --out DIR: the shared folder that holds a run folder per case (DIR/<case name>) and the job\'s files (DIR/slurm)');
  const { targets, problems } = await prepareTargets(files, { out: opts.out, force: opts.force === true, parent: true, cluster: true });
  if (problems.length) {
    for (const p of problems) io.err(`branchline: ${p}\n`);
    if (files.length > 1) io.err(`branchline: nothing was submitted: ${problems.length} of ${files.length} cases cannot run\n`);
    setExit(2);
    return;
  }
  const settings = clusterSettings(opts, targets.map((t) => t.prepared))!;
  const collection = resolve(opts.out);
  const pieces = targets.map(pieceOf);
  const executor = new SlurmExecutor({ collection, kind: 'runs', settings, wait: opts.wait !== false, force: opts.force === true });
  executor.check(pieces);
  await executeAndReport(ctx, executor, pieces, opts, collection, (outcomes) => reportRuns(ctx, pieces, outcomes, { ...(opts.json ? { json: true } : {}), collection }));
}

/** Run the pieces with the executor, with progress and the signals a wait needs; then report. */
async function executeAndReport(
  ctx: CommandContext,
  executor: SlurmExecutor,
  pieces: readonly RunPiece[],
  opts: SeveralOptions,
  collection: string,
  report: (outcomes: PieceOutcome[]) => void,
): Promise<void> {
  const { io } = ctx;
  const view = progressView({ tty: onTerminal(io), quiet: opts.quiet === true, write: io.err, showNames: pieces.length > 1 });
  const stop = stopWaitingOnSignals(io, collection);
  let outcomes: PieceOutcome[];
  try {
    outcomes = await executor.execute(pieces, { signal: stop.signal, view, log: (level, message) => view.log(undefined, level, message) });
  } finally {
    view.close();
    stop.release();
  }
  if (outcomes.every((x) => x.status === 'submitted') && !opts.json) {
    submittedLines(io, executor.submission, collection);
    ctx.setExit(0);
    return;
  }
  report(outcomes);
}

/** Context a sweep job keeps for `collect`. */
export function sweepContext(prepared: PreparedCase, spec: SweepSpec): Record<string, unknown> {
  return { case: caseDocument(prepared.case), label: prepared.label, baseDir: prepared.baseDir, ...(prepared.file !== undefined ? { file: prepared.file } : {}), sweep: spec };
}

/** Write and print a sweep's summary; sets the exit code. */
export function reportSweep(ctx: CommandContext, prepared: PreparedCase, spec: SweepSpec, parent: string, pieces: readonly RunPiece[], outcomes: readonly PieceOutcome[], json?: boolean): void {
  const r = writeSweepSummary(prepared, spec, parent, pieces, outcomes);
  if (json) ctx.io.out(toJson({ status: r.status, directory: r.directory, parameter: spec.parameter, values: spec.values, runs: r.rows.map((x) => ({ value: x.value, directory: x.directory, status: x.status, ...(x.reason ? { reason: x.reason } : {}), points: x.points ?? null })) }));
  else ctx.io.out(formatSweepSummary(r));
  ctx.setExit(r.status === 'finished' ? 0 : 1);
}

/** `run CASE --sweep NAME=V1,V2,...`: here (one after another or --jobs N) or on Slurm. */
export async function runSweep(files: readonly string[], spec: SweepSpec, opts: SeveralOptions, jobs: number, ctx: CommandContext): Promise<void> {
  const { io } = ctx;
  if (files.length !== 1) throw new InputError(`--sweep takes one case file (got ${files.length}); run each case's sweep on its own`);
  if (opts.slurm && opts.jobs !== undefined) throw new InputError('--jobs runs values side by side on this machine; with --slurm each value is its own task (leave --jobs out)');
  const prepared = await prepareCase(files[0]);
  const settings = clusterSettings(opts, [prepared]);
  const parent = resolve(opts.out ?? join('runs', `${prepared.case.name}-${spec.parameter}-sweep`));
  const folder = sweepFolderProblem(parent, opts.force === true);
  if (folder) throw new InputError(folder);
  const pieces = await sweepPieces(prepared, spec, parent);
  const targets: RunTarget[] = pieces.map((p) => ({ label: p.label, prepared: p.prepared, outDir: p.outDir, doc: p.doc }));
  const problems = [...pieces.map((p) => outputFolderProblem(p.outDir, opts.force === true)).filter((x): x is string => x !== undefined), ...resourceProblems(targets, settings ? 1 : jobs, !settings)];
  if (problems.length) throw new InputError(problems[0]);
  let executor: SlurmExecutor | undefined;
  if (settings) {
    executor = new SlurmExecutor({ collection: parent, kind: 'sweep', context: sweepContext(prepared, spec), settings, wait: opts.wait !== false, force: opts.force === true });
    executor.check(pieces);
  }
  mkdirSync(parent, { recursive: true });
  if (executor) {
    await executeAndReport(ctx, executor, pieces, opts, parent, (outcomes) => reportSweep(ctx, prepared, spec, parent, pieces, outcomes, opts.json));
    // a sweep not waited for still gets its summary file (it says `submitted`): --force and collect know the folder
    if (opts.wait === false) writeSweepSummary(prepared, spec, parent, pieces, pieces.map(() => ({ status: 'submitted' })));
    return;
  }
  const view: ProgressView = progressView({ tty: onTerminal(io), quiet: opts.quiet === true, write: io.err, showNames: true });
  const stop = stopOnSignals(io, () => view);
  let outcomes: CaseOutcome[];
  try {
    outcomes = await runBatch(targets, { jobs, force: opts.force === true, signal: stop.signal, view });
  } finally {
    view.close();
    stop.release();
  }
  reportSweep(ctx, prepared, spec, parent, pieces, outcomes.map((o) => ({ status: o.status, ...(o.reason !== undefined ? { reason: o.reason } : {}), ...(o.result ? { result: o.result } : {}) })), opts.json);
}
