/**
 * Run a time integration to a steady state (`branchline settle`) and write its folder:
 *
 *   run.json             as for runs (format, software, status running | finished | stopped |
 *                        failed, times, problem, start parameters, the resolved case), with
 *                        kind `settle`, the `outcome` (steady, oscillating, drifting, blown-up,
 *                        failed) in words and numbers, the `final` state (file, time, residual,
 *                        monitors, extra unknowns, and its stability when eigenvalues were asked
 *                        for), the initial state (where it came from, the noise seed), the
 *                        snapshots, counts (steps, rejections, factorisations) and timings
 *   monitors.csv         one row per accepted step: step, time, time-step, the monitors, extra
 *                        unknowns, residual, newton-iterations, factorised
 *   snapshots/*.npy      the state at t = 0 and at the scheduled times (node arrays, as in runs)
 *   solutions/final.npy  the final state (polished by Newton when steady)
 *   monitors.svg, plots/initial.svg, plots/final.svg   the pictures (./settle-plots.ts)
 *
 * Checkpoints, resume and signals follow the runs (./run-case.ts, ./checkpoint.ts): the linear
 * algebra restarts at sync points (the first step, then every `settleSyncEvery` steps), and
 * checkpoints are written only there, so a resumed integration repeats the uninterrupted one bit
 * for bit; a stop request is honoured between steps and checkpoints the last sync point. No
 * command-line concerns here (no process.exit, no stdout).
 */
import { mkdirSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { TimeIntegration, type IntegratorState } from '../dynamics/integrator.js';
import { type SteadyStability, stabilityWords } from '../dynamics/stability.js';
import { type DynamicsCounters, type Outcome, outcomeText } from '../dynamics/types.js';
import { type CheckpointDocument, checkpointDocument, checkpointFile, previousCheckpointFile, removeCheckpoints, writeCheckpoint } from './checkpoint.js';
import { InputError } from './errors.js';
import { makeFolder, removeIfEmpty } from './folders.js';
import { onLeaveAtOnce } from './leave.js';
import { FolderLock } from './lock.js';
import { Manifest, keptMessage, readManifest } from './manifest.js';
import { RunDirectory, type RunStatus, emptyLedger, extraValues, readRunRecord, removeStaleFiles } from './run-directory.js';
import { type PreparedSettleCase, prepareSettleCaseObject, settleCaseDocument } from './settle-case.js';
import { drawSettlePlots } from './settle-plots.js';
import { isoNow, problemDocument, runHeader } from './run-record.js';
import { CsvWriter, type CsvCell, formatNumber, writeJsonAtomic, writeNpy } from './writers.js';
import { checkRecordedLengths, resumableCheckpoint } from './batch.js';
import { type CodeModelChoice, storedCaseOptions } from './resume-code.js';
import { outputDirectory } from './run-case.js';

/** Sync points: the first step, then every this many accepted steps (see the header). */
export const settleSyncEvery = 50;

export const monitorsFile = 'monitors.csv';

export interface SettleProgress {
  step: number;
  time: number;
  end: number;
  stepSize: number;
  residual: number;
  steadyTolerance: number;
  maxSteps: number;
}

/** What a checkpoint of a settle run holds besides the integrator's state. */
interface SettleLedger {
  snapshots: { time: number; file: string }[];
  warnings: string[];
  csvBytes: number;
}

export interface SettleResume {
  checkpoint: CheckpointDocument;
  file: string;
  skipped: string[];
  previousStatus: string;
}

export interface SettleOptions {
  outDir?: string;
  force?: boolean;
  signal?: AbortSignal;
  log?: (level: 'info' | 'warning', message: string) => void;
  progress?: (p: SettleProgress) => void;
  resume?: SettleResume;
  /** The folder's lock, when the caller took it (resume); otherwise settleCase takes it. */
  lock?: FolderLock;
}

export interface SettleResult {
  status: Exclude<RunStatus, 'running'>;
  outcome?: Outcome;
  stability?: SteadyStability;
  directory: string;
  record: Record<string, unknown>;
  failure?: string;
  seconds: number;
}

/** Output folder: `outOverride`, else the case's output.directory (relative to the case file), else runs/<name>. */
export const settleDirectory = outputDirectory;

const tick = (): Promise<void> => new Promise((r) => setImmediate(r));

/** `time-0.05.npy`: snapshot files are named by their time. */
export function snapshotName(time: number): string {
  return `snapshots/time-${formatNumber(time)}.npy`;
}

/** Columns of monitors.csv. */
export function settleColumns(prepared: PreparedSettleCase): { columns: string[]; monitors: string[]; extras: string[] } {
  const monitors = prepared.problem.monitors.map((m) => m.name);
  const extras = prepared.problem.extraUnknowns.map((e) => e.name).filter((n) => !monitors.includes(n));
  return { columns: ['step', 'time', 'time-step', ...monitors, ...extras, 'residual', 'newton-iterations', 'factorised'], monitors, extras };
}

/**
 * Integrate a prepared settle case to its end (or a stop request); never throws for numerical
 * trouble. The folder's lock (lock.ts) is held throughout, taken here unless the caller holds it.
 */
export async function settleCase(prepared: PreparedSettleCase, options: SettleOptions = {}): Promise<SettleResult> {
  if (options.lock) return settleInFolder(prepared, options);
  const outDir = options.outDir !== undefined ? resolve(options.outDir) : settleDirectory(prepared);
  const made = options.resume ? undefined : makeFolder(outDir);
  let lock: FolderLock;
  try {
    lock = FolderLock.acquire(outDir, { purpose: options.resume ? 'resume' : options.force ? 'settle --force' : 'settle' });
  } catch (e) {
    if (made) removeIfEmpty(outDir, made);
    throw e;
  }
  try {
    return await settleInFolder(prepared, { ...options, outDir, lock });
  } finally {
    lock.release();
  }
}

/** The files a time integration writes (run.json `files`, see manifest.ts). */
export const settleFiles = ['run.json', monitorsFile, 'monitors.svg', 'snapshots/time-*.npy', 'solutions/final.npy', 'plots/initial.svg', 'plots/final.svg', checkpointFile, previousCheckpointFile];

async function settleInFolder(prepared: PreparedSettleCase, options: SettleOptions): Promise<SettleResult> {
  const t0 = Date.now();
  const { problem, params, time } = prepared;
  const log = options.log ?? (() => {});
  const outDir = options.outDir !== undefined ? resolve(options.outDir) : settleDirectory(prepared);
  const resume = options.resume;
  const saved = resume ? (resume.checkpoint.engine as { integrator: IntegratorState; settle: SettleLedger }) : undefined;
  // a new run: the folder policy of runs (empty, or --force over an earlier run of ours)
  if (!resume) {
    const created = RunDirectory.create(outDir, { force: options.force, folders: ['snapshots'] });
    if (created.kept.length) log('info', keptMessage(created.kept, 'run'));
  }
  const plan = settleColumns(prepared);
  const ledger: SettleLedger = saved ? structuredClone(saved.settle) : { snapshots: [], warnings: [], csvBytes: 0 };
  if (resume) removeUnrecorded(outDir, ledger);
  const csv = resume ? CsvWriter.reopen(join(outDir, monitorsFile), plan.columns, ledger.csvBytes) : CsvWriter.create(join(outDir, monitorsFile), plan.columns);
  ledger.csvBytes = csv.byteLength;

  const started = resume?.checkpoint.run.started ?? isoNow();
  const resumes = [...(resume?.checkpoint.run.resumes ?? []), ...(resume ? [isoNow()] : [])];
  const previousSeconds = resume?.checkpoint.run.seconds ?? 0;
  let sequence = resume?.checkpoint.sequence ?? 0;
  let lastCheckpoint = resume ? { file: resume.file, sequence, written: resume.checkpoint.written, steps: resume.checkpoint.ledger.points } : undefined;
  let status: RunStatus = 'running';
  let failure: string | undefined;
  let note: string | undefined;
  let outcome: Outcome | undefined;
  let final: Record<string, unknown> | undefined;
  let stability: SteadyStability | undefined;
  let counters: DynamicsCounters | undefined;
  let integrationSeconds = 0;
  const caseDoc = settleCaseDocument(prepared.case);
  const noise = prepared.case.initial?.noise;

  const record = (): Record<string, unknown> => ({
    ...runHeader({ status, ...(failure !== undefined ? { failure } : {}), ...(note !== undefined ? { note } : {}), caseFile: prepared.file ?? null, started, resumes, ...(lastCheckpoint ? { checkpoint: lastCheckpoint } : {}) }),
    kind: 'settle',
    problem: problemDocument(problem),
    'start-parameters': { ...params },
    'initial-state': { from: prepared.start?.from ?? "the model's initial guess", ...(noise ? { 'noise-seed': noise.seed } : {}) },
    method: 'variable-step BDF2 (order 2, L-stable), backward Euler first step',
    columns: plan.columns,
    ...(outcome ? { outcome: { ...outcome, text: outcomeText(outcome) } } : {}),
    ...(final ? { final } : {}),
    snapshots: ledger.snapshots,
    ...(counters
      ? {
          counts: {
            steps: counters.steps,
            rejected: counters.rejected,
            'newton-iterations': counters.newtonIterations,
            'newton-failures': counters.newtonFailures,
            residuals: counters.residuals,
            jacobians: counters.jacobians,
            factorisations: counters.factorisations,
            refactorisations: counters.refactorisations,
            solves: counters.solves,
            'polish-attempts': counters.polish.attempts,
            'polish-iterations': counters.polish.iterations,
            'polish-factorisations': counters.polish.factorisations,
            snapshots: ledger.snapshots.length,
          },
        }
      : {}),
    timings: { 'integration-seconds': previousSeconds + integrationSeconds, 'total-seconds': previousSeconds + (Date.now() - t0) / 1000 },
    ...(ledger.warnings.length ? { warnings: ledger.warnings } : {}),
    ...(prepared.caution ? { caution: prepared.caution } : {}),
    case: caseDoc,
    // every file the integration writes: what --force and resume may remove
    files: settleFiles,
  });
  const writeRecord = (): void => writeJsonAtomic(join(outDir, 'run.json'), record());
  writeRecord();
  // leaving at once (a second Ctrl-C): run.json says `stopped` (resume goes on from the last checkpoint)
  const unregisterLeave = onLeaveAtOnce((reason) => {
    status = 'stopped';
    note = reason;
    writeRecord();
    options.lock?.release();
  });

  const writeState = (rel: string, u: Float64Array): void => {
    mkdirSync(join(outDir, rel.split('/')[0]), { recursive: true });
    const { shape, data } = problem.toNodeArray(u, params);
    writeNpy(join(outDir, rel), shape, data);
  };

  let integration: TimeIntegration | undefined;
  let stopped = false;
  let lastSync: { state: IntegratorState; ledger: SettleLedger; steps: number } | undefined = saved
    ? { state: saved.integrator, ledger: structuredClone(ledger), steps: saved.integrator.counters.steps }
    : undefined;
  let lastSyncStep = saved ? saved.integrator.counters.steps : -1;
  // the last checkpoint's and the last run.json refresh's times (ms)
  let lastWritten = Date.now();
  let lastRecord = Date.now();
  let checkpointSteps = lastSync?.steps ?? 0;
  const tc = Date.now();

  const checkpoint = (state: IntegratorState, l: SettleLedger, reason: CheckpointDocument['reason']): void => {
    csv.sync();
    sequence++;
    const written = isoNow();
    const doc = checkpointDocument({
      sequence,
      written,
      reason,
      run: { started, seconds: previousSeconds + (Date.now() - t0) / 1000, caseFile: prepared.file ?? null, resumes: resumes.slice() },
      case: caseDoc,
      ledger: { ...emptyLedger(), points: state.counters.steps, solutions: l.snapshots.length, warnings: l.warnings.slice(), csvLengths: { [monitorsFile]: l.csvBytes } },
      engine: { integrator: state, settle: l },
    });
    writeCheckpoint(outDir, doc);
    lastCheckpoint = { file: checkpointFile, sequence, written, steps: state.counters.steps };
    lastWritten = Date.now();
    checkpointSteps = state.counters.steps;
  };

  try {
    integration = new TimeIntegration(problem, params, time, saved ? { state: saved.integrator } : prepared.start ? { start: prepared.start.u } : {});
    const events = integration.events();
    try {
      for (;;) {
        if (options.signal?.aborted && integration.canSnapshot) {
          stopped = true;
          break;
        }
        const r = events.next();
        if (r.done) break;
        const ev = r.value;
        switch (ev.type) {
          case 'start':
          case 'step': {
            const rec = ev.record;
            const row: CsvCell[] = [rec.step, rec.time, rec.stepSize];
            for (const m of plan.monitors) row.push(rec.monitors[m]);
            plan.extras.forEach((_n, i) => row.push(rec.u[problem.gridUnknowns + i]));
            row.push(rec.residual, rec.newtonIterations, rec.factorised);
            csv.append(row);
            ledger.csvBytes = csv.byteLength;
            if (ev.type === 'start') {
              const file = snapshotName(0);
              writeState(file, rec.u);
              ledger.snapshots.push({ time: 0, file });
              log('info', `integrating from ${prepared.start?.from ?? "the model's initial guess"} to t = ${time.end} at most`);
            } else {
              options.progress?.({ step: rec.step, time: rec.time, end: time.end, stepSize: rec.stepSize, residual: rec.residual, steadyTolerance: time.steadyTolerance, maxSteps: time.maxSteps });
            }
            break;
          }
          case 'snapshot': {
            const file = snapshotName(ev.time);
            writeState(file, ev.u);
            ledger.snapshots.push({ time: ev.time, file });
            break;
          }
          case 'log':
            log(ev.level, ev.message);
            if (ev.level === 'warning') ledger.warnings.push(ev.message);
            break;
          case 'end': {
            outcome = ev.outcome;
            let finite = true;
            for (let i = 0; i < ev.u.length; i++) if (!Number.isFinite(ev.u[i])) finite = false;
            if (finite) {
              writeState('solutions/final.npy', ev.u);
              final = {
                solution: 'solutions/final.npy',
                time: ev.time,
                residual: outcome.kind === 'steady' ? outcome.residual : (integration.current.residual ?? null),
                monitors: ev.monitors,
                ...(extraValues(problem, ev.u) ? { 'extra-unknowns': extraValues(problem, ev.u) } : {}),
              };
            }
            if (outcome.kind === 'steady' && outcome.stability) {
              stability = outcome.stability;
              if (final) final.stability = { ...stability, text: stabilityWords(stability) };
            }
            break;
          }
        }
        // between steps: sync points, checkpoints, run.json refreshes, the event loop
        if (integration.canSnapshot && !outcome) {
          const steps = integration.steps;
          const due = lastSyncStep < 0 ? steps >= 1 : Math.floor(steps / settleSyncEvery) > Math.floor(lastSyncStep / settleSyncEvery);
          if (due) {
            integration.restartLinearAlgebra();
            lastSyncStep = steps;
            lastSync = { state: integration.snapshot(), ledger: structuredClone(ledger), steps };
            const policy = prepared.case.checkpoint;
            if (lastCheckpoint === undefined || steps - checkpointSteps >= policy.everyPoints || Date.now() - lastWritten >= policy.everySeconds * 1000) {
              checkpoint(lastSync.state, lastSync.ledger, lastCheckpoint === undefined ? 'first-point' : steps - checkpointSteps >= policy.everyPoints ? 'points' : 'time');
            }
          }
          if (Date.now() - lastRecord > 10_000) {
            counters = integration.counters;
            integrationSeconds = (Date.now() - tc) / 1000;
            writeRecord();
            lastRecord = Date.now();
          }
          await tick();
        }
      }
    } finally {
      if (stopped) events.return(undefined);
    }
    integrationSeconds = (Date.now() - tc) / 1000;
    counters = integration.counters;
    if (stopped) {
      if (lastSync && lastSync.steps !== (lastCheckpoint?.steps ?? -1)) checkpoint(lastSync.state, lastSync.ledger, 'stop');
      status = 'stopped';
      log('warning', 'stopped on request');
    } else if (!outcome) {
      status = 'failed';
      failure = 'the integration ended without an outcome';
    } else if (outcome.kind === 'failed') {
      status = 'failed';
      failure = outcomeText(outcome);
    } else {
      status = 'finished';
      log(outcome.kind === 'steady' ? 'info' : 'warning', outcomeText(outcome));
      if (stability) log('info', `the steady state is ${stabilityWords(stability)}`);
    }
  } catch (e) {
    integrationSeconds = (Date.now() - tc) / 1000;
    status = 'failed';
    failure = e instanceof Error ? e.message : String(e);
    if (integration) counters = integration.counters;
    log('warning', `the integration failed: ${failure}`);
  } finally {
    integration?.dispose();
  }
  unregisterLeave();
  csv.close();
  const doc = record();
  writeJsonAtomic(join(outDir, 'run.json'), doc);
  if (status === 'finished') removeCheckpoints(outDir);
  try {
    const r = drawSettlePlots(outDir);
    for (const w of r.warnings) log('warning', `plot: ${w}`);
  } catch (e) {
    log('warning', `the pictures could not be drawn: ${(e as Error).message}`);
  }
  return {
    status: status as Exclude<RunStatus, 'running'>,
    ...(outcome ? { outcome } : {}),
    ...(stability ? { stability } : {}),
    directory: outDir,
    record: doc,
    ...(failure !== undefined ? { failure } : {}),
    seconds: previousSeconds + (Date.now() - t0) / 1000,
  };
}

/** The files the integration in `dir` wrote (run.json `files`; when unusable, every name an integration writes). */
function settleManifest(dir: string): Manifest {
  const run = readRunRecord(dir);
  const m = run ? readManifest(run) : undefined;
  return m instanceof Manifest ? m : new Manifest(settleFiles);
}

/**
 * Before a resume: of the files the integration wrote (its manifest: a user's own files stay, as
 * for runs), the snapshots the checkpoint does not list, the final state and temporary files go.
 */
function removeUnrecorded(dir: string, ledger: SettleLedger): void {
  const keep = new Set(ledger.snapshots.map((s) => s.file));
  const manifest = settleManifest(dir);
  removeStaleFiles(
    dir,
    ['snapshots', 'solutions'],
    (rel, e) =>
      manifest.covers(rel + e) && (/^\..*\.tmp$/.test(e) || (rel === 'snapshots/' && e.endsWith('.npy') && !keep.has(rel + e)) || (rel === 'solutions/' && e === 'final.npy')),
  );
}

/**
 * Everything `resume DIR` needs for a settle run, checked (InputError otherwise): the generic
 * checks of a resume, the case, and that the saved state fits the case's problem.
 */
export async function prepareSettleResume(
  dirGiven: string,
  options: { force?: boolean; code?: CodeModelChoice } = {},
): Promise<{ prepared: PreparedSettleCase; outDir: string; resume: SettleResume; lock: FolderLock }> {
  const { dir, run, status, found, lock } = resumableCheckpoint(dirGiven, options);
  try {
    return { ...(await checkSettleResumable(dirGiven, dir, run, status, found, options.code ?? {})), lock };
  } catch (e) {
    lock.release();
    throw e;
  }
}

async function checkSettleResumable(
  dirGiven: string,
  dir: string,
  run: Record<string, unknown>,
  status: string,
  found: ReturnType<typeof resumableCheckpoint>['found'],
  choice: CodeModelChoice,
): Promise<{ prepared: PreparedSettleCase; outDir: string; resume: SettleResume }> {
  const c = found.document;
  // a code model loads only when the user names it (src/run/resume-code.ts)
  const prepared = await prepareSettleCaseObject(c.case, await storedCaseOptions(dirGiven, dir, run, found, choice));
  const engine = c.engine as { integrator?: IntegratorState; settle?: SettleLedger } | null;
  const u = engine?.integrator?.u;
  if (!(u instanceof Float64Array) || !engine?.settle) throw new InputError(`${dirGiven}: cannot resume: the checkpoint holds no time-integration state`);
  if (u.length !== prepared.problem.size) {
    throw new InputError(`${dirGiven}: cannot resume: the checkpoint holds states of ${u.length} unknowns, the case's problem has ${prepared.problem.size} (was the model changed?)`);
  }
  checkRecordedLengths(dirGiven, dir, c.ledger.csvLengths);
  return { prepared, outDir: dir, resume: { checkpoint: c, file: found.file, skipped: found.skipped, previousStatus: status } };
}
