/**
 * Run a prepared case: create the run directory, converge the start point and continue (the
 * engine), write every accepted point and special point as it arrives, and keep run.json's
 * status true at every moment (running → finished | stopped | failed).
 *
 * Free of command-line concerns (no process.exit, no argument parsing, no stdout): the `run`
 * command, `resume`, batches and worker processes all call `runCase`.
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
import { readdirSync, rmSync } from 'node:fs';
import { hostname } from 'node:os';
import { join, resolve } from 'node:path';
import { Continuation } from '../continuation/engine.js';
import type { BranchPoint, ContinuationSettings, EngineEvent, StopReason } from '../continuation/types.js';
import { stopReasonText } from '../continuation/types.js';
import type { Params, Problem } from '../problem/problem.js';
import { type PreparedCase, caseDocument } from './case.js';
import {
  type BranchRecord,
  type ColumnPlan,
  type RunLedger,
  type RunStatus,
  RunDirectory,
  columnPlan,
  emptyLedger,
  hasStability,
  pointRow,
  runFormat,
  runFormatVersion,
  specialRecord,
} from './run-directory.js';
import { softwareVersion } from './version.js';
import { removeCheckpoints } from './checkpoint.js';
import { drawPlotsAfterRun } from './plots.js';

/** What runCase needs from the continuation engine (src/continuation/engine.ts). */
export interface EngineLike {
  events(): Generator<EngineEvent, unknown>;
  snapshot(): unknown;
  /** When present: whether a snapshot taken now resumes cleanly. */
  readonly canSnapshot?: boolean;
  /**
   * When present: drop factorisations and reseed random numbers, so that the engine computes
   * from here exactly what an engine resumed from a snapshot taken now computes (sync points).
   */
  restartLinearAlgebra?(): void;
  dispose(): void;
}

/**
 * Sync points: the engine starts its linear algebra afresh after the first point and then about
 * every this many points (whenever the run's point count passes a multiple of it, between
 * steps). Checkpoints are taken only at sync points: a run resumed from one repeats the
 * uninterrupted run bit for bit (kept pivot orders and the eigen solver's random start vectors
 * would otherwise differ in the last digits, and eigenvalues near a collision or located Hopf
 * points magnify such differences up to their tolerances). The cost is one fresh factorisation
 * per sync point (a few per cent at most).
 */
export const syncEvery = 5;

export type EngineFactory = (
  problem: Problem,
  params: Params,
  settings: ContinuationSettings,
  options: { start?: Float64Array; state?: unknown },
) => EngineLike;

export const defaultEngine: EngineFactory = (problem, params, settings, options) =>
  new Continuation(problem, params, settings, options as ConstructorParameters<typeof Continuation>[3]);

/** Stop reasons that make a run `failed` when they end the first branch. */
export const failureReasons: readonly StopReason[] = ['newton-failed', 'non-finite', 'minimum-step'];

export interface ProgressInfo {
  branch: number;
  /** Point index on the branch. */
  index: number;
  parameter: number;
  step: number;
  /** Points written in this run so far (all branches). */
  points: number;
  maxPoints: number;
}

export interface CheckpointContext {
  /** 'point': points were written since the last call (called between steps); 'stop': the run is stopping on request. */
  reason: 'point' | 'stop';
  /** This moment is a sync point (see `syncEvery`): a checkpoint of it resumes bit for bit. */
  sync: boolean;
  /** The ledger and engine state at the last sync point (for a stop between sync points), with its point count. */
  lastSync?: { ledger: RunLedger; snapshot: unknown; points: number };
  directory: RunDirectory;
  /** The run layer's own state (branches, special points, CSV byte lengths): plain, checkpointable. */
  ledger: RunLedger;
  /** Whether the engine can be snapshotted now (between steps). */
  canSnapshot: boolean;
  /** The engine's state (plain object with Float64Arrays). */
  snapshot(): unknown;
  /** The resolved case in case-file form (what a resume reads back). */
  caseDocument: Record<string, unknown>;
  run: {
    started: string;
    /** Seconds of work so far, earlier sessions included. */
    seconds(): number;
    caseFile: string | null;
    /** When the run was resumed before (ISO times). */
    resumes: string[];
  };
}

/** What a checkpoint hook reports when it wrote one (recorded in run.json). */
export interface CheckpointWritten {
  file: string;
  sequence: number;
  written: string;
  points: number;
}

export interface RunCaseOptions {
  /** Output folder; default: see outputDirectory(). */
  outDir?: string;
  /** Replace an earlier run in a non-empty output folder (see RunDirectory.create). */
  force?: boolean;
  /** Stop request (SIGINT/SIGTERM): the current event is finished, files written, status `stopped`. */
  signal?: AbortSignal;
  /** Log lines (the CLI sends them to stderr). */
  log?: (level: 'info' | 'warning', message: string) => void;
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
  resume?: { ledger: RunLedger; engineState: unknown; started: string; previousSeconds?: number; resumes?: string[]; checkpoint?: CheckpointWritten };
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
export function outputDirectory(prepared: PreparedCase, outOverride?: string): string {
  if (outOverride !== undefined) return resolve(outOverride);
  if (prepared.case.output.directory !== undefined) return resolve(prepared.baseDir, prepared.case.output.directory);
  return resolve('runs', prepared.case.name);
}

const tick = (): Promise<void> => new Promise((r) => setImmediate(r));

function isoNow(): string {
  return new Date().toISOString();
}

/** Run a prepared case to the end (or to a stop request); never throws for numerical failures. */
export async function runCase(prepared: PreparedCase, options: RunCaseOptions = {}): Promise<RunResult> {
  const t0 = Date.now();
  const { problem, params, settings } = prepared;
  const parameter = settings.parameter;
  const log = options.log ?? (() => {});
  const outDir = options.outDir !== undefined ? resolve(options.outDir) : outputDirectory(prepared);
  const stabilityColumnsOn = prepared.case.stability.eigenvalues > 0;
  const plan: ColumnPlan = columnPlan(problem, parameter, prepared.case.stability.eigenvalues);
  const ledger: RunLedger = options.resume ? structuredClone(options.resume.ledger) : emptyLedger();

  // the only step that may refuse (bad output folder) happens before anything is written
  const dir = options.resume
    ? RunDirectory.reopen(outDir, ledger, () => plan.columns)
    : RunDirectory.create(outDir, { force: options.force });
  if (options.resume) removeUnrecorded(outDir, ledger, prepared.case.output.solutions);

  const started = options.resume?.started ?? isoNow();
  const resumes = [...(options.resume?.resumes ?? []), ...(options.resume ? [isoNow()] : [])];
  let lastCheckpoint: CheckpointWritten | undefined = options.resume?.checkpoint;
  const previousSeconds = options.resume?.previousSeconds ?? 0;
  const description = problem.describe();
  let status: RunStatus = 'running';
  let failure: string | undefined;
  let continuationSeconds = 0;
  const solutionsMode = prepared.case.output.solutions;
  const kindCount = new Map<string, number>();
  for (const s of ledger.specials) {
    const key = `${s.branch}:${s.kind}`;
    kindCount.set(key, (kindCount.get(key) ?? 0) + 1);
  }

  let lastRecord = Date.now();
  const record = (): Record<string, unknown> => ({
    format: runFormat,
    'format-version': runFormatVersion,
    software: { ...softwareVersion(), node: process.version },
    status,
    ...(failure !== undefined ? { failure } : {}),
    'case-file': prepared.file ?? null,
    started,
    ended: status === 'running' ? null : isoNow(),
    ...(resumes.length ? { resumed: resumes } : {}),
    // who writes this run while it goes (resume refuses to start a second writer)
    ...(status === 'running' ? { process: { pid: process.pid, host: hostname() } } : {}),
    ...(lastCheckpoint && status !== 'finished' ? { checkpoint: { ...lastCheckpoint } } : {}),
    problem: {
      model: description.model,
      summary: description.summary,
      fields: description.fields,
      axes: description.axes.map((a) => ({ name: a.name, intervals: a.intervals, length: a.length, h: a.h, nodes: a.nodes })),
      unknowns: problem.size,
      'grid-unknowns': problem.gridUnknowns,
      'extra-unknowns': problem.extraUnknowns.map((e) => e.name),
      monitors: Object.fromEntries(problem.monitors.map((m) => [m.name, m.description])),
      ...(description.layout ? { layout: description.layout } : {}),
    },
    'start-parameters': { ...params },
    'continuation-parameter': parameter,
    columns: plan.columns,
    branches: ledger.branches.map((b) => ({
      id: b.id,
      depth: b.depth,
      origin: b.origin,
      file: b.file,
      points: b.points,
      ...(b.first !== undefined ? { 'first-value': b.first, 'last-value': b.last } : {}),
      ...(b.stopReason !== undefined ? { 'stop-reason': b.stopReason, 'stop-text': b.stopText, message: b.message } : {}),
    })),
    counts: {
      branches: ledger.branches.length,
      points: ledger.points,
      folds: ledger.specials.filter((s) => s.kind === 'fold').length,
      'branch-points': ledger.specials.filter((s) => s.kind === 'branch-point').length,
      hopf: ledger.specials.filter((s) => s.kind === 'hopf').length,
      ends: ledger.specials.filter((s) => s.kind === 'end').length,
      solutions: ledger.solutions,
    },
    timings: {
      'continuation-seconds': previousSeconds + continuationSeconds,
      'total-seconds': previousSeconds + (Date.now() - t0) / 1000,
    },
    ...(ledger.warnings.length ? { warnings: ledger.warnings } : {}),
    ...(prepared.caution ? { caution: prepared.caution } : {}),
    case: caseDocument(prepared.case),
  });

  const writeRecord = (): void => {
    dir.writeRunJson(record());
    lastRecord = Date.now();
  };
  writeRecord();
  // a resumed run's points.json may hold points found after the checkpoint: rewrite it
  dir.writePoints(parameter, ledger.specials);
  let stabilityWarned = false;

  const paramsAt = (value: number): Params => ({ ...params, [parameter]: value });
  const branchOf = (id: number): BranchRecord | undefined => ledger.branches.find((b) => b.id === id);
  let engine: EngineLike | undefined;
  const tc = Date.now();
  // run.json is rewritten at branch starts and ends, and at least this often in between, so that
  // its counts and timings stay current during long branches
  const refreshMs = 10_000;

  const handle = (ev: EngineEvent): void => {
    switch (ev.type) {
      case 'branch-start': {
        const info = ev.branch;
        const origin: BranchRecord['origin'] =
          info.origin.kind === 'start'
            ? { kind: 'start', direction: settings.direction }
            : { kind: 'branch-point', branch: info.origin.branch, value: info.origin.value };
        if (origin.kind === 'branch-point') {
          const bp = ledger.specials.find((s) => s.kind === 'branch-point' && Array.isArray(s['new-branches']) && (s['new-branches'] as number[]).includes(info.id));
          const d = bp?.['new-branch-direction'];
          if (d === 'increase' || d === 'decrease' || d === 'both') origin.direction = d;
        }
        ledger.branches.push({ id: info.id, depth: info.depth, origin, file: RunDirectory.branchFile(info.id), points: 0 });
        dir.openBranch(info.id, plan.columns, ledger);
        log('info', `branch ${info.id} started ${origin.kind === 'start' ? 'from the start point' : `at the branch point ${parameter} = ${origin.value} on branch ${origin.branch}`}`);
        writeRecord();
        break;
      }
      case 'point': {
        const p: BranchPoint = ev.point;
        dir.appendRow(p.branch, pointRow(plan, problem, p), ledger);
        if (stabilityColumnsOn && !stabilityWarned && !hasStability(p)) {
          stabilityWarned = true;
          const w = `stability.eigenvalues = ${prepared.case.stability.eigenvalues}, but the points carry no stability data; the stability columns stay empty`;
          ledger.warnings.push(w);
          log('warning', w);
        }
        if (solutionsMode === 'all') {
          dir.writeSolution(`branch-${p.branch}-point-${p.index}`, problem, p.u, paramsAt(p.parameter));
          ledger.solutions++;
        }
        ledger.points++;
        const b = branchOf(p.branch);
        if (b) {
          b.points++;
          if (b.first === undefined) b.first = p.parameter;
          b.last = p.parameter;
          // (a branch's first point at a branch point is singular there: its eigenvalue count says nothing)
          if (p.stability && !(p.index === 0 && b.origin.kind === 'branch-point')) {
            const st = (b.stability ??= []);
            const last = st[st.length - 1];
            if (last && last.stable === p.stability.stable && last.unstable === p.stability.unstableCount) last.to = p.parameter;
            else st.push({ from: p.parameter, to: p.parameter, stable: p.stability.stable, unstable: p.stability.unstableCount });
          }
        }
        break;
      }
      case 'special': {
        const s = ev.point;
        const key = `${s.branch}:${s.kind}`;
        const k = (kindCount.get(key) ?? 0) + 1;
        kindCount.set(key, k);
        let file: string | undefined;
        if (solutionsMode !== 'none') {
          file = dir.writeSolution(`branch-${s.branch}-${s.kind}-${k}`, problem, s.u, paramsAt(s.value));
          ledger.solutions++;
        }
        ledger.specials.push(specialRecord(problem, parameter, s, file));
        dir.writePoints(parameter, ledger.specials);
        if (s.kind !== 'end') log('info', `${s.kind.replace('-', ' ')} on branch ${s.branch} at ${parameter} = ${s.value}`);
        break;
      }
      case 'branch-end': {
        const b = branchOf(ev.branch);
        if (b) {
          b.stopReason = ev.reason;
          b.stopText = stopReasonText[ev.reason] ?? ev.reason;
          b.message = ev.message;
        }
        dir.closeBranch(ev.branch);
        log(failureReasons.includes(ev.reason) ? 'warning' : 'info', `branch ${ev.branch} ended: ${ev.message || stopReasonText[ev.reason]}`);
        writeRecord();
        break;
      }
      case 'log':
        log(ev.level, ev.message);
        if (ev.level === 'warning') ledger.warnings.push(ev.message);
        break;
    }
  };

  const caseDoc = caseDocument(prepared.case);
  // a resumed run starts at the sync point its checkpoint was taken at
  let lastSync: { ledger: RunLedger; snapshot: unknown; points: number } | undefined = options.resume
    ? { ledger: structuredClone(ledger), snapshot: options.resume.engineState, points: ledger.points }
    : undefined;
  let lastSyncPoints = options.resume ? ledger.points : -1;
  const context = (reason: 'point' | 'stop', sync = false): CheckpointContext => ({
    reason,
    sync,
    ...(lastSync ? { lastSync } : {}),
    directory: dir,
    ledger,
    canSnapshot: engine?.canSnapshot ?? true,
    snapshot: () => {
      if (sync && lastSync) return lastSync.snapshot;
      if (!engine) throw new Error('no engine to snapshot');
      return engine.snapshot();
    },
    caseDocument: caseDoc,
    run: { started, seconds: () => previousSeconds + (Date.now() - t0) / 1000, caseFile: prepared.file ?? null, resumes },
  });
  const checkpoint = (reason: 'point' | 'stop', sync = false): void => {
    const w = options.checkpoint?.(context(reason, sync));
    if (w) lastCheckpoint = w;
  };
  /** Whether the moment (between steps) is a sync point; if so the engine is restarted there. */
  const syncHere = (): boolean => {
    const points = ledger.points;
    const due = lastSyncPoints < 0 ? points >= 1 : Math.floor(points / syncEvery) > Math.floor(lastSyncPoints / syncEvery);
    if (!due || !engine) return false;
    lastSyncPoints = points;
    lastSync = { ledger: structuredClone(ledger), snapshot: engine.snapshot(), points };
    engine.restartLinearAlgebra?.();
    return true;
  };
  /** Ledger point count at the last checkpoint-hook call. */
  let hookPoints = ledger.points;
  const between = (): boolean => engine?.canSnapshot ?? true;

  let stopped = false;
  try {
    engine = (options.engine ?? defaultEngine)(problem, params, settings, {
      ...((options.start ?? prepared.start) ? { start: options.start ?? prepared.start!.u } : {}),
      ...(options.resume ? { state: options.resume.engineState } : {}),
    });
    const events = engine.events();
    try {
      for (;;) {
        // a stop request is honoured between steps only (a step's events are already computed:
        // finishing them costs nothing and keeps the files and the engine state in step)
        if (options.signal?.aborted && between()) {
          stopped = true;
          break;
        }
        const r = events.next();
        if (r.done) break;
        handle(r.value);
        if (r.value.type === 'point') {
          const p = r.value.point;
          options.progress?.({ branch: p.branch, index: p.index, parameter: p.parameter, step: p.step, points: ledger.points, maxPoints: settings.maxPoints });
        }
        if (ledger.points > hookPoints && between()) {
          hookPoints = ledger.points;
          checkpoint('point', syncHere());
          if (Date.now() - lastRecord > refreshMs) {
            continuationSeconds = (Date.now() - tc) / 1000;
            writeRecord();
          }
          // let signal handlers and timers run between steps
          await tick();
        }
      }
    } finally {
      // let the engine clean up if we left early
      if (stopped) events.return(undefined);
    }
    continuationSeconds = (Date.now() - tc) / 1000;
    if (stopped) {
      checkpoint('stop');
      status = 'stopped';
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
        status = 'failed';
        failure = 'the engine produced no branch';
      } else if (first.stopReason !== undefined && failureReasons.includes(first.stopReason)) {
        status = 'failed';
        failure = `branch ${first.id} ended: ${first.message || first.stopText}`;
      } else {
        status = 'finished';
      }
    }
  } catch (e) {
    continuationSeconds = (Date.now() - tc) / 1000;
    status = 'failed';
    failure = e instanceof Error ? e.message : String(e);
    log('warning', `run failed: ${failure}`);
  } finally {
    try {
      engine?.dispose();
    } catch {
      /* nothing more to do */
    }
  }

  dir.close();
  dir.writePoints(parameter, ledger.specials);
  const final = record();
  dir.writeRunJson(final);
  // a finished run has nothing left to resume
  if (status === 'finished') removeCheckpoints(outDir);
  drawPlotsAfterRun(outDir, log);
  return {
    status: status as Exclude<RunStatus, 'running'>,
    directory: outDir,
    record: final,
    ledger,
    ...(failure !== undefined ? { failure } : {}),
    seconds: previousSeconds + (Date.now() - t0) / 1000,
  };
}

/**
 * Before a resumed run goes on: remove solution files the checkpoint does not account for
 * (written after it; the resumed run writes them again) and temporary files of atomic writes a
 * killed process left behind.
 */
function removeUnrecorded(dir: string, ledger: RunLedger, solutions: string): void {
  const keep = new Set<string>();
  for (const s of ledger.specials) if (typeof s.solution === 'string') keep.add(s.solution);
  if (solutions === 'all') {
    for (const b of ledger.branches) for (let i = 0; i < b.points; i++) keep.add(`solutions/branch-${b.id}-point-${i}.npy`);
  }
  const temporary = /^\..*\.tmp$/;
  for (const [folder, rel] of [
    [dir, ''],
    [join(dir, 'solutions'), 'solutions/'],
    [join(dir, 'branches'), 'branches/'],
  ] as const) {
    let entries: string[];
    try {
      entries = readdirSync(folder);
    } catch {
      continue;
    }
    for (const e of entries) {
      const stale = temporary.test(e) || (rel === 'solutions/' && e.endsWith('.npy') && !keep.has(rel + e));
      if (stale) rmSync(join(folder, e), { force: true });
    }
  }
}
