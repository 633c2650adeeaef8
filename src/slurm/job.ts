/**
 * A Slurm job of branchline: independent runs (the cases of a batch, the values of a sweep, the
 * grids of a refinement study) sent to Slurm as one job array, watched while they go, and judged
 * when they end. This is the cluster executor of the run and refine layers: the runs themselves
 * are the same as on this machine, one case document and one run folder each.
 *
 * The collection folder (the batch's --out folder, the sweep folder or the study folder; on the
 * shared file system) holds the run folders and `slurm/`, the job folder:
 *
 *   slurm/job.json           what was asked: the tasks (case document and run folder each), the
 *                            scheduler settings, every submission (job id, tasks, script), the
 *                            final state the scheduler gave each task, and what to merge at the end
 *   slurm/job-<n>.sh         the job script of the n-th submission, exactly as submitted
 *   slurm/logs/<job>_<task>.txt   each task's output (progress lines, warnings, errors)
 *   slurm/results/<task>.bin the task's run result (written by the task when its run ends)
 *   slurm/progress/<task>.json    the task's latest progress (points, parameter, step)
 *
 * Final task states: `scontrol show job` while the controller remembers the job (MinJobAge),
 * `sacct` when accounting is on; the states are recorded in job.json as soon as they are seen,
 * since the controller forgets. A task's outcome combines its run folder (run.json's status, the
 * task's result) with the scheduler's state and reason: finished; stopped before the time limit
 * (checkpoint written); cancelled; timed out; out of memory; failed (with the run's reason or the
 * end of the task's log). Every task not finished, except runs that failed numerically (they
 * would fail again the same way), can be resubmitted: its run resumes from its checkpoint.
 */
import { deserialize, serialize } from 'node:v8';
import { existsSync, mkdirSync, readFileSync, readdirSync, rmSync, statSync } from 'node:fs';
import { dirname, join, relative, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { type PreparedCase, codeModelPath, prepareCaseObject } from '../run/case.js';
import { InputError } from '../run/errors.js';
import type { ExecuteOptions, PieceOutcome, RunExecutor, RunPiece } from '../run/executor.js';
import { runNeeds } from '../run/batch.js';
import { RunDirectory } from '../run/run-directory.js';
import type { ProgressInfo, RunResult } from '../run/run-case.js';
import { writeFileAtomic, writeJsonAtomic } from '../run/writers.js';
import { FileReadError, jsonFileLimit, readTextFile } from '../run/read-file.js';
import { type TaskState, accountedTasks, checkJob, queued, shownTasks, submit } from './commands.js';
import { type SlurmSettings, jobScript, stopMargin, taskRanges } from './script.js';

export const jobFormat = 'branchline slurm job';
export const jobFormatVersion = 1;
/** The job folder inside the collection folder. */
export const jobFolderName = 'slurm';

export type JobKind = 'runs' | 'sweep' | 'refine';

export interface JobTask {
  index: number;
  name: string;
  /** The run folder, relative to the collection folder. */
  directory: string;
  doc: Record<string, unknown>;
  label: string;
  baseDir: string;
  file?: string;
  /**
   * The code model the submitting command's case named (absolute path): that command's user
   * named it, so the task may load it, and no other (src/run/resume-code.ts). Absent for other models.
   */
  codeModel?: string;
  /** Our estimate of what the task needs (MiB). */
  memoryMiB: number;
  parameter: string;
  maxPoints: number;
}

export interface Submission {
  job: string;
  tasks: number[];
  submitted: string;
  /** The job script, relative to the job folder. */
  script: string;
  memoryMiB: number;
  settings: SlurmSettings;
}

export interface JobRecord {
  format: string;
  'format-version': number;
  kind: JobKind;
  created: string;
  tasks: JobTask[];
  submissions: Submission[];
  /** Final scheduler states, by `<job>_<task>`, as first seen. */
  states: Record<string, TaskState>;
  /** What the command that made the job needs to merge the results (refine options, the sweep). */
  context: Record<string, unknown>;
}

/** What a task writes when its run ends (results/<task>.bin). */
export interface TaskResult {
  job: string;
  task: number;
  host: string;
  /** Why the run was asked to stop, when it was: `time-limit` (Slurm's warning signal) or `terminated`. */
  stop?: 'time-limit' | 'terminated';
  /** The task left its run folder alone: another writer held the folder's lock (`error` names it). */
  held?: boolean;
  result?: RunResult;
  /** An error before or outside the run (a case that no longer builds, a folder that cannot be used). */
  error?: string;
}

/** One task's outcome, in the words the user reads. */
export interface TaskOutcome extends PieceOutcome {
  task: JobTask;
  /** The scheduler's final state of the task's latest submission, when known. */
  scheduler?: TaskState;
  /** Worth resubmitting (not finished, and not a run that failed numerically). */
  resubmit: boolean;
}

// ---------------------------------------------------------------------------------------------
// Memory

const MiB = 1024 * 1024;

/**
 * Memory per task (MiB) from our estimate of a run's needs (src/run/batch.ts runNeeds: sparse LU
 * factors, eigen solver, vectors): twice the estimate plus 160 MiB for Node.js and the solver's
 * WebAssembly memory, rounded up to 64 MiB. Measured peaks on this project's machine: 2D Bratu
 * 32² 110 MiB (asks 192), 128² with 3 eigenvalues 188 MiB (asks 256), 400² with 6 eigenvalues
 * 957 MiB (asks 1280).
 */
export function taskMemoryMiB(prepared: PreparedCase): number {
  const bytes = 160 * MiB + 2 * runNeeds(prepared).memory;
  return Math.ceil(bytes / (64 * MiB)) * 64;
}

// ---------------------------------------------------------------------------------------------
// The job folder

export function jobFolder(collection: string): string {
  return join(collection, jobFolderName);
}

export function readJob(collection: string): JobRecord {
  const file = join(jobFolder(collection), 'job.json');
  let doc: JobRecord;
  try {
    // a regular file of sane size only (a FIFO or /dev/zero in its place is refused, not read)
    doc = JSON.parse(readTextFile(file, jsonFileLimit, 'a Slurm job record')) as JobRecord;
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    const why = e instanceof FileReadError ? (code === 'ENOENT' ? 'is missing' : e.reason) : 'cannot be read';
    throw new InputError(`${collection}: holds no Slurm job of branchline (${file} ${why})`);
  }
  if (doc?.format !== jobFormat) throw new InputError(`${file} is not a branchline Slurm job record`);
  return doc;
}

export function hasJob(collection: string): boolean {
  return existsSync(join(jobFolder(collection), 'job.json'));
}

function writeJob(collection: string, job: JobRecord): void {
  writeJsonAtomic(join(jobFolder(collection), 'job.json'), job);
}

export function resultFile(collection: string, task: number): string {
  return join(jobFolder(collection), 'results', `${task}.bin`);
}

export function progressFile(collection: string, task: number): string {
  return join(jobFolder(collection), 'progress', `${task}.json`);
}

export function writeTaskResult(collection: string, r: TaskResult): void {
  writeFileAtomic(resultFile(collection, r.task), serialize(r));
}

export function readTaskResult(collection: string, task: number): TaskResult | undefined {
  try {
    return deserialize(readFileSync(resultFile(collection, task))) as TaskResult;
  } catch {
    return undefined;
  }
}

/** The latest submission of each task. */
function latestSubmission(job: JobRecord, task: number): Submission | undefined {
  for (let i = job.submissions.length - 1; i >= 0; i--) if (job.submissions[i].tasks.includes(task)) return job.submissions[i];
  return undefined;
}

/** The scheduler's jobs of this record whose latest tasks may still be queued. */
function liveTasks(job: JobRecord): { job: string; task: number }[] {
  const out: { job: string; task: number }[] = [];
  for (const t of job.tasks) {
    const s = latestSubmission(job, t.index);
    if (s && job.states[`${s.job}_${t.index}`] === undefined) out.push({ job: s.job, task: t.index });
  }
  return out;
}

/**
 * Refuse a collection folder whose job folder holds a job with tasks still queued or running,
 * or (without `replace`) any earlier job; nothing is changed here.
 */
export function checkEarlierJob(collection: string, replace: boolean): void {
  if (!hasJob(collection)) {
    if (existsSync(jobFolder(collection)) && readdirSync(jobFolder(collection)).length > 0) {
      throw new InputError(`${jobFolder(collection)} exists and holds no Slurm job of branchline; choose another folder with --out`);
    }
    return;
  }
  const job = readJob(collection);
  const ids = [...new Set(liveTasks(job).map((t) => t.job))];
  const waiting = ids.length ? queued(ids) : [];
  if (waiting.length) {
    throw new InputError(
      `${collection} holds a Slurm job that is still queued or running (job ${[...new Set(waiting.map((w) => w.job))].join(', ')}: ${waiting.length} task${waiting.length === 1 ? '' : 's'}); wait for it (branchline collect ${collection}) or cancel it (scancel ${waiting[0].job})`,
    );
  }
  if (!replace) throw new InputError(`${collection} holds an earlier Slurm job (${jobFolder(collection)}); choose another folder with --out, or pass --force to replace it`);
}

/** Remove an earlier run from its folder (only our own entries; see RunDirectory.create), leaving the folder as a new run finds it. */
function clearEarlierRun(dir: string): void {
  RunDirectory.create(dir, { force: true });
  const branches = join(dir, 'branches');
  if (existsSync(branches) && readdirSync(branches).length === 0) rmSync(branches, { recursive: true, force: true });
}

/** The branchline entry script of this installation (bin/branchline.js). */
export function entryScript(): string {
  let dir = dirname(fileURLToPath(import.meta.url));
  for (let i = 0; i < 6; i++) {
    const candidate = join(dir, 'bin', 'branchline.js');
    if (existsSync(candidate) && existsSync(join(dir, 'package.json'))) return candidate;
    dir = dirname(dir);
  }
  throw new Error('the branchline entry script (bin/branchline.js) was not found beside the program');
}

// ---------------------------------------------------------------------------------------------
// Submitting

export interface SlurmExecutorOptions {
  /** The collection folder (absolute, on the shared file system). */
  collection: string;
  kind: JobKind;
  context?: Record<string, unknown>;
  settings: SlurmSettings;
  /** Wait for the tasks to end (default); otherwise return once submitted. */
  wait: boolean;
  /** Seconds between looks at the queue (default 5, or BRANCHLINE_SLURM_POLL_SECONDS). */
  pollSeconds?: number;
  /** Replace an earlier, finished job in the collection folder. */
  force?: boolean;
}

function taskOf(piece: RunPiece, index: number, collection: string): JobTask {
  return {
    index,
    name: piece.name,
    directory: relative(collection, piece.outDir) || '.',
    doc: piece.doc,
    label: piece.label,
    baseDir: piece.baseDir,
    ...(piece.file !== undefined ? { file: piece.file } : {}),
    ...(piece.prepared.case.modelKind === 'code' ? { codeModel: piece.prepared.case.model } : {}),
    memoryMiB: taskMemoryMiB(piece.prepared),
    parameter: piece.prepared.settings.parameter,
    maxPoints: piece.prepared.settings.maxPoints,
  };
}

function scriptFor(collection: string, name: string, tasks: readonly JobTask[], settings: SlurmSettings): { text: string; memoryMiB: number } {
  const memory = settings.memoryMiB ?? Math.max(...tasks.map((t) => t.memoryMiB));
  const text = jobScript({ name, tasks: tasks.map((t) => t.index), memoryMiB: memory, settings, folder: jobFolder(collection), node: process.execPath, entry: entryScript() });
  return { text, memoryMiB: memory };
}

function nearestFolder(path: string): string {
  let p = path;
  while (!existsSync(p) && dirname(p) !== p) p = dirname(p);
  return p;
}

function jobName(kind: JobKind, collection: string): string {
  return `branchline-${kind === 'refine' ? 'refine' : kind === 'sweep' ? 'sweep' : 'run'}-${collection.split('/').pop() ?? ''}`;
}

/** Write the script of a submission, submit it, record it. */
function submitTasks(collection: string, job: JobRecord, tasks: readonly JobTask[], settings: SlurmSettings): Submission {
  const folder = jobFolder(collection);
  for (const sub of ['logs', 'results', 'progress']) mkdirSync(join(folder, sub), { recursive: true });
  const { text, memoryMiB } = scriptFor(collection, jobName(job.kind, collection), tasks, settings);
  const script = `job-${job.submissions.length + 1}.sh`;
  writeFileAtomic(join(folder, script), text);
  // the progress of earlier attempts of these tasks is superseded (their results are told apart by job id)
  for (const t of tasks) rmSync(progressFile(collection, t.index), { force: true });
  const id = submit(join(folder, script), folder);
  const s: Submission = { job: id, tasks: tasks.map((t) => t.index), submitted: new Date().toISOString(), script, memoryMiB, settings };
  job.submissions.push(s);
  writeJob(collection, job);
  return s;
}

export function submissionText(s: Submission, count = s.tasks.length): string {
  const parts = [`memory ${s.memoryMiB} MiB per task`];
  if (s.settings.timeLimit !== undefined) parts.push(`time limit ${s.settings.timeLimit}, stop signal ${stopMargin(s.settings)} s before it`);
  if (s.settings.partition !== undefined) parts.push(`partition ${s.settings.partition}`);
  if (s.settings.account !== undefined) parts.push(`account ${s.settings.account}`);
  return `submitted ${count} task${count === 1 ? '' : 's'} to Slurm as job array ${s.job} (tasks ${taskRanges(s.tasks)}; ${parts.join(', ')})`;
}

/** The cluster executor: the pieces go to Slurm as one job array. */
export class SlurmExecutor implements RunExecutor {
  readonly where = 'Slurm';
  submission?: Submission;

  constructor(private readonly o: SlurmExecutorOptions) {}

  /** Everything that can refuse, before anything is written: the folder's earlier job, and the scheduler's check of the script. */
  check(pieces: readonly RunPiece[]): void {
    if (pieces.length === 0) throw new InputError('nothing to submit');
    checkEarlierJob(this.o.collection, this.o.force === true);
    const tasks = pieces.map((p, i) => taskOf(p, i, this.o.collection));
    checkJob(scriptFor(this.o.collection, jobName(this.o.kind, this.o.collection), tasks, this.o.settings).text, nearestFolder(this.o.collection));
  }

  async execute(pieces: readonly RunPiece[], options: ExecuteOptions): Promise<PieceOutcome[]> {
    const collection = this.o.collection;
    // an earlier job that is done (check() refused anything else), and with --force the earlier
    // runs in the pieces' folders (a task finds a finished run and leaves it alone otherwise)
    if (hasJob(collection)) rmSync(jobFolder(collection), { recursive: true, force: true });
    if (this.o.force) for (const p of pieces) if (existsSync(join(p.outDir, 'run.json'))) clearEarlierRun(p.outDir);
    const job: JobRecord = {
      format: jobFormat,
      'format-version': jobFormatVersion,
      kind: this.o.kind,
      created: new Date().toISOString(),
      tasks: pieces.map((p, i) => taskOf(p, i, collection)),
      submissions: [],
      states: {},
      context: this.o.context ?? {},
    };
    mkdirSync(jobFolder(collection), { recursive: true });
    writeJob(collection, job);
    this.submission = submitTasks(collection, job, job.tasks, this.o.settings);
    options.log?.('info', submissionText(this.submission));
    if (!this.o.wait) return pieces.map(() => ({ status: 'submitted' as const }));
    const outcomes = await waitForJob(collection, { ...options, ...(this.o.pollSeconds !== undefined ? { pollSeconds: this.o.pollSeconds } : {}) });
    return outcomes;
  }
}

// ---------------------------------------------------------------------------------------------
// Resubmitting

/**
 * Resubmit the tasks that ended without finishing (failed, cancelled, timed out, stopped before
 * the time limit), except runs that failed numerically; each resumes from its checkpoint, or
 * starts again when it had none. Tasks still queued are left alone. Returns the submission, or
 * undefined when there is nothing to resubmit.
 */
/**
 * What a resubmission would hand to the shell and to sbatch from the job record itself (not from
 * this command line): the setup lines (unless `setupReplaced`; the cases' own `cluster.setup`
 * lines always stay) and the extra sbatch options (unless `optionsReplaced`). A job folder travels
 * like a run folder, so these are data until the user agrees to run them.
 */
export function storedCommands(job: JobRecord, setupReplaced: boolean, optionsReplaced: boolean): { setup: string[]; schedulerOptions: string[] } {
  const last = job.submissions[job.submissions.length - 1]?.settings ?? { schedulerOptions: [], setup: [] };
  const setup = setupReplaced ? [] : [...(last.setup ?? [])];
  for (const t of job.tasks) for (const l of (t.doc as { cluster?: { setup?: string[] } }).cluster?.setup ?? []) if (!setup.includes(l)) setup.push(l);
  return { setup, schedulerOptions: optionsReplaced ? [] : [...(last.schedulerOptions ?? [])] };
}

export function resubmit(collection: string, settings: Partial<SlurmSettings>, log?: (level: 'info' | 'warning', m: string) => void): Submission | undefined {
  const job = readJob(collection);
  recordFinalStates(collection, job);
  const outcomes = judgeTasks(collection, job);
  const again = outcomes.filter((o) => o.resubmit && o.status !== 'submitted');
  for (const o of outcomes) {
    if (!o.resubmit && o.status === 'failed') log?.('warning', `${o.task.name}: not resubmitted: ${o.reason ?? 'its run failed'} (it would fail the same way)`);
  }
  if (again.length === 0) return undefined;
  const last = job.submissions[job.submissions.length - 1]?.settings ?? { schedulerOptions: [], setup: [] };
  const merged: SlurmSettings = { ...last, ...Object.fromEntries(Object.entries(settings).filter(([, v]) => v !== undefined)) } as SlurmSettings;
  // new setup lines replace the command line's; the cases' own (cluster.setup) stay
  if (settings.setup !== undefined) {
    for (const t of again) for (const l of (t.task.doc as { cluster?: { setup?: string[] } }).cluster?.setup ?? []) if (!merged.setup.includes(l)) merged.setup = [...merged.setup, l];
  }
  checkJob(scriptFor(collection, jobName(job.kind, collection), again.map((o) => o.task), merged).text, jobFolder(collection));
  const s = submitTasks(collection, job, again.map((o) => o.task), merged);
  log?.('info', submissionText(s));
  return s;
}

// ---------------------------------------------------------------------------------------------
// Waiting

const sleep = (ms: number, signal?: AbortSignal): Promise<void> =>
  new Promise((done) => {
    if (signal?.aborted) return done();
    const t = setTimeout(finish, ms);
    function finish(): void {
      clearTimeout(t);
      signal?.removeEventListener('abort', finish);
      done();
    }
    signal?.addEventListener('abort', finish, { once: true });
  });

function defaultPoll(): number {
  const env = Number(process.env.BRANCHLINE_SLURM_POLL_SECONDS);
  return Number.isFinite(env) && env > 0 ? env : 5;
}

function readProgress(collection: string, task: number): ProgressInfo | undefined {
  try {
    return JSON.parse(readFileSync(progressFile(collection, task), 'utf8')) as ProgressInfo;
  } catch {
    return undefined;
  }
}

/** Record the final states of tasks that left the queue (from scontrol, else sacct). */
function recordFinalStates(collection: string, job: JobRecord, stillQueued?: ReadonlySet<string>): TaskState[] {
  const live = liveTasks(job);
  const gone = live.filter((t) => !stillQueued?.has(`${t.job}_${t.task}`));
  if (gone.length === 0) return [];
  const inQueue = stillQueued ?? new Set(queued([...new Set(live.map((t) => t.job))]).map((q) => `${q.job}_${q.task}`));
  const ended = gone.filter((t) => !inQueue.has(`${t.job}_${t.task}`));
  const found: TaskState[] = [];
  const byJob = new Map<string, TaskState[]>();
  for (const t of ended) {
    if (!byJob.has(t.job)) {
      const shown = shownTasks(t.job);
      byJob.set(t.job, shown.length ? shown : accountedTasks(t.job));
    }
    const s = byJob.get(t.job)!.find((x) => x.task === t.task);
    // a task the controller no longer knows, without accounting: its run folder tells the rest
    const state: TaskState = s ?? { job: t.job, task: t.task, state: 'UNKNOWN', reason: 'the scheduler no longer knows the task (accounting is off)' };
    // a state still changing is not final yet
    if (/^(PENDING|RUNNING|COMPLETING|CONFIGURING|SUSPENDED|REQUEUED|RESIZING|SIGNALING|STAGE_OUT)/.test(state.state)) continue;
    job.states[`${t.job}_${t.task}`] = state;
    found.push(state);
  }
  if (found.length) writeJob(collection, job);
  return found;
}

/**
 * Wait until no task of the job is queued or running, showing progress (scheduler states, and
 * points from the tasks' progress files); a stop request ends the wait (the tasks go on).
 * Returns the outcomes of every task.
 */
export async function waitForJob(collection: string, o: ExecuteOptions & { pollSeconds?: number }): Promise<TaskOutcome[]> {
  const poll = (o.pollSeconds ?? defaultPoll()) * 1000;
  const job = readJob(collection);
  const seen = new Map<number, string>();
  const started = new Set<number>();
  const lastProgress = new Map<number, number>();
  const taskName = (i: number): string => job.tasks[i]?.name ?? `task ${i}`;
  let failures = 0;
  for (;;) {
    const live = liveTasks(job);
    if (live.length === 0) break;
    let states: TaskState[];
    try {
      states = queued([...new Set(live.map((t) => t.job))]);
      failures = 0;
    } catch (e) {
      // a busy or restarting controller: try again a few times before giving up the wait
      if (++failures >= 5) throw e;
      o.log?.('warning', (e as Error).message);
      await sleep(poll, o.signal);
      if (o.signal?.aborted) break;
      continue;
    }
    const inQueue = new Set(states.map((s) => `${s.job}_${s.task}`));
    for (const s of states) {
      if (!live.some((t) => t.job === s.job && t.task === s.task)) continue;
      const words = s.state === 'PENDING' ? `pending${s.reason ? ` (${s.reason})` : ''}` : s.state === 'RUNNING' ? `running${s.node ? ` on ${s.node}` : ''}` : s.state.toLowerCase();
      if (seen.get(s.task) !== words) {
        seen.set(s.task, words);
        o.log?.('info', `${taskName(s.task)}: ${words} (job ${s.job}_${s.task})`);
      }
      if (s.state === 'RUNNING') {
        const t = job.tasks[s.task];
        if (!started.has(s.task)) {
          started.add(s.task);
          o.view?.start(t.name, t.parameter, t.maxPoints);
        }
        const p = readProgress(collection, s.task);
        if (p && p.points !== lastProgress.get(s.task)) {
          lastProgress.set(s.task, p.points);
          o.view?.update(t.name, p);
        }
      }
    }
    const ended = recordFinalStates(collection, job, inQueue);
    for (const s of ended) {
      if (started.has(s.task)) o.view?.end(taskName(s.task));
      started.delete(s.task);
      const outcome = judgeTask(collection, job, job.tasks[s.task]);
      o.log?.(outcome.status === 'finished' ? 'info' : 'warning', `${taskName(s.task)}: ${outcome.status === 'finished' ? 'finished' : outcome.reason ?? outcome.status}`);
    }
    if (liveTasks(job).length === 0) break;
    await sleep(poll, o.signal);
    if (o.signal?.aborted) break;
  }
  for (const i of started) o.view?.end(taskName(i));
  return judgeTasks(collection, job);
}

// ---------------------------------------------------------------------------------------------
// Judging

function readRunStatus(dir: string): { status?: string; failure?: string } {
  try {
    const run = JSON.parse(readFileSync(join(dir, 'run.json'), 'utf8')) as { status?: unknown; failure?: unknown };
    return { ...(typeof run.status === 'string' ? { status: run.status } : {}), ...(typeof run.failure === 'string' ? { failure: run.failure } : {}) };
  } catch {
    return {};
  }
}

/** The last non-empty lines of a task's log (for a task that died without saying why). */
function logTail(collection: string, job: string, task: number, lines = 2): string | undefined {
  const file = join(jobFolder(collection), 'logs', `${job}_${task}.txt`);
  try {
    if (statSync(file).size === 0) return undefined;
    const text = readFileSync(file, 'utf8').split('\n').map((l) => l.trim()).filter(Boolean);
    return text.slice(-lines).join(' | ') || undefined;
  } catch {
    return undefined;
  }
}

function schedulerWords(s: TaskState): string {
  return `Slurm: ${s.state}${s.reason ? `, ${s.reason}` : ''}${s.exitCode && s.exitCode !== '0:0' ? `, exit code ${s.exitCode}` : ''}`;
}

function judgeTask(collection: string, job: JobRecord, task: JobTask): TaskOutcome {
  const sub = latestSubmission(job, task.index);
  const state = sub ? job.states[`${sub.job}_${task.index}`] : undefined;
  const base = { task, ...(state ? { scheduler: state } : {}) };
  if (sub && !state) return { ...base, status: 'submitted', reason: `queued or running as job ${sub.job}_${task.index}`, resubmit: false };
  const dir = resolve(collection, task.directory);
  const run = readRunStatus(dir);
  const saved = readTaskResult(collection, task.index);
  const fresh = saved && sub && saved.job === sub.job ? saved : undefined;
  const result = fresh?.result;
  if (run.status === 'finished') {
    return { ...base, status: 'finished', ...(result && result.status === 'finished' ? { result } : saved?.result?.status === 'finished' ? { result: saved.result } : {}), resubmit: false };
  }
  const where = state ? ` (${schedulerWords(state)})` : '';
  const checkpointed = existsSync(join(dir, 'checkpoint.bin')) || existsSync(join(dir, 'checkpoint.previous.bin'));
  const resume = checkpointed ? 'its checkpoint is kept' : 'no checkpoint yet: it starts again';
  const withResult = result ? { result } : {};
  // another writer held the run folder: nothing was touched; the task can run once that writer is gone
  if (fresh?.held) {
    return { ...base, ...withResult, status: 'failed', reason: `the task left its run folder alone: ${fresh.error ?? 'another process writes it'}; ${resume}${where}`, resubmit: true };
  }
  // the run ended by itself with a failure (numerical, or a case that no longer builds)
  if (fresh && !fresh.stop && (fresh.error !== undefined || result?.status === 'failed')) {
    return { ...base, ...withResult, status: 'failed', reason: `the run failed: ${fresh.error ?? result?.failure ?? run.failure ?? 'no reason recorded'}${where}`, resubmit: false };
  }
  const st = state?.state ?? 'UNKNOWN';
  if (fresh?.stop === 'time-limit' || (st === 'TIMEOUT' && result?.status === 'stopped')) {
    return { ...base, ...withResult, status: 'stopped', reason: `stopped before its time limit on Slurm's signal; ${resume}${where}`, resubmit: true };
  }
  if (st === 'CANCELLED' || st.startsWith('CANCELLED')) {
    return { ...base, ...withResult, status: 'stopped', reason: `cancelled (scancel or the administrator); ${result?.status === 'stopped' ? 'it stopped cleanly and ' : ''}${resume}${where}`, resubmit: true };
  }
  if (st === 'TIMEOUT') return { ...base, ...withResult, status: 'stopped', reason: `hit its time limit; ${resume}${where}`, resubmit: true };
  if (st === 'OUT_OF_MEMORY') {
    return { ...base, ...withResult, status: 'failed', reason: `ran out of memory (it asked for ${sub?.memoryMiB ?? '?'} MiB; resubmit with a larger --memory); ${resume}${where}`, resubmit: true };
  }
  if (st === 'NODE_FAIL' || st === 'BOOT_FAIL' || st === 'PREEMPTED' || st === 'DEADLINE') {
    return { ...base, ...withResult, status: 'stopped', reason: `ended by the cluster (${st.toLowerCase().replace('_', ' ')}); ${resume}${where}`, resubmit: true };
  }
  if (result?.status === 'stopped') return { ...base, ...withResult, status: 'stopped', reason: `stopped on a signal; ${resume}${where}`, resubmit: true };
  const tail = sub ? logTail(collection, sub.job, task.index) : undefined;
  const ran = run.status !== undefined ? `its run ended ${run.status === 'running' ? 'without finishing' : run.status}` : 'its run never started';
  return { ...base, ...withResult, status: 'failed', reason: `the task ended before its run finished: ${ran}${tail ? `; the log ends: ${tail}` : ''}; ${resume}${where}`, resubmit: true };
}

export function judgeTasks(collection: string, job: JobRecord = readJob(collection)): TaskOutcome[] {
  return job.tasks.map((t) => judgeTask(collection, job, t));
}

/** Look at the queue once and record what ended (for `collect` without waiting). */
export function refreshStates(collection: string): TaskOutcome[] {
  const job = readJob(collection);
  recordFinalStates(collection, job);
  return judgeTasks(collection, job);
}

// ---------------------------------------------------------------------------------------------
// The tasks as pieces (for the merge after collecting)

/**
 * The code models a job's cases name (absolute paths, each once): its tasks' cases and the case of
 * its sweep or study. A job folder is data, like a run folder: they load only when the user asks.
 */
export function jobCodeModels(job: JobRecord): string[] {
  const found = new Set<string>();
  const add = (doc: unknown, baseDir: unknown): void => {
    const path = codeModelPath((doc as { model?: unknown } | null)?.model, typeof baseDir === 'string' ? baseDir : '/');
    if (path !== undefined) found.add(path);
  };
  for (const t of job.tasks) {
    add(t.doc, t.baseDir);
    if (typeof t.codeModel === 'string') found.add(t.codeModel);
  }
  const c = job.context as { case?: unknown; baseDir?: unknown } | undefined;
  if (c?.case) add(c.case, c.baseDir);
  return [...found];
}

/** The option letting a job's stored case load its code model, when the user allowed the job's code models. */
export function jobCaseCode(doc: unknown, baseDir: string, allowCode: boolean): { loadCode?: string } {
  const path = allowCode ? codeModelPath((doc as { model?: unknown } | null)?.model, baseDir) : undefined;
  return path !== undefined ? { loadCode: path } : {};
}

/**
 * Rebuild the pieces of a job from its record (their cases checked again, problems built); with
 * `allowCode` (the user's --load-code-model), their code models load (see jobCodeModels).
 */
export async function jobPieces(collection: string, job: JobRecord = readJob(collection), allowCode = false): Promise<RunPiece[]> {
  const pieces: RunPiece[] = [];
  for (const t of job.tasks) {
    const prepared = await prepareCaseObject(t.doc, { label: t.label, baseDir: t.baseDir, ...(t.file !== undefined ? { file: t.file } : {}), ...jobCaseCode(t.doc, t.baseDir, allowCode) });
    pieces.push({ name: t.name, outDir: resolve(collection, t.directory), doc: t.doc, label: t.label, baseDir: t.baseDir, ...(t.file !== undefined ? { file: t.file } : {}), prepared });
  }
  return pieces;
}
