/**
 * Grid-refinement studies: run one case on a sequence of grids, locate the same special point on
 * each (the N-th fold, branch point or Hopf point along a branch), and analyse the located
 * parameter values with the observed order of convergence, Richardson extrapolation and the grid
 * convergence index (./richardson.ts; Richardson 1911, Roache 1994, Celik et al. 2008).
 *
 * Grids: `grids` lists the intervals along the first axis; every other axis is scaled by the same
 * factor from the case's grid, on the same physical domain (a case on 32 × 16 intervals studied
 * with grids 32, 64, 128 runs 32 × 16, 64 × 32, 128 × 64). Any ratios are allowed, non-uniform
 * ones too; a grid that would need a fractional number of intervals on some axis is refused.
 *
 * The study folder:
 *   refine.csv      grid, unknowns, h, value, difference, observed-order (coarsest grid first)
 *   refine.json     the analysis (point, parameter, values, order, extrapolated, error-estimate,
 *                   asymptotic-range, warnings) and the runs
 *   refine.svg      value against h with the extrapolated value; log–log error against h
 *   grid-<N>/       the run folder of each grid (run.json, points.json, branches, solutions,
 *                   diagram.svg, plots/), to be inspected like any other run
 *
 * Grids run one after another in this process, or in `jobs` worker processes side by side
 * (./worker.ts; needs the compiled program), or through an executor that sends them elsewhere
 * (src/run/executor.ts; Slurm: src/slurm/): the same grid runs, the same analysis of their folders. No command-line code here: the `refine` command
 * (src/cli/commands/refine.ts) parses its options and prints `formatStudySummary`.
 */
import { type ChildProcess, fork } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { join, relative, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { formatValue, refinementSvg } from '../plot/index.js';
import { valueToError } from '../plot/refinement.js';
import { type PreparedCase, caseDocument, ownCodeModel, prepareCaseObject } from '../run/case.js';
import { InputError } from '../run/errors.js';
import type { RunExecutor, RunPiece } from '../run/executor.js';
import { formatValue as plainValue } from '../run/summary.js';
import { drawRunPlots } from '../run/plots.js';
import { caseFromRunFolder } from '../run/batch.js';
import { jsonFileLimit, readTextFile } from '../run/read-file.js';
import type { CodeModelChoice } from '../run/resume-code.js';
import { makeFolder, removeIfEmpty } from '../run/folders.js';
import { onLeaveAtOnce } from '../run/leave.js';
import { FolderLock, holderText, lockHolder } from '../run/lock.js';
import { keptMessage } from '../run/manifest.js';
import { type SpecialRecord, readRunRecord } from '../run/run-directory.js';
import { sideBySideUnknowns } from '../run/branch-helpers.js';
import { type PointSpec, availablePoints, findSpecial, pointSpecText, pointWords, readPointsJson } from '../run/start.js';
import { softwareVersion } from '../run/version.js';
import { csvLine, parseJsonNumber, writeFileAtomic, writeJsonAtomic } from '../run/writers.js';
import { type GridJob, runGridJob } from './grid-run.js';
import { REFINEMENT_COLUMNS, refinementJson, refinementRows } from './output.js';
import { type RefinementResult, analyseRefinement } from './richardson.js';

import { type StudyPlan, planJson, prepareStudyFolder, readStudyJson, readStudyPlan, studyFormat, studyFormatVersion, writeStartJson } from './study-folder.js';

export { studyFormat, studyFormatVersion };

/** Formal order of the finite differences of the built-in and expression models. */
export const secondOrder = 2;

export interface StudyOptions {
  /** Intervals along the first axis, one per grid (at least two; three or more for an observed order). */
  grids: readonly number[];
  /** Which special point (default: the first fold). */
  point?: PointSpec;
  /** Along which branch (default 1). */
  branch?: number;
  /** Grids run side by side in this many worker processes (default 1: one after another here, unless `cores` says otherwise). */
  jobs?: number;
  /**
   * Without `jobs`: the processor cores the study may use — up to that many grids side by side
   * when the second-largest grid has at least sideBySideUnknowns unknowns (smaller grids finish
   * before another process would have started; the largest runs alone anyway).
   */
  cores?: number;
  /** The study folder. */
  outDir: string;
  /** Replace an earlier study in a non-empty folder (only a folder holding a refinement study). */
  force?: boolean;
  /** Formal order of the discretisation (default 2 for built-in and expression models; none for code models). */
  expectedOrder?: number | null;
  /** Order assumed with only two grids (default the expected order). */
  signal?: AbortSignal;
  log?: (level: 'info' | 'warning', message: string) => void;
  /** The compiled worker script (default ./worker.js beside this module). */
  workerScript?: string;
  /**
   * Who runs the grids instead of this process and its workers (e.g. Slurm, src/slurm/); the
   * grid runs are the same. An executor that only hands them over makes the study `submitted`.
   */
  executor?: RunExecutor;
  /** Resuming a study: which code model its stored case may load (src/run/resume-code.ts; none by default). */
  code?: CodeModelChoice;
  /** The folder already holds this study's grid runs (collecting a study whose grids ran elsewhere): keep it as it is. */
  keepFolder?: boolean;
}

export interface GridRun {
  /** The number given in `grids` (intervals along the first axis). */
  grid: number;
  intervals: number[];
  /** Folder relative to the study folder. */
  directory: string;
  status: 'finished' | 'stopped' | 'failed';
  failure?: string;
  unknowns?: number;
  /** Largest grid spacing over the axes. */
  h?: number;
  seconds?: number;
  /** The located value of the special point, when found. */
  value?: number;
  located?: boolean;
}

export interface StudyResult {
  /** `submitted`: the grids were handed to a scheduler and not waited for (nothing analysed yet). */
  status: 'finished' | 'stopped' | 'failed' | 'submitted';
  directory: string;
  caseName: string;
  parameter: string;
  point: PointSpec;
  branch: number;
  /** `fold 1 on branch 1`. */
  pointText: string;
  runs: GridRun[];
  analysis?: RefinementResult;
  /** The refine.json document. */
  json: Record<string, unknown>;
  /** Warnings of the study (grids without the point, failed runs) and of the analysis. */
  warnings: string[];
  failure?: string;
  caution?: string;
  files: string[];
}

// ---------------------------------------------------------------------------------------------
// Grids

/** Intervals per axis for each grid: every axis scaled like the first (clear error otherwise). */
export function scaledGrids(caseIntervals: readonly number[], grids: readonly number[]): number[][] {
  if (grids.length < 2) throw new InputError(`refine needs at least two grids (three or more to observe the order), got ${grids.length}`);
  const seen = new Set<number>();
  return grids.map((g) => {
    if (!Number.isInteger(g) || g < 2) throw new InputError(`grid ${g} is not accepted (accepted: whole numbers of intervals of at least 2)`);
    if (seen.has(g)) throw new InputError(`grid ${g} is listed twice`);
    seen.add(g);
    return caseIntervals.map((n, a) => {
      if (a === 0) return g;
      const v = (n * g) / caseIntervals[0];
      const r = Math.round(v);
      if (Math.abs(v - r) > 1e-9 || r < 2) {
        const axis = 'xyz'[a];
        throw new InputError(
          `grid ${g} would need ${Number(v.toPrecision(6))} intervals along ${axis} (the case grid ${caseIntervals.join(' × ')} keeps its proportions on every grid); choose grids that scale every axis to whole numbers`,
        );
      }
      return r;
    });
  });
}

/** `64` or `64x32`. */
export function gridLabel(intervals: readonly number[]): string {
  return intervals.join('x');
}

// ---------------------------------------------------------------------------------------------
// Running the grids

interface GridTask {
  grid: number;
  intervals: number[];
  directory: string;
  /** A fresh run of the grid's case, the resumption of its stopped run, or nothing (it finished). */
  job: GridJob | undefined;
  /** The grid's case, when it runs afresh here. */
  prepared?: PreparedCase;
}

/** What a finished (or failed) grid run left in its folder. */
function readOutcome(task: GridTask, studyDir: string, thrown?: string, stopped = false): GridRun & { specials: SpecialRecord[] } {
  const abs = join(studyDir, task.directory);
  const base = { grid: task.grid, intervals: task.intervals, directory: task.directory };
  let run: Record<string, unknown>;
  try {
    run = JSON.parse(readTextFile(join(abs, 'run.json'), jsonFileLimit, 'a run record')) as Record<string, unknown>;
  } catch {
    if (stopped) return { ...base, status: 'stopped', failure: 'not run: the study was stopped', specials: [] };
    return { ...base, status: 'failed', failure: thrown ?? 'the run wrote no run.json', specials: [] };
  }
  const problem = (run.problem ?? {}) as { unknowns?: number; axes?: { h: number }[] };
  const status = run.status === 'finished' || run.status === 'stopped' ? run.status : 'failed';
  const failure = typeof run.failure === 'string' ? run.failure : thrown;
  const timings = (run.timings ?? {}) as Record<string, unknown>;
  let specials: SpecialRecord[] = [];
  try {
    specials = readPointsJson(abs, true);
  } catch {
    specials = [];
  }
  const hs = (problem.axes ?? []).map((a) => parseJsonNumber(a.h));
  return {
    ...base,
    status,
    ...(failure !== undefined ? { failure } : {}),
    ...(typeof problem.unknowns === 'number' ? { unknowns: problem.unknowns } : {}),
    ...(hs.length ? { h: Math.max(...hs) } : {}),
    ...(typeof timings['total-seconds'] === 'number' ? { seconds: timings['total-seconds'] } : {}),
    specials,
  };
}

async function runHere(task: GridTask, job: GridJob, options: StudyOptions): Promise<string | undefined> {
  const log = options.log ?? (() => {});
  try {
    await runGridJob(job, {
      ...(options.signal ? { signal: options.signal } : {}),
      ...(task.prepared ? { prepared: task.prepared } : {}),
      log: (level, message) => {
        if (level === 'warning') log('warning', `grid ${task.grid}: ${message}`);
      },
    });
    return undefined;
  } catch (e) {
    return e instanceof Error ? e.message : String(e);
  }
}

/** The default worker script: ./worker.js beside this module (present in the compiled program). */
export function defaultWorkerScript(): string | undefined {
  const file = fileURLToPath(new URL('./worker.js', import.meta.url));
  return existsSync(file) ? file : undefined;
}

function runInWorker(task: GridTask, job: GridJob, script: string, options: StudyOptions, children: Set<ChildProcess>): Promise<string | undefined> {
  const log = options.log ?? (() => {});
  return new Promise((done) => {
    let settled = false;
    let error: string | undefined;
    const child = fork(script, [], { stdio: ['ignore', 'ignore', 'pipe', 'ipc'], serialization: 'advanced' });
    children.add(child);
    let stderr = '';
    child.stderr?.on('data', (d: Buffer) => {
      stderr += d.toString();
      if (stderr.length > 4000) stderr = stderr.slice(-4000);
    });
    child.on('message', (m: unknown) => {
      const msg = m as { type?: string; level?: 'info' | 'warning'; message?: string };
      if (msg.type === 'log' && msg.level === 'warning') log('warning', `grid ${task.grid}: ${msg.message}`);
      if (msg.type === 'error') error = msg.message;
    });
    const finish = (why?: string): void => {
      if (settled) return;
      settled = true;
      children.delete(child);
      done(error ?? why);
    };
    child.on('error', (e) => finish(`the worker process failed: ${e.message}`));
    child.on('exit', (code, signal) => {
      if (code === 0 || (signal !== null && options.signal?.aborted)) finish(undefined);
      else finish(`the worker process ended with ${signal ?? `exit code ${code}`}${stderr.trim() ? `: ${stderr.trim().split('\n').pop()}` : ''}`);
    });
    child.send(job);
  });
}

/** Run `tasks` with at most `jobs` at a time, in order of the list. */
async function pool<T>(items: readonly T[], jobs: number, work: (item: T) => Promise<void>): Promise<void> {
  let next = 0;
  const lanes = Array.from({ length: Math.max(1, Math.min(jobs, items.length)) }, async () => {
    while (next < items.length) {
      const item = items[next++];
      await work(item);
    }
  });
  await Promise.all(lanes);
}

// ---------------------------------------------------------------------------------------------
// The study

/**
 * Run the study. Bad input (grids, folder, a case that does not fit every grid) throws
 * InputError before anything is written; numerical trouble on a grid is reported in the result.
 * refine.json exists from the start (study-folder.ts), every grid run writes checkpoints, and the
 * folder's lock is held throughout: a study stopped or killed at any moment goes on with
 * `resumeStudy`.
 */
export async function runStudy(prepared: PreparedCase, options: StudyOptions): Promise<StudyResult> {
  const studyDir = resolve(options.outDir);
  const branch = options.branch ?? 1;
  if (!Number.isInteger(branch) || branch < 1) throw new InputError(`branch ${branch} is not accepted (accepted: a branch number from 1)`);
  const jobs = options.jobs ?? 1;
  if (!Number.isInteger(jobs) || jobs < 1) throw new InputError(`jobs ${jobs} is not accepted (accepted: a whole number of at least 1)`);
  if (prepared.case.start) {
    throw new InputError(
      `${prepared.label}: start: a saved start state fits only the grid it was computed on; remove the start key for a refinement study (every grid starts from the model's initial guess)`,
    );
  }
  const expected = options.expectedOrder !== undefined ? options.expectedOrder : prepared.case.modelKind === 'code' ? null : secondOrder;
  if (expected !== null && !(Number.isFinite(expected) && expected > 0)) throw new InputError(`expected order ${expected} is not accepted (accepted: a positive number)`);
  const intervals = scaledGrids(prepared.case.grid.intervals, options.grids);

  // every grid's case is checked (and its problem built) before anything is written
  const base = caseDocument(prepared.case);
  delete (base as { output?: { directory?: string } }).output?.directory;
  const plan: StudyPlan = {
    case: base,
    caseFile: prepared.file ?? null,
    baseFolder: prepared.baseDir,
    grids: options.grids.slice(),
    point: options.point ?? null,
    branch,
    branchGiven: options.branch !== undefined,
    expectedOrder: expected,
    jobs,
    runs: intervals.map((iv, i) => ({ grid: options.grids[i], intervals: iv, directory: `grid-${gridLabel(iv)}` })),
  };
  const tasks: GridTask[] = [];
  for (const r of plan.runs) {
    // the grids' cases come from the user's case file: its code model (only that one) may load
    const job = freshJob(plan, r, studyDir, prepared.label, ownCodeModel(prepared.case).loadCode);
    const p = await prepareCaseObject(job.doc, { label: job.label, baseDir: job.baseDir, ...(job.file ? { file: job.file } : {}), ...ownCodeModel(prepared.case) });
    tasks.push({ ...r, job, prepared: p });
  }
  if (options.jobs === undefined && options.cores !== undefined && options.cores > 1) {
    const sizes = tasks.map((t) => t.prepared!.problem.size).sort((a, b) => b - a);
    if ((sizes[1] ?? 0) >= sideBySideUnknowns) plan.jobs = Math.min(options.cores, tasks.length);
  }
  return inStudyFolder(studyDir, { purpose: options.force ? 'refine --force' : 'refine', label: studyDir }, options.log, () => {
    // collecting a study whose grids ran elsewhere: the folder already holds them, as it is
    if (!options.keepFolder) {
      options.executor?.check?.(piecesOf(tasks));
      const kept = prepareStudyFolder(studyDir, options.force === true);
      if (kept.length) (options.log ?? (() => {}))('info', keptMessage(kept, 'study'));
      writeStartJson(studyDir, plan, prepared.case.name, { ...softwareVersion(), node: process.version });
    }
    return { prepared, plan, tasks };
  }, options);
}

/** The grids to run afresh, as pieces for an executor (src/run/executor.ts). */
function piecesOf(tasks: readonly GridTask[]): RunPiece[] {
  return tasks.flatMap((t) =>
    t.job?.kind === 'run' && t.prepared
      ? [{ name: t.directory, outDir: t.job.outDir, doc: t.job.doc, label: t.job.label, baseDir: t.job.baseDir, ...(t.job.file !== undefined ? { file: t.job.file } : {}), prepared: t.prepared }]
      : [],
  );
}

/**
 * Resume the study in `dirGiven` (stopped, or killed at any moment): grids that finished are
 * kept, grids whose runs were stopped or killed resume from their checkpoints (or start over
 * when they had none), grids never started run now; then the analysis is redone.
 */
export async function resumeStudy(dirGiven: string, options: Omit<StudyOptions, 'grids' | 'outDir' | 'point' | 'branch' | 'expectedOrder'>): Promise<StudyResult> {
  const studyDir = resolve(dirGiven);
  return inStudyFolder(studyDir, { purpose: 'resume', label: dirGiven, takeOverForeign: options.force === true }, options.log, async () => {
    const { plan, doc } = readStudyPlan(studyDir, dirGiven);
    if (doc.status === 'finished') throw new InputError(`${dirGiven}: the refinement study finished; there is nothing to resume`);
    const label = `${join(dirGiven, 'refine.json')} (case ${plan.caseFile ?? 'unknown'})`;
    // refine.json is data: its case loads a code model only as the user says (--case, --load-code-model)
    const prepared = await caseFromRunFolder(plan.case, plan.caseFile, plan.baseFolder, label, { dirGiven, choice: options.code ?? {} });
    const loadCode = ownCodeModel(prepared.case).loadCode;
    // a worker of a killed study may still be stopping: no grid may be written by another process
    for (const r of plan.runs) {
      const holder = lockHolder(join(studyDir, r.directory));
      if (holder) throw new InputError(`${join(dirGiven, r.directory)}: is being written by ${holderText(holder.writer, holder.liveness)}; wait for it to end, then resume the study`);
    }
    const tasks: GridTask[] = [];
    for (const r of plan.runs) {
      const dir = join(studyDir, r.directory);
      const run = readRunRecord(dir);
      if (run?.status === 'finished') tasks.push({ ...r, job: undefined });
      else if (run) tasks.push({ ...r, job: { kind: 'resume', outDir: dir, ...(loadCode !== undefined ? { loadCode } : {}) } });
      else {
        // a grid never started: its case comes from refine.json, read as any case stored in a folder
        const job = freshJob(plan, r, studyDir, label, loadCode);
        tasks.push({ ...r, job, prepared: await caseFromRunFolder(job.doc, plan.caseFile, plan.baseFolder, job.label, { dirGiven, choice: loadCode !== undefined ? { recorded: loadCode } : {} }) });
      }
    }
    return { prepared, plan, tasks };
  }, options);
}

/** A grid's fresh run: the study's case on the grid's intervals, into the grid's folder. */
function freshJob(plan: StudyPlan, r: StudyPlan['runs'][number], studyDir: string, label: string, loadCode: string | undefined): Extract<GridJob, { kind: 'run' }> {
  const doc = structuredClone(plan.case) as Record<string, unknown> & { grid: { intervals: number[]; length: number[] } };
  doc.grid = { intervals: r.intervals, length: (plan.case.grid as { length: number[] }).length.slice() };
  return { kind: 'run', doc, label: `${label} (grid ${gridLabel(r.intervals)})`, baseDir: plan.baseFolder, ...(plan.caseFile ? { file: plan.caseFile } : {}), outDir: join(studyDir, r.directory), ...(loadCode !== undefined ? { loadCode } : {}) };
}

/**
 * The study's folder, checked and locked; `open` prepares it (InputError: refused, nothing run);
 * then the grids run and the analysis is written. A second Ctrl-C leaves refine.json `stopped`.
 */
async function inStudyFolder(
  studyDir: string,
  lockOptions: { purpose: string; label: string; takeOverForeign?: boolean },
  logGiven: StudyOptions['log'],
  open: () => { prepared: PreparedCase; plan: StudyPlan; tasks: GridTask[] } | Promise<{ prepared: PreparedCase; plan: StudyPlan; tasks: GridTask[] }>,
  options: Pick<StudyOptions, 'signal' | 'workerScript' | 'jobs' | 'executor'>,
): Promise<StudyResult> {
  const log = logGiven ?? (() => {});
  const made = makeFolder(studyDir, 'study folder');
  let lock: FolderLock;
  try {
    lock = FolderLock.acquire(studyDir, lockOptions);
  } catch (e) {
    if (made) removeIfEmpty(studyDir, made);
    throw e;
  }
  const unregister = onLeaveAtOnce((reason) => {
    const doc = readStudyJson(studyDir);
    if (doc?.status === 'running') writeJsonAtomic(join(studyDir, 'refine.json'), { ...doc, status: 'stopped', note: reason });
    lock.release();
  });
  try {
    let opened;
    try {
      opened = await open();
    } catch (e) {
      if (made) {
        lock.release();
        removeIfEmpty(studyDir, made);
      }
      throw e;
    }
    const { prepared, plan, tasks } = opened;
    const point = plan.point ? { point: plan.point } : {};
    if (options.executor) {
      // the grids run elsewhere (a scheduler): the same runs, the same analysis of their folders
      const outcomes = await options.executor.execute(piecesOf(tasks), { ...(options.signal ? { signal: options.signal } : {}), log });
      if (outcomes.some((o) => o.status === 'submitted')) return submittedStudy(prepared, { studyDir, plan, parameter: prepared.settings.parameter, point: plan.point ?? { kind: 'fold', index: 1 }, tasks });
      const reasons = new Map(tasks.map((t, i) => [t, outcomes[i]?.status === 'finished' ? undefined : outcomes[i]?.reason]));
      const done = tasks.map((t) => readOutcome(t, studyDir, reasons.get(t), false));
      return finishStudy(prepared, { studyDir, plan, parameter: prepared.settings.parameter, ...point, outcomes: done, stopped: false });
    }
    const studyOptions: StudyOptions = { grids: plan.grids, outDir: studyDir, ...options, jobs: plan.jobs, log };
    const thrown = await runGrids(tasks, studyDir, studyOptions);
    const outcomes = tasks.map((t) => readOutcome(t, studyDir, thrown.get(t), options.signal?.aborted));
    return finishStudy(prepared, {
      studyDir,
      plan,
      parameter: prepared.settings.parameter,
      ...point,
      outcomes,
      stopped: options.signal?.aborted ?? false,
    });
  } finally {
    unregister();
    lock.release();
  }
}

/** Run the grids that need it (at most `jobs` at a time); what each run threw, by task. */
async function runGrids(tasks: readonly GridTask[], studyDir: string, options: StudyOptions): Promise<Map<GridTask, string | undefined>> {
  const log = options.log ?? (() => {});
  const jobs = options.jobs ?? 1;
  const script = jobs > 1 ? (options.workerScript ?? defaultWorkerScript()) : undefined;
  if (jobs > 1 && !script) log('warning', 'parallel jobs need the compiled program (npm run build); the grids run one after another in this process');
  const children = new Set<ChildProcess>();
  const onAbort = (): void => {
    for (const c of children) c.kill('SIGINT');
  };
  options.signal?.addEventListener('abort', onAbort);
  const thrown = new Map<GridTask, string | undefined>();
  try {
    // side by side, the largest grids first, so that the small ones fill the other lanes
    // meanwhile (each grid is its own run folder: the order changes no file)
    const size = (t: GridTask): number => t.intervals.reduce((a, b) => a * b, 1);
    const todo = tasks.filter((t) => t.job);
    if (script && jobs > 1) todo.sort((a, b) => size(b) - size(a));
    await pool(
      todo,
      script ? jobs : 1,
      async (task) => {
        if (options.signal?.aborted) {
          thrown.set(task, 'not run: the study was stopped');
          return;
        }
        const job = task.job!;
        log('info', `grid ${gridLabel(task.intervals)}: ${job.kind === 'resume' ? 'resuming' : 'running'}${task.prepared ? ` (${task.prepared.problem.size} unknowns)` : ''}`);
        const err = script ? await runInWorker(task, job, script, options, children) : await runHere(task, job, options);
        thrown.set(task, err);
        const o = readOutcome(task, studyDir, err, options.signal?.aborted);
        log(o.status === 'finished' ? 'info' : 'warning', `grid ${gridLabel(task.intervals)}: ${o.status}${o.failure ? ` (${o.failure})` : ''}${o.seconds !== undefined ? ` in ${o.seconds.toFixed(1)} s` : ''}`);
      },
    );
  } finally {
    options.signal?.removeEventListener('abort', onAbort);
  }
  return thrown;
}

/** A study whose grids were handed to a scheduler: refine.json says so until they are collected. */
function submittedStudy(
  prepared: PreparedCase,
  s: { studyDir: string; plan: StudyPlan; parameter: string; point: PointSpec; tasks: readonly GridTask[] },
): StudyResult {
  const branch = s.plan.branch;
  const pointText = `${pointWords(s.point)} on branch ${branch}`;
  const json: Record<string, unknown> = {
    format: studyFormat,
    'format-version': studyFormatVersion,
    software: { ...softwareVersion(), node: process.version },
    status: 'submitted',
    'case-file': prepared.file ?? null,
    case: prepared.case.name,
    model: prepared.problem.describe().summary,
    point: pointText,
    'point-kind': s.point.kind,
    'point-number': s.point.index,
    branch,
    parameter: s.parameter,
    'expected-order': s.plan.expectedOrder,
    plan: planJson(s.plan),
    values: [],
    runs: s.tasks.map((t) => ({ grid: t.grid, intervals: t.intervals, directory: t.directory, status: 'submitted' })),
    ...(prepared.caution ? { caution: prepared.caution } : {}),
  };
  writeJsonAtomic(join(s.studyDir, 'refine.json'), json);
  return {
    status: 'submitted',
    directory: s.studyDir,
    caseName: prepared.case.name,
    parameter: s.parameter,
    point: s.point,
    branch,
    pointText,
    runs: [],
    json,
    warnings: [],
    ...(prepared.caution ? { caution: prepared.caution } : {}),
    files: ['refine.json'],
  };
}

/**
 * The curve that holds the point (`cusp`, `zero-hopf:2`…) in the first grid's points that have it
 * at all: the lowest-numbered curve with at least N points of that kind (curves are numbered alike
 * on every grid). Undefined when no grid has it.
 */
export function curveHoldingPoint(specialsPerGrid: readonly (readonly SpecialRecord[])[], point: PointSpec): number | undefined {
  for (const specials of specialsPerGrid) {
    const curves = [...new Set(specials.filter((r) => r.kind === point.kind).map((r) => r.branch))].sort((a, b) => a - b);
    const holding = curves.find((c) => findSpecial(specials, point, c) !== undefined);
    if (holding !== undefined) return holding;
  }
  return undefined;
}

/** Pick the point, analyse, write refine.csv / refine.json / refine.svg. */
function finishStudy(
  prepared: PreparedCase,
  s: {
    studyDir: string;
    plan: StudyPlan;
    parameter: string;
    point?: PointSpec;
    outcomes: (GridRun & { specials: SpecialRecord[] })[];
    stopped: boolean;
  },
): StudyResult {
  const warnings: string[] = [];
  const { parameter, outcomes } = s;
  let branch = s.plan.branch;
  const expected = s.plan.expectedOrder;
  // curve runs without --branch (the plan says so, for a resumed study too): the curve on which
  // the point first appears (curves are numbered alike on every grid), rather than always curve 1
  if (!s.plan.branchGiven && prepared.curve && s.point) branch = curveHoldingPoint(outcomes.map((o) => o.specials), s.point) ?? branch;
  // the default point: the first fold; when no grid has one, say what there is
  let spec = s.point;
  let failure: string | undefined;
  if (!spec) {
    spec = { kind: 'fold', index: 1 };
    if (!outcomes.some((o) => findSpecial(o.specials, spec!, branch))) {
      const withPoints = outcomes.find((o) => o.specials.length > 0);
      failure = `no fold on branch ${branch} on any grid; choose the point with --point (grid ${withPoints ? gridLabel(withPoints.intervals) : gridLabel(outcomes[0].intervals)} has: ${withPoints ? availablePoints(withPoints.specials) : 'no special points'})`;
    }
  }
  const pointText = `${pointWords(spec)} on branch ${branch}`;
  const runs: GridRun[] = outcomes.map((o) => {
    const { specials, ...run } = o;
    const rec = findSpecial(specials, spec!, branch);
    if (rec && Number.isFinite(rec.value)) {
      run.value = rec.value;
      run.located = rec.located !== false;
      if (rec.located === false) warnings.push(`grid ${o.grid}: ${pointText} was not fully located; its value is the best estimate`);
      if (o.status !== 'finished') warnings.push(`grid ${o.grid}: the run ${o.status === 'stopped' ? 'was stopped' : `failed (${o.failure ?? 'no reason given'})`} after locating ${pointText}; its value is used`);
    } else if (!failure) {
      const why = o.status !== 'finished' ? `the run ${o.status === 'stopped' ? 'was stopped' : `failed (${o.failure ?? 'no reason given'})`}` : `it has ${availablePoints(specials)}`;
      warnings.push(`grid ${o.grid}: no ${pointText} (${why})`);
    }
    return run;
  });

  const found = runs.filter((r) => r.value !== undefined && r.h !== undefined);
  let analysis: RefinementResult | undefined;
  if (found.length >= 1 && !failure) {
    try {
      analysis = analyseRefinement(
        found.map((r) => ({ h: r.h!, value: r.value!, intervals: r.intervals, ...(r.unknowns !== undefined ? { unknowns: r.unknowns } : {}) })),
        // curve points are located to about 1e-10 (their values may sit at zero: a cusp at the origin)
        { ...(expected !== null ? { expectedOrder: expected, assumedOrder: expected } : {}), ...(prepared.curve ? { locationTolerance: 1e-10 } : {}) },
      );
    } catch (e) {
      failure = `the analysis failed: ${(e as Error).message}`;
    }
  }
  if (!failure && found.length < runs.length) {
    failure = `${runs.length - found.length} of ${runs.length} grids have no ${pointText}`;
  }
  const status: StudyResult['status'] = s.stopped ? 'stopped' : failure ? 'failed' : 'finished';

  // refine.csv: the grids that have the point, coarsest first
  const files: string[] = [];
  const byH = new Map(found.map((r) => [r.h!, r]));
  const rows = analysis ? refinementRows(analysis) : [];
  let csv = csvLine([...REFINEMENT_COLUMNS]);
  for (const row of rows) {
    const r = byH.get(row.h);
    csv += csvLine([r?.grid ?? row.grid, row.unknowns, row.h, row.value, row.difference, row['observed-order']]);
  }
  writeFileAtomic(join(s.studyDir, 'refine.csv'), csv);
  files.push('refine.csv');

  const analysisJson = analysis ? refinementJson(analysis, { point: pointText, parameter }) : undefined;
  const allWarnings = [...warnings, ...(analysis?.warnings.map((w) => w.message) ?? [])];
  const json: Record<string, unknown> = {
    format: studyFormat,
    'format-version': studyFormatVersion,
    software: { ...softwareVersion(), node: process.version },
    status,
    ...(failure ? { failure } : {}),
    'case-file': prepared.file ?? null,
    case: prepared.case.name,
    model: prepared.problem.describe().summary,
    point: pointText,
    'point-kind': spec.kind,
    'point-number': spec.index,
    branch,
    parameter,
    'expected-order': expected,
    plan: planJson(s.plan),
    values: analysisJson?.values.map((v) => ({ ...v, grid: byH.get(v.h)?.grid ?? v.grid })) ?? [],
    order: analysisJson?.order ?? null,
    'order-source': analysisJson?.['order-source'] ?? 'none',
    extrapolated: analysisJson?.extrapolated ?? null,
    'error-estimate': analysisJson?.['error-estimate'] ?? null,
    'error-estimate-source': analysisJson?.['error-estimate-source'] ?? null,
    'finest-grid-error-bound': analysisJson?.['finest-grid-error-bound'] ?? null,
    'safety-factor': analysisJson?.['safety-factor'] ?? null,
    'grid-convergence-index': analysisJson?.['grid-convergence-index'] ?? null,
    'extrapolation-spread': analysisJson?.['extrapolation-spread'] ?? null,
    'asymptotic-range': analysisJson?.['asymptotic-range'] ?? 'unverified',
    warnings: allWarnings,
    runs: runs.map((r) => ({
      grid: r.grid,
      intervals: r.intervals,
      directory: r.directory,
      status: r.status,
      ...(r.failure ? { failure: r.failure } : {}),
      ...(r.unknowns !== undefined ? { unknowns: r.unknowns } : {}),
      ...(r.h !== undefined ? { h: r.h } : {}),
      ...(r.value !== undefined ? { value: r.value, located: r.located } : {}),
      ...(r.seconds !== undefined ? { seconds: r.seconds } : {}),
    })),
    ...(prepared.caution ? { caution: prepared.caution } : {}),
  };
  writeJsonAtomic(join(s.studyDir, 'refine.json'), json);
  files.push('refine.json');
  try {
    writeFileAtomic(join(s.studyDir, 'refine.svg'), studySvg(json));
    files.push('refine.svg');
  } catch (e) {
    allWarnings.push(`refine.svg not drawn: ${(e as Error).message}`);
  }
  return {
    status,
    directory: s.studyDir,
    caseName: prepared.case.name,
    parameter,
    point: spec,
    branch,
    pointText,
    runs,
    ...(analysis ? { analysis } : {}),
    json,
    warnings: allWarnings,
    ...(failure ? { failure } : {}),
    ...(prepared.caution ? { caution: prepared.caution } : {}),
    files,
  };
}

// ---------------------------------------------------------------------------------------------
// The picture

function jsonNumber(v: unknown): number | null {
  if (v === null || v === undefined) return null;
  try {
    const x = parseJsonNumber(v);
    return Number.isFinite(x) ? x : null;
  } catch {
    return null;
  }
}

/** refine.svg from a refine.json document. */
export function studySvg(json: Record<string, unknown>): string {
  const values = (Array.isArray(json.values) ? json.values : []) as { grid: number; h: unknown; value: unknown }[];
  const points = values.map((v) => ({ h: jsonNumber(v.h) ?? NaN, value: jsonNumber(v.value) ?? NaN })).filter((p) => Number.isFinite(p.h) && Number.isFinite(p.value));
  if (points.length === 0) throw new Error('no grid has a value to show');
  const parameter = String(json.parameter ?? 'value');
  const point = String(json.point ?? 'the point');
  const order = jsonNumber(json.order);
  const extrapolated = jsonNumber(json.extrapolated);
  const error = jsonNumber(json['error-estimate']);
  const expected = jsonNumber(json['expected-order']);
  const grids = values.map((v) => v.grid).join(', ');
  const parts = [`grids ${grids}`];
  if (order !== null) parts.push(`${json['order-source'] === 'assumed' ? 'assumed' : 'observed'} order ${formatValue(order, 3)}`);
  if (extrapolated !== null) parts.push(`extrapolated ${parameter} = ${valueToError(extrapolated, error)}${error !== null ? ` ± ${formatValue(error, 2)}` : ''}`);
  const range = json['asymptotic-range'];
  if (range === 'not-reached') parts.push('NOT in the asymptotic range (see refine.json warnings)');
  return refinementSvg({
    title: `${String(json.case ?? 'case')}: grid refinement of ${parameter} at ${point}`,
    subtitle: parts.join('; '),
    valueName: `${parameter} at ${point.replace(/ on branch \d+$/, '')}`,
    points,
    extrapolated,
    errorEstimate: error,
    order,
    ...(expected !== null ? { expectedOrder: expected } : {}),
    ...(typeof json.caution === 'string' ? { caution: json.caution } : {}),
  });
}

/** Redraw a study's pictures: refine.svg and every grid's run pictures (the `plot` command). */
export function drawStudyPlots(dir: string, options: { monitor?: string; maxSolutionPlots?: number } = {}): { files: string[]; warnings: string[] } {
  let json: Record<string, unknown>;
  try {
    json = JSON.parse(readTextFile(join(dir, 'refine.json'), jsonFileLimit, 'a study record')) as Record<string, unknown>;
  } catch (e) {
    throw new InputError(`cannot draw: ${join(dir, 'refine.json')} cannot be read (${(e as Error).message})`);
  }
  if (json.format !== studyFormat) throw new InputError(`cannot draw: ${join(dir, 'refine.json')} is not a branchline refinement study`);
  const files: string[] = [];
  const warnings: string[] = [];
  try {
    writeFileAtomic(join(dir, 'refine.svg'), studySvg(json));
    files.push('refine.svg');
  } catch (e) {
    warnings.push(`refine.svg not drawn: ${(e as Error).message}`);
  }
  const runs = (Array.isArray(json.runs) ? json.runs : []) as { directory?: unknown }[];
  for (const r of runs) {
    if (typeof r.directory !== 'string' || !existsSync(join(dir, r.directory, 'run.json'))) continue;
    try {
      const d = drawRunPlots(join(dir, r.directory), options);
      files.push(...d.files.map((f) => `${r.directory}/${f}`));
      warnings.push(...d.warnings.map((w) => `${r.directory}: ${w}`));
    } catch (e) {
      warnings.push(`${r.directory}: ${(e as Error).message}`);
    }
  }
  return { files, warnings };
}

// ---------------------------------------------------------------------------------------------
// The summary printed by the `refine` command

function fmt(x: number | null | undefined, digits: number): string {
  if (x === null || x === undefined || !Number.isFinite(x)) return '';
  return plainValue(x, digits);
}

/** A short table of the grids, the extrapolation and the warnings, in words (ends with a newline). */
export function formatStudySummary(r: StudyResult, cwd = process.cwd()): string {
  const out: string[] = [];
  out.push(`Refinement of ${r.parameter} at ${r.pointText} (case ${r.caseName}), ${r.runs.length} grids:`);
  const a = r.analysis;
  const header = ['grid', 'unknowns', 'h', r.parameter, 'difference', 'observed order'];
  const table: string[][] = [header];
  for (const run of r.runs) {
    const g = a?.grids.find((x) => x.h === run.h && run.value !== undefined);
    table.push([
      gridLabel(run.intervals),
      run.unknowns !== undefined ? String(run.unknowns) : '',
      fmt(run.h, 6),
      run.value !== undefined ? plainValue(run.value, 12) : run.status === 'finished' ? 'not found' : run.status,
      fmt(g?.difference, 4),
      fmt(g?.observedOrder, 4),
    ]);
  }
  const widths = header.map((_, c) => Math.max(...table.map((row) => row[c].length)));
  for (const row of table) out.push('  ' + row.map((cell, c) => (c === 0 ? cell.padEnd(widths[c]) : cell.padStart(widths[c]))).join('   ').trimEnd());
  if (a && a.extrapolated !== null) {
    const how =
      a.orderSource === 'observed'
        ? `Richardson extrapolation with the observed order ${plainValue(a.order!, 4)}`
        : a.orderSource === 'assumed'
          ? `Richardson extrapolation with the assumed order ${plainValue(a.order!, 4)}`
          : 'the finest values agree to round-off';
    out.push(`Extrapolated: ${r.parameter} = ${plainValue(a.extrapolated, 12)} (${how}).`);
    out.push(...errorEstimateLines(a, r.parameter));
  } else if (a) {
    out.push('No extrapolation: see the warnings.');
  }
  if (a) {
    if (a.asymptoticRange === 'consistent') out.push('The grids are in the asymptotic range (the observed order agrees with the expected order or between grid triples).');
    else if (a.asymptoticRange === 'not-reached') out.push('WARNING: the grids are NOT in the asymptotic range yet; do not trust the extrapolation (refine further).');
  }
  for (const w of r.warnings) out.push(`Warning: ${w}`);
  if (r.status === 'failed') out.push(`Study incomplete: ${r.failure ?? 'see the warnings'}.`);
  if (r.status === 'stopped') out.push('Study stopped on request; the files hold what was computed.');
  const where = relative(cwd, r.directory) || '.';
  const shown = where.startsWith('..') ? r.directory : where;
  const folders = r.runs.filter((x) => existsSync(join(r.directory, x.directory))).map((x) => `${x.directory}/`);
  out.push(`Files in ${shown}: ${[...r.files, ...folders].join(', ')}${folders.length ? ' (each grid-* folder is a run folder)' : ''}`);
  if (r.caution) out.push(`Caution: ${r.caution}`);
  return out.join('\n') + '\n';
}

/**
 * The two error figures, each labelled with what it applies to: the estimate of the extrapolated
 * value (the spread of successive extrapolations; with three grids the finest grid's bound stands
 * in for it) and the bound on the finest grid's own value (its grid convergence index).
 */
function errorEstimateLines(a: RefinementResult, parameter: string): string[] {
  const lines: string[] = [];
  if (a.errorEstimateSource === 'extrapolation-spread' || a.errorEstimateSource === 'round-off') {
    const source = a.errorEstimateSource === 'round-off' ? 'the finest values agree to round-off' : 'the spread of the two finest successive extrapolations';
    lines.push(`Error estimate of the extrapolated value: ± ${plainValue(a.errorEstimate!, 2)} (${source}).`);
  }
  if (a.gciAbsolute !== null) {
    const finest = a.grids[a.grids.length - 1];
    lines.push(
      `Error bound of the finest grid's value (${parameter} = ${plainValue(finest.value, 12)}): ± ${plainValue(a.gciAbsolute, 2)} ` +
        `(grid convergence index, safety factor ${a.safetyFactor}, Roache 1994).`,
    );
    lines.push(
      lines.length === 2
        ? "The first figure is the uncertainty of the extrapolated value, the second that of the finest grid's value; the extrapolated value is normally far closer to the limit."
        : "Without a fourth grid this bound is also the only (conservative) error estimate of the extrapolated value; a fourth grid gives a sharper one.",
    );
  }
  return lines;
}

export { pointSpecText };
