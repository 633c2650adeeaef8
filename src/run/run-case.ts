/**
 * Run a prepared case: prepare (or, resuming, reopen) the run directory, converge the start point
 * and continue (the engine), write every accepted point and special point as it arrives, and keep
 * run.json's status true at every moment (running → finished | stopped | failed).
 *
 * Free of command-line concerns (no process.exit, no argument parsing, no stdout): the `run`
 * command, `resume`, batches and worker processes all call `runCase`, which performs four steps:
 *
 *  1. `prepareRunFolder` (a new run) or `resumeRunFolder` (from a checkpoint): the only steps that
 *     may refuse (bad output folder), before anything is written;
 *  2. the first run.json and points.json;
 *  3. `driveEngine`: engine events into files (run-events.ts), sync points, checkpoints, stop
 *     requests;
 *  4. `finishRun`: close the files, the final run.json, checkpoints removed when finished, plots.
 *
 * Order of work per event, so that a checkpoint always sees consistent files: a point's CSV row
 * (and its solution file, for `output.solutions: all`) is written before control goes back to
 * the engine or to the event loop; the `checkpoint` hook is then called with the CSV byte
 * lengths and a snapshot function of the engine's state — only between steps (after the last
 * event of a step: a step's point may be followed by its fold, branch point or end), so the
 * ledger and the engine state always describe the same moment. A stop request is honoured at
 * such a moment too.
 *
 * Resuming (`options.resume`, from a checkpoint): the CSVs are truncated to the recorded
 * lengths, CSVs of branches started after the checkpoint are removed, points.json is rewritten
 * from the recorded special points, and solution files written after the checkpoint (and
 * temporary files a killed process left) are removed; the run then goes on as if never stopped.
 */
import { join, resolve } from 'node:path';
import { type BranchHelpers, Continuation, syncIndex } from '../continuation/engine.js';
import { BranchHelperThreads } from './branch-helpers.js';
import { WorkInterrupted } from '../linalg/lu.js';
import type { ContinuationSettings, EngineEvent } from '../continuation/types.js';
import type { CurveEvent } from '../continuation/curves/types.js';
import { curveColumns, curveEngine } from './curve-run.js';
import { stopReasonText } from '../continuation/types.js';
import type { Params, Problem } from '../problem/problem.js';
import { type PreparedCase, caseDocument } from './case.js';
import { removeCheckpoints } from './checkpoint.js';
import { makeFolder, removeIfEmpty } from './folders.js';
import { onLeaveAtOnce } from './leave.js';
import { FolderLock } from './lock.js';
import { type Manifest, keptMessage, readManifest, schemeManifest } from './manifest.js';
import { drawPlotsAfterRun } from './plots.js';
import { EventWriter, type RunLog, failureReasons } from './run-events.js';
import { type CheckpointContext, type CheckpointWritten, type ProgressInfo, type SyncState, syncEvery } from './run-hooks.js';
import { RunRecord, isoNow } from './run-record.js';
import { type ColumnPlan, type RunLedger, type RunStatus, RunDirectory, columnPlan, emptyLedger, readRunRecord, removeStaleFiles } from './run-directory.js';

export { failureReasons, syncEvery };
export type { CheckpointContext, CheckpointWritten, ProgressInfo };

/** What runCase needs from the continuation engine (src/continuation/engine.ts). */
export interface EngineLike {
  /** Branch events (the one-parameter engine) or curve events (the curve engine: curve runs). */
  events(): Generator<EngineEvent | CurveEvent, unknown>;
  snapshot(): unknown;
  /** When present: whether a snapshot taken now resumes cleanly. */
  readonly canSnapshot?: boolean;
  /**
   * When present: drop factorisations and reseed random numbers, so that the engine computes
   * from here exactly what an engine resumed from a snapshot taken now computes (sync points).
   */
  restartLinearAlgebra?(): void;
  /** When present: how many branches were traced by helper threads, and out of turn (BranchHelpers). */
  readonly shared?: { helpers: number; outOfTurn: number };
  /** When present: which sparse LU the continuation uses and why (recorded in run.json). */
  linearSolver?(): { backend: string; requested: string; reason: string } | undefined;
  dispose(): void;
}

export type EngineFactory = (
  problem: Problem,
  params: Params,
  settings: ContinuationSettings,
  /** `interrupt`: called before every factorisation; throws WorkInterrupted to abandon the step (see Continuation). */
  options: { start?: Float64Array; state?: unknown; interrupt?: () => void; helpers?: BranchHelpers },
) => EngineLike;

export const defaultEngine: EngineFactory = (problem, params, settings, options) =>
  new Continuation(problem, params, settings, options as ConstructorParameters<typeof Continuation>[3]);

export interface RunCaseOptions {
  /** Output folder; default: see outputDirectory(). */
  outDir?: string;
  /** Replace an earlier run in a non-empty output folder (see RunDirectory.create). */
  force?: boolean;
  /** The folder belongs to the caller (a study's grid folder): files of the user in it, without a run, stay. */
  alongside?: boolean;
  /**
   * Stop request (SIGINT/SIGTERM): the run stops between steps, files written, status `stopped`.
   * When the request can arrive while a step computes (the run in a worker thread, the flag
   * shared), the step is abandoned at its next factorisation and the run stops at the last step
   * it finished (its checkpoint is the last sync point, as for any stop).
   */
  signal?: { readonly aborted: boolean };
  /** Log lines (the CLI sends them to stderr). */
  log?: RunLog;
  /** Called after every accepted point is written. */
  progress?: (p: ProgressInfo) => void;
  /**
   * Called between steps after points were written (and once when stopping) so that a
   * checkpointer can decide to write; returns what it wrote, if anything.
   */
  checkpoint?: (c: CheckpointContext) => CheckpointWritten | undefined | void;
  /** The engine (tests pass fakes); default the real one. */
  engine?: EngineFactory;
  /** Initial guess for the start point (e.g. read from a saved solution). */
  start?: Float64Array;
  /** Continue an interrupted run (the resume command): reopen `outDir` with this state. */
  resume?: ResumeState;
  /**
   * Start an interrupted run over in its own folder (the resume command, when the run ended before
   * its first checkpoint): the run's files are removed (the user's stay), the times carried on.
   */
  restart?: { started: string; resumes: string[] };
  /**
   * The folder's lock, when the caller took it (the resume command takes it before it reads the
   * run's state); otherwise runCase takes it before touching the folder and releases it at the end.
   */
  lock?: FolderLock;
  /**
   * Processor cores the run may use (default 1): branches queued at branch points are traced
   * side by side in helper threads (branch-helpers.ts). The files do not depend on it.
   */
  cores?: number;
}

/** The state a resumed run continues from (a checkpoint's contents). */
export interface ResumeState {
  ledger: RunLedger;
  engineState: unknown;
  started: string;
  previousSeconds?: number;
  resumes?: string[];
  checkpoint?: CheckpointWritten;
}

export interface RunResult {
  status: Exclude<RunStatus, 'running'>;
  directory: string;
  /** The run.json document as written last. */
  record: Record<string, unknown>;
  ledger: RunLedger;
  failure?: string;
  seconds: number;
}

/**
 * Where a case's run goes: `outOverride` (relative to the current folder), else the case's
 * `output.directory` (relative to the case file), else `runs/<name>` in the current folder.
 */
export function outputDirectory(prepared: { baseDir: string; case: { name: string; output: { directory?: string } } }, outOverride?: string): string {
  if (outOverride !== undefined) return resolve(outOverride);
  if (prepared.case.output.directory !== undefined) return resolve(prepared.baseDir, prepared.case.output.directory);
  return resolve('runs', prepared.case.name);
}

const tick = (): Promise<void> => new Promise((r) => setImmediate(r));

/** A run directory opened for writing, with the run layer's state. */
interface OpenRun {
  outDir: string;
  dir: RunDirectory;
  ledger: RunLedger;
  plan: ColumnPlan;
}

/** Run a prepared case to the end (or to a stop request); never throws for numerical failures. */
export async function runCase(prepared: PreparedCase, options: RunCaseOptions = {}): Promise<RunResult> {
  const t0 = Date.now();
  const outDir = options.outDir !== undefined ? resolve(options.outDir) : outputDirectory(prepared);
  const log = options.log ?? (() => {});
  // 1. the only step that may refuse (bad output folder, a writer already there) happens before
  //    anything is written; the folder's lock is held from here to the end
  const { run, lock } = takeFolder(outDir, options, () =>
    options.resume
      ? resumeRunFolder(prepared, outDir, options.resume)
      : options.restart
        ? restartRunFolder(prepared, outDir)
        : prepareRunFolder(prepared, outDir, { force: options.force === true, alongside: options.alongside === true }, log),
  );
  let unregister: (() => void) | undefined;
  try {
    // 2. run.json says `running` from here on, and lists each file before it is created
    const resume = options.resume ?? options.restart;
    const record = new RunRecord(prepared, run.plan, run.ledger, run.dir.manifest, {
      t0,
      started: resume?.started ?? isoNow(),
      resumes: [...(resume?.resumes ?? []), ...(resume ? [isoNow()] : [])],
      previousSeconds: options.resume?.previousSeconds ?? 0,
    });
    record.lastCheckpoint = options.resume?.checkpoint;
    run.dir.onManifestChange(() => record.write(run.dir));
    record.write(run.dir);
    // leaving at once (a second Ctrl-C): run.json says `stopped` (resume goes on from the last checkpoint)
    unregister = onLeaveAtOnce((reason) => {
      record.status = 'stopped';
      record.note = reason;
      record.write(run.dir);
      // the process is on its way out: the folder's lock goes, whoever took it (a caller's too)
      (lock ?? options.lock)?.release();
    });
    // a resumed run's points.json may hold points found after the checkpoint: rewrite it
    run.dir.writePoints(prepared.settings.parameter, run.ledger.specials);
    // 3. the continuation
    await driveEngine(prepared, run, record, options);
    // 4. the end
    return finishRun(prepared, run, record, log);
  } finally {
    unregister?.();
    lock?.release();
  }
}

/**
 * Take the folder for writing: create it if need be, take its lock (unless the caller holds it),
 * then `open` it. On a refusal the lock is released and a folder made here removed again.
 */
function takeFolder(outDir: string, options: RunCaseOptions, open: () => OpenRun): { run: OpenRun; lock: FolderLock | undefined } {
  const continuing = options.resume !== undefined || options.restart !== undefined;
  const made = continuing || options.lock ? undefined : makeFolder(outDir);
  let lock: FolderLock | undefined;
  try {
    lock = options.lock ? undefined : FolderLock.acquire(outDir, { purpose: continuing ? 'resume' : options.force ? 'run --force' : 'run' });
    return { run: open(), lock };
  } catch (e) {
    lock?.release();
    if (made) removeIfEmpty(outDir, made);
    throw e;
  }
}

/** Step 1 of a new run: the output folder emptied of an earlier run (with `force`; the user's files stay). */
function prepareRunFolder(prepared: PreparedCase, outDir: string, folder: { force: boolean; alongside: boolean }, log: RunLog): OpenRun {
  const plan = columnPlan(prepared.problem, prepared.settings.parameter, prepared.case.stability.eigenvalues, curveColumns(prepared));
  const dir = RunDirectory.create(outDir, folder);
  if (dir.kept.length) log('info', keptMessage(dir.kept, 'run'));
  return { outDir, dir, ledger: emptyLedger(), plan };
}

/** The files a run in `outDir` wrote so far (run.json `files`; runs without one: every name of the scheme). */
export function runManifest(outDir: string): Manifest {
  const run = readRunRecord(outDir);
  const m = run ? readManifest(run) : undefined;
  return m === undefined || typeof m === 'string' ? schemeManifest(outDir) : m;
}

/** Step 1 of a run started over (it ended before its first checkpoint): the run's own files removed. */
function restartRunFolder(prepared: PreparedCase, outDir: string): OpenRun {
  const plan = columnPlan(prepared.problem, prepared.settings.parameter, prepared.case.stability.eigenvalues, curveColumns(prepared));
  const dir = RunDirectory.restart(outDir, runManifest(outDir));
  return { outDir, dir, ledger: emptyLedger(), plan };
}

/** Step 1 of a resumed run: the folder cut back to what the checkpoint's ledger records. */
function resumeRunFolder(prepared: PreparedCase, outDir: string, resume: ResumeState): OpenRun {
  const plan = columnPlan(prepared.problem, prepared.settings.parameter, prepared.case.stability.eigenvalues, curveColumns(prepared));
  const ledger = structuredClone(resume.ledger);
  const manifest = runManifest(outDir);
  const dir = RunDirectory.reopen(outDir, ledger, () => plan.columns, manifest);
  removeUnrecorded(outDir, ledger, manifest);
  return { outDir, dir, ledger, plan };
}

/**
 * Step 3: drive the engine to its end, a stop request or an error, writing its events, taking
 * sync points and calling the checkpoint hook between steps. Sets the record's status (and
 * failure); never throws for numerical failures.
 */
async function driveEngine(prepared: PreparedCase, run: OpenRun, record: RunRecord, options: RunCaseOptions): Promise<void> {
  const { problem, params, settings } = prepared;
  const { dir, ledger, plan } = run;
  const log = options.log ?? (() => {});
  let engine: EngineLike | undefined;
  const tc = Date.now();
  // run.json is rewritten at branch starts and ends, and at least this often in between, so that
  // its counts and timings stay current during long branches
  const refreshMs = 10_000;
  const writer = new EventWriter(prepared, dir, plan, ledger, log, () => record.write(dir));

  const caseDoc = caseDocument(prepared.case);
  // a resumed run starts at the sync point its checkpoint was taken at
  let lastSync: SyncState | undefined = options.resume ? { ledger: structuredClone(ledger), snapshot: options.resume.engineState, points: ledger.points } : undefined;
  let lastSyncPoints = options.resume ? ledger.points : -1;
  const context = (reason: 'point' | 'stop', sync = false): CheckpointContext => ({
    reason,
    sync,
    ...(lastSync ? { lastSync } : {}),
    directory: dir,
    ledger,
    canSnapshot: between(),
    snapshot: () => {
      if (sync && lastSync) return lastSync.snapshot;
      if (!engine) throw new Error('no engine to snapshot');
      return engine.snapshot();
    },
    caseDocument: caseDoc,
    run: { started: record.times.started, seconds: () => record.seconds(), caseFile: prepared.file ?? null, resumes: record.times.resumes },
  });
  const checkpoint = (reason: 'point' | 'stop', sync = false): void => {
    const w = options.checkpoint?.(context(reason, sync));
    if (w) record.lastCheckpoint = w;
  };
  /** A point of the step now ending sits at a sync index of its branch (syncIndex). */
  let syncDue = false;
  /** Whether the moment (between steps) is a sync point; if so the engine is restarted there. */
  const syncHere = (): boolean => {
    const points = ledger.points;
    const due = syncDue && points !== lastSyncPoints;
    syncDue = false;
    if (!due || !engine) return false;
    lastSyncPoints = points;
    lastSync = { ledger: structuredClone(ledger), snapshot: engine.snapshot(), points };
    engine.restartLinearAlgebra?.();
    return true;
  };
  /** Ledger point count at the last checkpoint-hook call. */
  let hookPoints = ledger.points;
  /** A step was abandoned half-way (WorkInterrupted): the engine's state is not a state to keep. */
  let interrupted = false;
  const between = (): boolean => !interrupted && (engine?.canSnapshot ?? true);

  let stopped = false;
  const signal = options.signal;
  const interrupt = signal
    ? (): void => {
        if (signal.aborted) throw new WorkInterrupted('stop requested');
      }
    : undefined;
  // helper threads for the branches after branch points (the one-parameter engine only)
  const helpers = options.engine || prepared.curve ? undefined : BranchHelperThreads.open(prepared, options.cores ?? 1, log);
  try {
    engine = (options.engine ?? (prepared.curve ? curveEngine(prepared) : defaultEngine))(problem, params, settings, {
      ...((options.start ?? prepared.start) ? { start: options.start ?? prepared.start!.u } : {}),
      ...(options.resume ? { state: options.resume.engineState } : {}),
      ...(interrupt ? { interrupt } : {}),
      ...(helpers ? { helpers } : {}),
    });
    const events = engine.events();
    try {
      for (;;) {
        // a stop request is honoured between steps (a step's events are already computed:
        // finishing them costs nothing and keeps the files and the engine state in step)
        if (signal?.aborted && between()) {
          stopped = true;
          break;
        }
        let r: IteratorResult<EngineEvent | CurveEvent, unknown>;
        try {
          r = events.next();
        } catch (e) {
          if (!(e instanceof WorkInterrupted)) throw e;
          // the step in progress was abandoned: its state is half-made, never to be snapshotted
          interrupted = true;
          stopped = true;
          break;
        }
        if (r.done) break;
        writer.handle(r.value);
        if (!record.linearSolver && r.value.type === 'point') {
          const d = engine.linearSolver?.();
          if (d) record.linearSolver = { backend: d.backend, requested: d.requested, reason: d.reason };
        }
        if (r.value.type === 'point') {
          const p = r.value.point;
          if (syncIndex(p.index, syncEvery)) syncDue = true;
          options.progress?.({ branch: p.branch, index: p.index, parameter: p.parameter, step: p.step, points: ledger.points, maxPoints: settings.maxPoints });
        }
        if (ledger.points > hookPoints && between()) {
          hookPoints = ledger.points;
          checkpoint('point', syncHere());
          if (Date.now() - record.lastWritten > refreshMs) {
            record.continuationSeconds = (Date.now() - tc) / 1000;
            record.write(dir);
          }
          // let signal handlers and timers run between steps
          await tick();
        }
      }
    } finally {
      // let the engine clean up if we left early
      if (stopped) events.return(undefined);
    }
    record.continuationSeconds = (Date.now() - tc) / 1000;
    if (stopped) {
      checkpoint('stop');
      record.status = 'stopped';
      for (const b of ledger.branches) {
        if (b.stopReason === undefined) {
          b.stopReason = 'stopped';
          b.stopText = stopReasonText.stopped;
          b.message = 'the run can go on with branchline resume';
        }
      }
      log('warning', 'stopped on request');
    } else {
      const first = ledger.branches[0];
      if (!first) {
        record.status = 'failed';
        record.failure = 'the engine produced no branch';
      } else if (first.stopReason !== undefined && (failureReasons as readonly string[]).includes(first.stopReason)) {
        record.status = 'failed';
        record.failure = `branch ${first.id} ended: ${first.message || first.stopText}`;
      } else {
        record.status = 'finished';
      }
    }
  } catch (e) {
    record.continuationSeconds = (Date.now() - tc) / 1000;
    record.status = 'failed';
    record.failure = e instanceof Error ? e.message : String(e);
    log('warning', `run failed: ${record.failure}`);
  } finally {
    if (helpers && engine?.shared) {
      const s = engine.shared;
      log('info', `${options.cores} cores: ${s.helpers} branch${s.helpers === 1 ? '' : 'es'} traced in helper threads, ${s.outOfTurn} out of turn in this one`);
    }
    try {
      helpers?.dispose();
      engine?.dispose();
    } catch {
      /* nothing more to do */
    }
  }
}

/** Step 4: close the files, write the final points.json and run.json, clean up, draw the plots. */
function finishRun(prepared: PreparedCase, run: OpenRun, record: RunRecord, log: RunLog): RunResult {
  const { dir, ledger, outDir } = run;
  const final = record.document();
  try {
    dir.close();
    dir.writePoints(prepared.settings.parameter, ledger.specials);
    dir.writeRunJson(final);
  } catch (e) {
    // a full disk may refuse even these small files: the run's checkpoint still resumes it
    log('warning', `the final run.json could not be written: ${e instanceof Error ? e.message : String(e)}`);
  }
  const status = record.status as Exclude<RunStatus, 'running'>;
  // a finished run has nothing left to resume
  if (status === 'finished') removeCheckpoints(outDir);
  drawPlotsAfterRun(outDir, log);
  return {
    status,
    directory: outDir,
    record: final,
    ledger,
    ...(record.failure !== undefined ? { failure: record.failure } : {}),
    seconds: record.seconds(),
  };
}

/**
 * Before a resumed run goes on: remove solution files the checkpoint does not account for
 * (written after it; the resumed run writes them again) and temporary files of atomic writes a
 * killed process left behind.
 */
function removeUnrecorded(dir: string, ledger: RunLedger, manifest: Manifest): void {
  const keep = new Set<string>();
  for (const s of ledger.specials) if (typeof s.solution === 'string') keep.add(s.solution);
  for (const b of ledger.branches) for (let i = 0; i < b.points; i++) keep.add(`solutions/branch-${b.id}-point-${i}.npy`);
  // only the run's own files: a user's file in the folder is never touched
  removeStaleFiles(dir, ['solutions', 'branches'], (rel, e) => manifest.covers(rel + e) && (/^\..*\.tmp$/.test(e) || (rel === 'solutions/' && e.endsWith('.npy') && !keep.has(rel + e))));
}
