/**
 * Running cases from the command line: one case in this process, or several — one after another,
 * or at most `jobs` at a time, each in its own worker process (src/run/batch-worker.ts).
 *
 *  - Every case file is checked (and its problem built) and every output folder checked before
 *    any run starts: a bad case stops the whole call with exit code 2 and nothing written.
 *  - With several cases and `--out DIR`, DIR is a parent folder: each case writes DIR/<case name>.
 *  - Each run writes checkpoints (src/run/checkpoint.ts) as its case asks.
 *  - A run that fails (numerically, or its worker process dies) is recorded with its reason; the
 *    other cases still run. A stop request (SIGINT/SIGTERM) stops the running cases cleanly
 *    (checkpoint written, run.json `stopped`) and starts no new ones.
 *
 * No argument parsing and no process.exit here: the `run` and `resume` commands call these.
 */
import { type ChildProcess, fork } from 'node:child_process';
import { existsSync, statSync, statfsSync } from 'node:fs';
import { availableParallelism, totalmem } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { estimateFactorMemory } from '../../discretisations/index.js';
import { fileURLToPath } from 'node:url';
import { type PreparedCase, ownCodeModel, prepareCase, prepareCaseObject } from './case.js';
import { CheckpointError, type CheckpointDocument, checkpointFile, previousCheckpointFile, readCheckpoint } from './checkpoint.js';
import { InputError } from './errors.js';
import { folderWriteProblem } from './folders.js';
import { FolderLock, holderText, lockHolder } from './lock.js';
import type { ProgressView } from './progress.js';
import { type CodeModelChoice, resumeCodeModel } from './resume-code.js';
import { type ProgressInfo, type ResumeState, type RunResult, outputDirectory } from './run-case.js';
import { columnPlan, newRunProblem, readRunRecord } from './run-directory.js';
import { runCaseInThread } from './run-thread.js';
import { sideBySideUnknowns } from './branch-helpers.js';
import { writeJsonAtomic } from './writers.js';
import { jsonFileLimit, readTextFile } from './read-file.js';

/** A case ready to run: checked, its problem built, its output folder decided. */
export interface RunTarget {
  /** The case file as the user named it. */
  label: string;
  prepared: PreparedCase;
  outDir: string;
  /** The case document to run, when it is not the case file as it is (a value of a sweep). */
  doc?: Record<string, unknown>;
}

export type OutcomeStatus = 'finished' | 'failed' | 'stopped' | 'not-started';

/** How one case of a call went (the --json summary lists these). */
export interface CaseOutcome {
  name: string;
  caseFile: string | null;
  directory: string;
  status: OutcomeStatus;
  /** Why it failed or stopped (absent when finished). */
  reason?: string;
  /** The run's result, when the run got as far as writing its files. */
  result?: RunResult;
}

// ---------------------------------------------------------------------------------------------
// Checking before anything runs

/**
 * Why `path` cannot take a new run (undefined when it can), read-only: a folder that cannot be
 * written (read-only, no permission, a dangling link), a live writer holding it, or the policy of
 * RunDirectory.create on non-empty folders.
 */
export function outputFolderProblem(path: string, force: boolean): string | undefined {
  const write = folderWriteProblem(path);
  if (write) return write;
  const holder = lockHolder(path);
  if (holder) return `output folder ${path} is being written by ${holderText(holder.writer, holder.liveness)}; wait for it to end or stop it, or choose another folder with --out`;
  return newRunProblem(path, force);
}

/**
 * Check every case file and output folder. Returns the targets, or the problems (one line each,
 * naming the file and field) when any case cannot run — then nothing may run.
 */
export async function prepareTargets(
  files: readonly string[],
  options: { out?: string; force?: boolean; jobs?: number; parent?: boolean; cluster?: boolean } = {},
): Promise<{ targets: RunTarget[]; problems: string[] }> {
  const targets: RunTarget[] = [];
  const problems: string[] = [];
  // `parent`: --out is a parent folder even for one case (runs sent to a cluster)
  const several = files.length > 1 || options.parent === true;
  for (const file of files) {
    let prepared: PreparedCase;
    try {
      prepared = await prepareCase(file);
    } catch (e) {
      problems.push(e instanceof InputError ? e.message : `${file}: ${e instanceof Error ? e.message.split('\n')[0] : String(e)}`);
      continue;
    }
    // several cases: --out is a parent folder with one sub-folder per case name
    const outDir = several && options.out !== undefined ? resolve(options.out, prepared.case.name) : outputDirectory(prepared, options.out);
    const same = targets.find((t) => t.outDir === outDir);
    if (same) {
      problems.push(`${file}: writes to the same output folder as ${same.label} (${outDir}); give the cases different names`);
      continue;
    }
    const folder = outputFolderProblem(outDir, options.force === true);
    if (folder) {
      problems.push(folder);
      continue;
    }
    targets.push({ label: file, prepared, outDir });
  }
  // runs sent to a cluster: the nodes' memory is the scheduler's to judge (sbatch --test-only)
  if (problems.length === 0) problems.push(...resourceProblems(targets, options.jobs ?? 1, options.cluster !== true));
  return { targets, problems };
}

function bytesText(b: number): string {
  if (b >= 1024 ** 4) return `${(b / 1024 ** 4).toFixed(1)} TiB`;
  if (b >= 1024 ** 3) return `${(b / 1024 ** 3).toFixed(1)} GiB`;
  if (b >= 1024 ** 2) return `${(b / 1024 ** 2).toFixed(0)} MiB`;
  return `${Math.ceil(b / 1024)} KiB`;
}

/**
 * Estimates of what a run needs: memory for the sparse LU factors (the continuation system's,
 * and with stability the eigen solver's as well) and disk for one branch of `max-points`
 * points (CSV rows, solution files with output.solutions: all, two checkpoints).
 */
export function runNeeds(prepared: PreparedCase): { memory: number; disk: number; points: number; row: number } {
  const d = prepared.problem.describe();
  const n = prepared.problem.size;
  const fields = Math.max(1, d.fields.length);
  const factor = estimateFactorMemory(d.axes.map((a) => a.nodes), fields, prepared.problem.extraUnknowns.length + 1).bytes;
  const eigen = prepared.case.stability.eigenvalues;
  // Krylov basis (about 2k + 20 vectors) and the states the engine keeps (a dozen vectors)
  const vectors = (eigen > 0 ? 2 * eigen + 20 : 0) + 12;
  const memory = factor * (eigen > 0 ? 2 : 1) + vectors * 8 * (n + 1);
  const points = prepared.settings.maxPoints;
  const nodes = d.axes.reduce((a, ax) => a * ax.nodes, 1) * fields;
  // every column of a row (eigenvalue columns included), each at most 24 characters and a comma
  const columns = columnPlan(prepared.problem, prepared.settings.parameter, eigen).columns.length;
  const row = columns * 25;
  const solutions = prepared.case.output.solutions === 'all' ? nodes * 8 + 128 : 0;
  const checkpoint = 2 * 8 * (n + 1) * (16 + 2 * eigen);
  return { memory, disk: points * (row + solutions) + checkpoint, points, row };
}

/**
 * The cores a run uses by default (no --cores) on a machine with `machine` cores: one below
 * sideBySideUnknowns unknowns, else as many as the machine has and its memory holds (each
 * helper thread holds factorisations of its own, about what the run itself holds).
 */
export function defaultRunCores(prepared: PreparedCase, machine = Math.max(1, availableParallelism())): number {
  if (prepared.problem.size < sideBySideUnknowns) return 1;
  const each = runNeeds(prepared).memory;
  return Math.max(1, Math.min(machine, Math.floor((0.8 * totalmem()) / Math.max(each, 1))));
}

/** Requests that cannot fit this machine, refused before anything runs (with the estimates). */
export function resourceProblems(targets: readonly RunTarget[], jobs: number, memoryHere = true): string[] {
  const problems: string[] = [];
  const machine = totalmem();
  const needs = targets.map((t) => ({ t, ...runNeeds(t.prepared) }));
  for (const x of memoryHere ? needs : []) {
    if (x.memory > 0.8 * machine) {
      problems.push(`${x.t.label}: grid.intervals: the run would need about ${bytesText(x.memory)} of memory (sparse LU factors${x.t.prepared.case.stability.eigenvalues > 0 ? ' for the continuation and the eigenvalues' : ''}), more than this machine has (${bytesText(machine)}); use fewer intervals`);
    }
  }
  const parallel = Math.min(jobs, targets.length);
  if (problems.length === 0 && parallel > 1) {
    const worst = needs.map((x) => x.memory).sort((a, b) => b - a).slice(0, parallel).reduce((a, b) => a + b, 0);
    if (worst > 0.8 * machine) problems.push(`--jobs ${jobs}: the largest ${parallel} cases together would need about ${bytesText(worst)} of memory, more than this machine has (${bytesText(machine)}); use fewer jobs`);
  }
  // disk: one branch of max-points points per case, summed per file system
  const byDevice = new Map<number, { free: number; need: number; where: string; labels: string[] }>();
  for (const x of needs) {
    let probe = x.t.outDir;
    while (!existsSync(probe) && dirname(probe) !== probe) probe = dirname(probe);
    let free: number;
    let dev: number;
    try {
      const fs = statfsSync(probe);
      free = fs.bavail * fs.bsize;
      dev = statSync(probe).dev;
    } catch {
      continue;
    }
    const e = byDevice.get(dev) ?? { free, need: 0, where: probe, labels: [] };
    e.need += x.disk;
    e.labels.push(x.t.label);
    byDevice.set(dev, e);
  }
  for (const e of byDevice.values()) {
    if (e.need > e.free) {
      problems.push(
        `${e.labels.join(', ')}: continuation.max-points: a branch of max-points points would write about ${bytesText(e.need)} (rows, solution files, checkpoints), but only ${bytesText(e.free)} is free under ${e.where}; lower max-points or output.solutions, or choose another folder with --out`,
      );
    }
  }
  return problems;
}

// ---------------------------------------------------------------------------------------------
// One run in this process

export interface ResumePlan {
  /** The checkpoint to continue from; absent when the run ended before its first one (`restart`). */
  checkpoint?: CheckpointDocument;
  /** The checkpoint file used, and newer ones that could not be (damaged). */
  file?: string;
  skipped: string[];
  /** run.json's status before resuming. */
  previousStatus: string;
  /** No checkpoint was ever written: the run starts over from its recorded case (its first start and earlier resumes). */
  restart?: { started: string; resumes: string[] };
}

export interface SessionOptions {
  outDir: string;
  force?: boolean;
  signal?: AbortSignal;
  view: ProgressView;
  /** Name shown in progress and log lines. */
  name: string;
  resume?: ResumePlan;
  /** The folder's lock when the caller holds it (resume); otherwise runCase takes it. */
  lock?: FolderLock;
  /** The folder belongs to the caller (a study's grid folder): see RunCaseOptions.alongside. */
  alongside?: boolean;
  /** Processor cores the run may use (RunCaseOptions.cores; default 1); `auto`: defaultRunCores on this machine. */
  cores?: number | 'auto';
}

/**
 * Run (or resume) one case, with checkpoints and progress: the numerics in a worker thread
 * (src/run/run-thread.ts), so that this thread answers signals at once however long a
 * factorisation takes.
 */
export async function runSession(prepared: PreparedCase, o: SessionOptions): Promise<RunResult> {
  const c = o.resume?.checkpoint;
  o.view.start(o.name, prepared.settings.parameter, prepared.settings.maxPoints);
  try {
    return await runCaseInThread(prepared, {
      outDir: o.outDir,
      ...(o.force ? { force: true } : {}),
      ...(o.signal ? { signal: o.signal } : {}),
      log: (level, message) => o.view.log(o.name, level, message),
      progress: (p: ProgressInfo) => o.view.update(o.name, p),
      checkpoint: { policy: prepared.case.checkpoint, ...(c ? { sequence: c.sequence, points: c.ledger.points } : {}) },
      ...(o.lock ? { lock: o.lock } : {}),
      ...(o.alongside ? { alongside: true } : {}),
      ...(o.resume?.restart ? { restart: o.resume.restart } : {}),
      ...(o.cores !== undefined ? { cores: o.cores === 'auto' ? defaultRunCores(prepared) : o.cores } : {}),
      ...(c ? { resume: resumeStateOf(c, o.resume!.file) } : {}),
    });
  } finally {
    o.view.end(o.name);
  }
}

/** What runCase continues from (its `resume` option): a checkpoint's contents, read from `file`. */
export function resumeStateOf(c: CheckpointDocument, file = checkpointFile): ResumeState {
  return {
    ledger: c.ledger,
    engineState: c.engine,
    started: c.run.started,
    previousSeconds: c.run.seconds,
    resumes: c.run.resumes,
    checkpoint: { file, sequence: c.sequence, written: c.written, points: c.ledger.points },
  };
}

/** The outcome of a finished session. */
export function outcomeOf(target: { prepared: PreparedCase; outDir: string }, result: RunResult): CaseOutcome {
  return {
    name: target.prepared.case.name,
    caseFile: target.prepared.file ?? null,
    directory: result.directory,
    status: result.status,
    ...(result.status === 'failed' ? { reason: result.failure ?? 'unknown reason' } : {}),
    ...(result.status === 'stopped' ? { reason: 'stopped on request' } : {}),
    result,
  };
}

// ---------------------------------------------------------------------------------------------
// Resuming

export interface ResumeLockOptions {
  /** Take over a lock of another host (`resume --force`). */
  force?: boolean;
  /** The folder's lock, when the caller holds it already (it stays held on a refusal). */
  lock?: FolderLock;
  /** Which code model the stored case may load (src/run/resume-code.ts); none by default. */
  code?: CodeModelChoice;
}

/**
 * The checks every resume starts with (runs and time integrations): the folder holds a run of
 * ours, can be written, and its lock is taken (no other process writes it: a live writer makes
 * this refuse; one on another host is taken over only with `force`) — unless the caller took it
 * already (`lock`, e.g. a Slurm task, which judges other hosts' writers by their Slurm job);
 * then, under the lock, the run must not have finished. InputError (one line) otherwise, with the
 * lock released (a lock taken here; the caller's stays the caller's). The caller releases `lock`
 * when the resumed run has ended.
 */
export function lockForResume(dirGiven: string, options: ResumeLockOptions = {}): { dir: string; run: Record<string, unknown>; status: string; lock: FolderLock } {
  const dir = resolve(dirGiven);
  if (!existsSync(dir)) throw new InputError(`${dirGiven}: no such folder`);
  if (!statSync(dir).isDirectory()) throw new InputError(`${dirGiven}: is a file, not a run folder`);
  if (!readRunRecord(dir)) throw new InputError(`${dirGiven}: holds no branchline run (no readable run.json of ours)`);
  const problem = folderWriteProblem(dir, 'run folder');
  if (problem) throw new InputError(problem);
  // from here on no other process can start writing the folder: what is read below stays true
  if (options.lock && resolve(options.lock.dir) !== dir) throw new Error(`lockForResume: the lock given is ${options.lock.dir}'s, not ${dir}'s`);
  const lock = options.lock ?? FolderLock.acquire(dir, { purpose: 'resume', takeOverForeign: options.force === true, label: dirGiven });
  const run = readRunRecord(dir);
  const status = String(run?.status);
  if (!run || status === 'finished') {
    if (!options.lock) lock.release();
    if (!run) throw new InputError(`${dirGiven}: holds no branchline run (no readable run.json of ours)`);
    throw new InputError(`${dirGiven}: the run finished${typeof run.ended === 'string' ? ` at ${run.ended}` : ''}; there is nothing to resume`);
  }
  return { dir, run, status, lock };
}

/**
 * lockForResume, and a usable checkpoint (InputError when there is none, the lock released): what
 * a time integration resumes from.
 */
export function resumableCheckpoint(dirGiven: string, options: ResumeLockOptions = {}): { dir: string; run: Record<string, unknown>; status: string; found: ReturnType<typeof readCheckpoint>; lock: FolderLock } {
  const taken = lockForResume(dirGiven, options);
  try {
    return { ...taken, found: readCheckpoint(taken.dir) };
  } catch (e) {
    if (!options.lock) taken.lock.release();
    if (e instanceof CheckpointError) throw new InputError(`${dirGiven}: cannot resume: ${e.message}`);
    throw e;
  }
}

/** The CSV files must still hold every row the checkpoint counts (checked before any is touched). */
export function checkRecordedLengths(dirGiven: string, dir: string, csvLengths: Record<string, number>): void {
  for (const [file, length] of Object.entries(csvLengths)) {
    let size: number;
    try {
      size = statSync(join(dir, file)).size;
    } catch {
      throw new InputError(`${dirGiven}: cannot resume: ${file} is missing (the checkpoint counts ${length} bytes of it)`);
    }
    if (size < length) throw new InputError(`${dirGiven}: cannot resume: ${file} has ${size} bytes, fewer than the ${length} the checkpoint counts (was it edited?)`);
  }
}

/**
 * The case stored in a run folder (a checkpoint's or run.json's), prepared as the case file it
 * came from would be: paths relative to that file's folder, or to the run folder when unknown.
 */
export async function caseFromRunFolder(doc: Record<string, unknown>, caseFile: string | null, dir: string, label: string, code: StoredCode): Promise<PreparedCase> {
  const baseDir = caseFile ? dirname(caseFile) : dir;
  // a code model loads only when the user names it (src/run/resume-code.ts)
  const loadCode = await resumeCodeModel(code.dirGiven, doc, code.runCase as { model?: unknown } | undefined, baseDir, code.choice);
  return prepareCaseObject(doc, { label, ...(caseFile ? { file: caseFile } : {}), baseDir, ...(loadCode !== undefined ? { loadCode } : {}) });
}

/** Who reads a stored case back, for the code-model rule: the folder as the user named it, run.json's case (to compare), the user's choice. */
export interface StoredCode {
  dirGiven: string;
  runCase?: unknown;
  choice: CodeModelChoice;
}

/**
 * Everything `resume DIR` needs, checked (lockForResume, then): a usable checkpoint whose case
 * builds a problem that matches the saved state, and branch files that still hold every row it
 * counts — or, for a run killed before its first checkpoint, its recorded case to start over
 * from. InputError (one line) otherwise, with the lock released. The caller releases `lock`.
 */
export async function prepareResume(dirGiven: string, options: ResumeLockOptions = {}): Promise<{ prepared: PreparedCase; outDir: string; plan: ResumePlan; lock: FolderLock }> {
  const { dir, run, status, lock } = lockForResume(dirGiven, options);
  try {
    return { ...(await checkResumable(dir, dirGiven, run, status, options.code ?? {})), lock };
  } catch (e) {
    if (!options.lock) lock.release();
    throw e;
  }
}

/**
 * What a resume goes on from: the newest usable checkpoint of the folder — or, for a run (or
 * search) killed before its first checkpoint, nothing resumable having been computed, the case
 * run.json records (`label` names it for messages) and the times, to start it over. InputError
 * when a checkpoint was written but none can be used (run.json records one that went missing).
 */
export function checkpointOrRestart(
  dirGiven: string,
  dir: string,
  run: Record<string, unknown>,
): { found: ReturnType<typeof readCheckpoint> } | { restart: { started: string; resumes: string[] }; case: Record<string, unknown>; caseFile: string | null; label: string } {
  try {
    return { found: readCheckpoint(dir) };
  } catch (e) {
    if (!(e instanceof CheckpointError)) throw e;
    const none = !existsSync(join(dir, checkpointFile)) && !existsSync(join(dir, previousCheckpointFile));
    if (none && run.checkpoint === undefined && run.case && typeof run.case === 'object') {
      const caseFile = typeof run['case-file'] === 'string' ? run['case-file'] : null;
      const started = typeof run.started === 'string' ? run.started : new Date().toISOString();
      const resumes = Array.isArray(run.resumed) ? run.resumed.filter((t): t is string => typeof t === 'string') : [];
      return { restart: { started, resumes }, case: run.case as Record<string, unknown>, caseFile, label: `${join(dirGiven, 'run.json')} (case ${caseFile ?? 'unknown'})` };
    }
    if (none) throw new InputError(`${dirGiven}: cannot resume: run.json records a checkpoint, but neither ${checkpointFile} nor ${previousCheckpointFile} is there (removed?)`);
    throw new InputError(`${dirGiven}: cannot resume: ${e.message}`);
  }
}

async function checkResumable(
  dir: string,
  dirGiven: string,
  run: Record<string, unknown>,
  status: string,
  choice: CodeModelChoice,
): Promise<{ prepared: PreparedCase; outDir: string; plan: ResumePlan }> {
  const code: StoredCode = { dirGiven, runCase: run.case, choice };
  const from = checkpointOrRestart(dirGiven, dir, run);
  if ('restart' in from) {
    const prepared = await caseFromRunFolder(from.case, from.caseFile, dir, from.label, code);
    return { prepared, outDir: dir, plan: { skipped: [], previousStatus: status, restart: from.restart } };
  }
  const found = from.found;
  const c = found.document;
  const caseFile = c.run.caseFile;
  const prepared = await caseFromRunFolder(c.case, caseFile, dir, `${join(dirGiven, found.file)} (case ${caseFile ?? 'unknown'})`, code);
  // the saved state must belong to this problem (a code model may have changed since)
  const engine = c.engine as { current?: { x?: unknown } | null; rowScale?: unknown } | null;
  const x = engine?.current?.x;
  const saved = x instanceof Float64Array ? x.length - 1 : engine?.rowScale instanceof Float64Array ? engine.rowScale.length : undefined;
  if (saved !== undefined && saved !== prepared.problem.size) {
    throw new InputError(`${dirGiven}: cannot resume: the checkpoint holds states of ${saved} unknowns, the case's problem has ${prepared.problem.size} (was the model changed?)`);
  }
  checkRecordedLengths(dirGiven, dir, c.ledger.csvLengths);
  return { prepared, outDir: dir, plan: { checkpoint: c, file: found.file, skipped: found.skipped, previousStatus: status } };
}

// ---------------------------------------------------------------------------------------------
// Several cases

export interface BatchOptions {
  jobs: number;
  force?: boolean;
  signal: AbortSignal;
  view: ProgressView;
  /** Called as each case ends (in the order they end). */
  onOutcome?: (target: RunTarget, outcome: CaseOutcome) => void;
  /** Processor cores each case run here may use (SessionOptions.cores; cases in worker processes use one). */
  cores?: number | 'auto';
}

const workers = new Set<ChildProcess>();
/** Set when the call leaves at once: the reason recorded in the runs of the workers it ends. */
let leavingAtOnce: string | undefined;

/** Whether worker processes are running. */
export function hasWorkers(): boolean {
  return workers.size > 0;
}

/**
 * End every worker at once (a second Ctrl-C): their runs resume from their last checkpoints.
 * Resolves when they are gone and their run.json files say `stopped` with `reason` (at most a
 * few seconds).
 */
export async function killWorkers(reason: string): Promise<void> {
  leavingAtOnce = reason;
  const gone = [...workers].map((w) => new Promise<void>((done) => (w.exitCode !== null || w.signalCode !== null ? done() : w.once('exit', () => setImmediate(done)))));
  for (const w of workers) w.kill('SIGKILL');
  await Promise.race([Promise.all(gone), new Promise((r) => setTimeout(r, 3000).unref())]);
}

/** Run the targets one after another here (jobs 1 or a single case), or in worker processes. */
export async function runBatch(targets: readonly RunTarget[], o: BatchOptions): Promise<CaseOutcome[]> {
  const outcomes: CaseOutcome[] = new Array(targets.length);
  const finish = (i: number, out: CaseOutcome): void => {
    outcomes[i] = out;
    o.onOutcome?.(targets[i], out);
  };
  const notStarted = (t: RunTarget): CaseOutcome => ({ name: t.prepared.case.name, caseFile: t.prepared.file ?? null, directory: t.outDir, status: 'not-started', reason: 'not started: the call was stopped first' });

  if (o.jobs <= 1 || targets.length === 1) {
    for (let i = 0; i < targets.length; i++) {
      const t = targets[i];
      if (o.signal.aborted) {
        finish(i, notStarted(t));
        continue;
      }
      try {
        const result = await runSession(t.prepared, { outDir: t.outDir, ...(o.force ? { force: true } : {}), signal: o.signal, view: o.view, name: t.prepared.case.name, ...(o.cores !== undefined ? { cores: o.cores } : {}) });
        finish(i, outcomeOf(t, result));
      } catch (e) {
        finish(i, { name: t.prepared.case.name, caseFile: t.prepared.file ?? null, directory: t.outDir, status: 'failed', reason: e instanceof Error ? e.message : String(e) });
      }
    }
    return outcomes;
  }

  const script = workerScript();
  let next = 0;
  const launch = (i: number): Promise<void> =>
    new Promise((done) => {
      const t = targets[i];
      const name = t.prepared.case.name;
      const child = fork(script, [], { serialization: 'advanced', stdio: ['ignore', 'pipe', 'pipe', 'ipc'], execArgv: [] });
      workers.add(child);
      let result: RunResult | undefined;
      let error: { message: string; input: boolean } | undefined;
      const relay = (chunk: Buffer): void => {
        for (const l of chunk.toString('utf8').split('\n')) if (l.trim()) o.view.log(name, 'warning', l.replace(/^branchline:\s*/, ''));
      };
      child.stdout?.on('data', relay);
      child.stderr?.on('data', relay);
      child.on('message', (m: WorkerMessage) => {
        switch (m.type) {
          case 'progress':
            o.view.update(name, m.info);
            break;
          case 'log':
            o.view.log(name, m.level, m.message);
            break;
          case 'result':
            result = m.result;
            break;
          case 'error':
            error = { message: m.message, input: m.input };
            break;
        }
      });
      const onAbort = (): void => {
        child.kill('SIGTERM');
      };
      o.signal.addEventListener('abort', onAbort, { once: true });
      child.on('exit', (code, signal) => {
        workers.delete(child);
        o.signal.removeEventListener('abort', onAbort);
        o.view.end(name);
        if (result) {
          finish(i, outcomeOf(t, result));
        } else {
          const reason = error?.message ?? `the worker process ended ${signal ? `by signal ${signal}` : `with exit code ${code}`} before the run finished`;
          if (!error) markAbandoned(t.outDir, reason);
          finish(i, { name, caseFile: t.prepared.file ?? null, directory: t.outDir, status: 'failed', reason });
        }
        done();
      });
      o.view.start(name, t.prepared.settings.parameter, t.prepared.settings.maxPoints);
      const start: WorkerStart = {
        type: 'run',
        file: t.prepared.file ?? resolve(t.label),
        label: t.label,
        outDir: t.outDir,
        force: o.force === true,
        ...(t.doc ? { doc: t.doc, baseDir: t.prepared.baseDir, ...ownCodeModel(t.prepared.case) } : {}),
      };
      child.send(start);
    });

  const lane = async (): Promise<void> => {
    for (;;) {
      const i = next++;
      if (i >= targets.length) return;
      if (o.signal.aborted) {
        finish(i, notStarted(targets[i]));
        continue;
      }
      await launch(i);
    }
  };
  await Promise.all(Array.from({ length: Math.min(o.jobs, targets.length) }, lane));
  return outcomes;
}

/**
 * A worker died without saying how its run ended: run.json still says `running`; make it true
 * (`failed`, with the reason). The run's checkpoint stays, so `resume` can continue it.
 */
function markAbandoned(dir: string, reason: string): void {
  // under the folder's lock (the dead worker's is stale): a resume that already took the folder over is left alone
  let lock: FolderLock;
  try {
    lock = FolderLock.acquire(dir, { purpose: 'recording a worker that ended' });
  } catch {
    return;
  }
  try {
    const run = readRunRecord(dir);
    if (!run || run.status !== 'running') return;
    const { process: _gone, ...rest } = run;
    const doc = leavingAtOnce ? { ...rest, status: 'stopped', note: leavingAtOnce } : { ...rest, status: 'failed', failure: reason };
    writeJsonAtomic(join(dir, 'run.json'), { ...doc, ended: new Date().toISOString() });
  } finally {
    lock.release();
  }
}

/** The compiled worker entry (dist/ when running from the TypeScript sources, e.g. in tests). */
function workerScript(): string {
  const here = dirname(fileURLToPath(import.meta.url));
  const sibling = join(here, 'batch-worker.js');
  if (existsSync(sibling)) return sibling;
  const built = resolve(here, '../../dist/src/run/batch-worker.js');
  if (existsSync(built)) return built;
  throw new Error(`the worker program is missing (${built}); run \`npm run build\` in the package folder`);
}

// ---------------------------------------------------------------------------------------------
// Messages between the batch and its workers

export interface WorkerStart {
  type: 'run';
  /** Absolute path of the case file, and the name the user gave it (for messages). */
  file: string;
  label: string;
  outDir: string;
  force: boolean;
  /** The case document to run instead of the file as it is (a value of a sweep), with its base folder. */
  doc?: Record<string, unknown>;
  baseDir?: string;
  /** The one code model `doc` may load (the case file's, which the user named). */
  loadCode?: string;
}

export type WorkerMessage =
  | { type: 'progress'; info: ProgressInfo }
  | { type: 'log'; level: 'info' | 'warning'; message: string }
  | { type: 'result'; result: RunResult }
  | { type: 'error'; message: string; input: boolean };

// ---------------------------------------------------------------------------------------------
// Summaries

/** The machine-readable summary of a call (`--json`). */
export function jsonSummary(outcomes: readonly CaseOutcome[]): Record<string, unknown> {
  const overall = outcomes.every((c) => c.status === 'finished') ? 'finished' : outcomes.some((c) => c.status === 'failed') ? 'failed' : 'stopped';
  return {
    status: overall,
    cases: outcomes.map((c) => ({
      name: c.name,
      'case-file': c.caseFile,
      directory: c.directory,
      status: c.status,
      ...(c.reason !== undefined ? { reason: c.reason } : {}),
      ...(c.result
        ? {
            seconds: c.result.seconds,
            points: c.result.ledger.points,
            branches: c.result.ledger.branches.map((b) => ({
              id: b.id,
              points: b.points,
              ...(b.stopReason !== undefined ? { 'stop-reason': b.stopReason, message: b.message } : {}),
            })),
            'special-points': c.result.ledger.specials,
            ...(typeof c.result.record.caution === 'string' ? { caution: c.result.record.caution } : {}),
          }
        : {}),
    })),
  };
}

/** Lines of the text summary of a call with several cases (after each case's own summary). */
export function batchLines(outcomes: readonly CaseOutcome[]): string[] {
  const count = (s: OutcomeStatus): number => outcomes.filter((c) => c.status === s).length;
  const parts = [`${count('finished')} finished`];
  if (count('failed')) parts.push(`${count('failed')} failed`);
  if (count('stopped')) parts.push(`${count('stopped')} stopped`);
  if (count('not-started')) parts.push(`${count('not-started')} not started`);
  const lines = [`${outcomes.length} cases: ${parts.join(', ')}.`];
  for (const c of outcomes) {
    if (c.status === 'finished') continue;
    lines.push(`  ${c.name} ${c.status === 'not-started' ? 'was not started' : c.status}: ${c.reason ?? 'no reason recorded'}${c.status === 'stopped' ? ` (continue with: branchline resume ${c.directory})` : ''}`);
  }
  return lines;
}
