/**
 * Several steady states at fixed parameters (`branchline find-states`): the deflated-Newton
 * search of src/deflation/ run on a prepared case, its folder written, and optionally every state
 * found traced as a branch:
 *
 *   run.json               as for runs (format, software, status running | finished | stopped |
 *                          failed, times, problem, the parameters, the resolved case), with kind
 *                          `find-states`, the method (the deflation operator, its power and shift,
 *                          distances modulo translation or not), why the search ended, the
 *                          guesses, every state (file, monitors, how many solves ended at it,
 *                          stability) and the traces
 *   states.csv             one row per state: state, solution, found-by-solve, guess, solves (how
 *                          many solves ended at it), newton-iterations, residual, the monitors,
 *                          extra unknowns, norm, separation (its distance to the nearest state
 *                          found before it), stable, unstable-count, neutral-count, leading-real,
 *                          leading-imag
 *   solves.csv             one row per deflated Newton solve: solve, guess, deflated (states
 *                          deflated during it), outcome (new, repeat, failed), state,
 *                          newton-iterations, residual, failure
 *   solutions/state-K.npy  the states (node arrays, as in runs; `start: {solution: ...}` reads them)
 *   plots/state-K.svg      a picture of each state (./find-states-plots.ts)
 *   traces/state-K-increase/, traces/state-K-decrease/   with tracing: a complete run from each
 *                          state in each direction of the continuation parameter
 *   diagram.svg            with tracing: every traced branch in one diagram, so branches that
 *                          never meet (disconnected branches, isolas) appear together
 *
 *   checkpoint.bin, checkpoint.previous.bin   while the search is not finished (./checkpoint.ts)
 *
 * A stop request is honoured between solves (and between the steps of a trace): the files then
 * hold the states found so far, status `stopped`.
 *
 * Checkpoints: one after every solve (and after each trace), under the folder's lock, written as
 * runs write theirs (a checksummed file replacing the previous one atomically): the search's whole
 * state (../deflation/search.ts `snapshot()`: the states found with every double, the solves, which
 * guess comes next and which guesses failed with how many states deflated, the counters), the
 * byte length of solves.csv, the warnings, digests of the guesses, and the traces done. A trace
 * is a run folder with checkpoints of its own. `resume DIR` (./find-states-resume.ts) goes on from
 * there and ends with the files of a search that was never interrupted (times apart): each solve
 * depends only on its guess and the states known when it starts. No command-line concerns here.
 */
import { createHash } from 'node:crypto';
import { mkdirSync } from 'node:fs';
import { join, relative, resolve } from 'node:path';
import { periodicAxes } from '../deflation/distance.js';
import { DeflatedSearch, type FoundState, type Guess, type SearchEndReason, type SearchState, type SolveRecord, searchEndText } from '../deflation/search.js';
import { stabilityWords } from '../dynamics/stability.js';
import { type ResumePlan, resumeStateOf } from './batch.js';
import { type PreparedCase, caseDocumentHead, ownCodeModel, prepareCaseObject } from './case.js';
import { type CheckpointDocument, Checkpointer, checkpointDocument, checkpointFile, previousCheckpointFile, removeCheckpoints, writeCheckpoint } from './checkpoint.js';
import { type PreparedFindCase, findCaseDocument } from './find-states-case.js';
import { drawFindPlots } from './find-states-plots.js';
import { makeFolder, removeIfEmpty } from './folders.js';
import { onLeaveAtOnce } from './leave.js';
import { FolderLock } from './lock.js';
import { Manifest, keptMessage, removeRunFiles } from './manifest.js';
import { RunDirectory, type RunStatus, emptyLedger, extraValues, removeStaleFiles } from './run-directory.js';
import { isoNow, problemDocument, runHeader } from './run-record.js';
import { type ResumeState, outputDirectory, runCase } from './run-case.js';
import { formatValue } from './summary.js';
import { type CsvCell, CsvWriter, csvLine, encodeNpy, writeFileAtomic, writeJsonAtomic, writeNpy } from './writers.js';

export const statesFile = 'states.csv';
export const solvesFile = 'solves.csv';

export interface FindProgress {
  solve: number;
  maxSolves: number;
  states: number;
  maxStates: number;
  guess: number;
}

export interface FindOptions {
  outDir?: string;
  force?: boolean;
  signal?: AbortSignal;
  log?: (level: 'info' | 'warning', message: string) => void;
  progress?: (p: FindProgress) => void;
  /** Trace every state found (default: the case's search.trace; a resumed search: as it was started). */
  trace?: boolean;
  /** Go on from a checkpoint (the resume command; ./find-states-resume.ts checked it). */
  resume?: FindResume;
  /** Start a search over in its own folder (it ended before its first checkpoint): its files go, the times carry on. */
  restart?: { started: string; resumes: string[] };
  /** The folder's lock, when the caller took it (resume); otherwise findStates takes it. */
  lock?: FolderLock;
}

/** What a search's checkpoint holds besides the common parts (`engine` of the checkpoint document). */
export interface FindCheckpoint {
  search: SearchState;
  find: {
    /** Whether the states are traced (the case's search.trace or --trace). */
    trace: boolean;
    /** SHA-256 of every guess's values: a resumed search must start from the same guesses. */
    guesses: string[];
    warnings: string[];
    /** The traces done, their folders relative to the search's. */
    traces: TraceRecord[];
  };
}

/** A checkpoint to go on from, checked (./find-states-resume.ts). */
export interface FindResume {
  checkpoint: CheckpointDocument;
  file: string;
  skipped: string[];
  previousStatus: string;
  /** The trace under way when the search stopped, to go on from its own checkpoint (its lock held). */
  trace?: { state: number; direction: 'increase' | 'decrease'; prepared: PreparedCase; plan: ResumePlan; lock: FolderLock };
}

/** SHA-256 (hex) of a guess's values, bit for bit. */
export function guessDigest(g: Guess): string {
  return createHash('sha256').update(new Uint8Array(g.u.buffer, g.u.byteOffset, g.u.byteLength)).digest('hex');
}

/** The bytes solutions/state-K.npy holds for a state (the node array, as written). */
export function stateFileBytes(prepared: PreparedFindCase, s: FoundState): Uint8Array {
  const { shape, data } = prepared.problem.toNodeArray(s.u, prepared.params);
  return encodeNpy(shape, data);
}

export interface TraceRecord {
  state: number;
  direction: 'increase' | 'decrease';
  directory: string;
  status: string;
  points: number;
  folds: number;
  branchPoints: number;
  failure?: string;
}

export interface FindResult {
  status: Exclude<RunStatus, 'running'>;
  directory: string;
  record: Record<string, unknown>;
  states: FoundState[];
  solves: SolveRecord[];
  endReason?: SearchEndReason;
  traces: TraceRecord[];
  failure?: string;
  seconds: number;
}

export const findDirectory = outputDirectory;

export const solveColumns = ['solve', 'guess', 'deflated', 'outcome', 'state', 'newton-iterations', 'residual', 'failure'] as const;

/** Columns of states.csv. */
export function stateColumns(prepared: PreparedFindCase): { columns: string[]; monitors: string[]; extras: string[] } {
  const monitors = prepared.problem.monitors.map((m) => m.name);
  const extras = prepared.problem.extraUnknowns.map((e) => e.name).filter((n) => !monitors.includes(n));
  const stability = prepared.settings.stability ? ['stable', 'unstable-count', 'neutral-count', 'leading-real', 'leading-imag'] : [];
  return {
    columns: ['state', 'solution', 'found-by-solve', 'guess', 'solves', 'newton-iterations', 'residual', ...monitors, ...extras, 'norm', 'separation', ...stability],
    monitors,
    extras,
  };
}

export const stateFile = (id: number): string => `solutions/state-${id}.npy`;

/** The deflation operator in words (run.json, the summary). */
export function methodText(prepared: PreparedFindCase): string {
  const d = prepared.settings.deflation;
  return (
    `deflated Newton (Farrell, Birkisson & Funke 2015): G(u) = η(u)·F(u), η(u) = Π_i (1/d(u, r_i)^p + σ) over the states r_i found, ` +
    `power p = ${d.power}, shift σ = ${d.shift}, d the root-mean-square distance${d.translation && hasPeriodicAxis(prepared) ? ' modulo translation along the periodic axes' : ''}`
  );
}

function hasPeriodicAxis(prepared: PreparedFindCase): boolean {
  return periodicAxes(prepared.problem).length > 0;
}

const tick = (): Promise<void> => new Promise((r) => setImmediate(r));

function stateRow(plan: ReturnType<typeof stateColumns>, prepared: PreparedFindCase, s: FoundState): CsvCell[] {
  const row: CsvCell[] = [s.id, stateFile(s.id), s.solve, s.guess, s.solves, s.iterations, s.residual];
  for (const m of plan.monitors) row.push(s.monitors[m]);
  plan.extras.forEach((_n, i) => row.push(s.u[prepared.problem.gridUnknowns + i]));
  row.push(s.norm, Number.isFinite(s.separation) ? s.separation : '');
  if (prepared.settings.stability) {
    const st = s.stability;
    row.push(st ? (st.stable === null ? '' : st.stable ? 1 : 0) : '', st?.unstableCount ?? '', st?.neutralCount ?? '', st?.leading?.re ?? '', st?.leading?.im ?? '');
  }
  return row;
}

/** The files a search writes (run.json `files`, see manifest.ts: what --force may remove). */
export const findFiles = ['run.json', statesFile, solvesFile, 'solutions/state-*.npy', 'diagram.svg', 'traces/state-*', checkpointFile, previousCheckpointFile];

/**
 * The search, its files, and (when asked) the traces; never throws for numerical trouble. The
 * folder's lock (lock.ts) is held throughout.
 */
export async function findStates(prepared: PreparedFindCase, options: FindOptions = {}): Promise<FindResult> {
  const outDir = options.outDir !== undefined ? resolve(options.outDir) : findDirectory(prepared);
  if (options.lock) return findInFolder(prepared, outDir, options);
  const continuing = options.resume !== undefined || options.restart !== undefined;
  const made = continuing ? undefined : makeFolder(outDir);
  let lock: FolderLock;
  try {
    lock = FolderLock.acquire(outDir, { purpose: continuing ? 'resume' : options.force ? 'find-states --force' : 'find-states' });
  } catch (e) {
    if (made) removeIfEmpty(outDir, made);
    throw e;
  }
  try {
    return await findInFolder(prepared, outDir, { ...options, lock });
  } finally {
    lock.release();
  }
}

/**
 * Before a resume: state files the checkpoint does not hold, temporary files a killed process
 * left, and (when the search itself is not done) any trace folder's files go.
 */
function removeUnrecorded(outDir: string, saved: FindCheckpoint): void {
  const known = saved.search.states.length;
  // only the search's own files: a user's file in the folder is never touched
  const ours = new Manifest(findFiles);
  const later = (rel: string, e: string): boolean => rel === 'solutions/' && /^state-\d+\.npy$/.test(e) && Number(/\d+/.exec(e)![0]) > known;
  removeStaleFiles(outDir, ['solutions'], (rel, e) => ours.covers(rel + e) && (/^\..*\.tmp$/.test(e) || later(rel, e)));
  if (!saved.search.done) removeRunFiles(outDir, new Manifest(['traces/state-*']), (rel) => !rel.startsWith('traces/'));
  // (removeRunFiles takes away the run's folders left empty)
  mkdirSync(join(outDir, 'solutions'), { recursive: true });
}

async function findInFolder(prepared: PreparedFindCase, outDir: string, options: FindOptions): Promise<FindResult> {
  const t0 = Date.now();
  const { problem, params } = prepared;
  const log = options.log ?? (() => {});
  const resume = options.resume;
  const saved = resume ? (resume.checkpoint.engine as FindCheckpoint) : undefined;
  if (saved) removeUnrecorded(outDir, saved);
  else {
    // a new search (or one started over): the folder policy of runs (empty, or --force over an earlier run of ours)
    const created = RunDirectory.create(outDir, { force: options.force === true || options.restart !== undefined, folders: ['solutions'] });
    if (created.kept.length) log('info', keptMessage(created.kept, 'run'));
  }
  const plan = stateColumns(prepared);
  const solvesCsv = resume ? CsvWriter.reopen(join(outDir, solvesFile), [...solveColumns], resume.checkpoint.ledger.csvLengths[solvesFile]) : CsvWriter.create(join(outDir, solvesFile), [...solveColumns]);
  const times = resume ? resume.checkpoint.run : options.restart;
  const started = times?.started ?? isoNow();
  const resumes = [...(times?.resumes ?? []), ...(times ? [isoNow()] : [])];
  const previousSeconds = resume?.checkpoint.run.seconds ?? 0;
  const caseDoc = findCaseDocument(prepared.case);
  const trace = saved ? saved.find.trace : (options.trace ?? prepared.case.search.trace);
  let status: RunStatus = 'running';
  let failure: string | undefined;
  let note: string | undefined;
  let endReason: SearchEndReason | undefined = saved?.search.endReason;
  const search = new DeflatedSearch(problem, params, prepared.settings, prepared.guesses, saved ? { state: saved.search } : {});
  // the search's own state objects (a repeat solve counts on the state it ended at)
  const states: FoundState[] = [...search.states];
  const solves: SolveRecord[] = [...search.solves];
  const traces: TraceRecord[] = saved ? saved.find.traces.map((t) => ({ ...t, directory: join(outDir, t.directory) })) : [];
  const warnings: string[] = saved ? saved.find.warnings.slice() : [];
  let counters: Record<string, number> | undefined;
  let searchSeconds = 0;
  let sequence = resume?.checkpoint.sequence ?? 0;
  let lastCheckpoint: { file: string; sequence: number; written: string; solves: number } | undefined = resume
    ? { file: resume.file, sequence, written: resume.checkpoint.written, solves: resume.checkpoint.ledger.points }
    : undefined;

  const record = (): Record<string, unknown> => ({
    ...runHeader({ status, ...(failure !== undefined ? { failure } : {}), ...(note !== undefined ? { note } : {}), caseFile: prepared.file ?? null, started, resumes, ...(lastCheckpoint ? { checkpoint: lastCheckpoint } : {}) }),
    kind: 'find-states',
    problem: problemDocument(problem),
    'start-parameters': { ...params },
    method: methodText(prepared),
    deflation: { ...prepared.settings.deflation, distinct: prepared.settings.distinct },
    guesses: prepared.guesses.map((g) => g.label),
    ...(endReason ? { end: { reason: endReason, text: searchEndText[endReason] } } : {}),
    columns: plan.columns,
    states: states.map((s) => ({
      state: s.id,
      solution: stateFile(s.id),
      'found-by-solve': s.solve,
      guess: s.guess,
      solves: s.solves,
      residual: s.residual,
      monitors: s.monitors,
      ...(extraValues(problem, s.u) ? { 'extra-unknowns': extraValues(problem, s.u) } : {}),
      norm: s.norm,
      separation: Number.isFinite(s.separation) ? s.separation : null,
      ...(s.stability ? { stability: { ...s.stability, text: stabilityWords(s.stability) } } : {}),
    })),
    counts: { solves: solves.length, new: solves.filter((r) => r.outcome === 'new').length, repeats: solves.filter((r) => r.outcome === 'repeat').length, failed: solves.filter((r) => r.outcome === 'failed').length, ...(counters ?? {}) },
    ...(traces.length
      ? {
          traces: traces.map((t) => ({
            state: t.state,
            direction: t.direction,
            directory: relative(outDir, t.directory),
            status: t.status,
            points: t.points,
            folds: t.folds,
            'branch-points': t.branchPoints,
            ...(t.failure !== undefined ? { failure: t.failure } : {}),
          })),
        }
      : {}),
    timings: { 'search-seconds': previousSeconds + searchSeconds, 'total-seconds': previousSeconds + (Date.now() - t0) / 1000 },
    ...(warnings.length ? { warnings } : {}),
    ...(prepared.caution ? { caution: prepared.caution } : {}),
    case: caseDoc,
    // every file the search writes: what --force may remove
    files: findFiles,
  });
  const writeRecord = (): void => writeJsonAtomic(join(outDir, 'run.json'), record());
  writeRecord();
  /** states.csv, rewritten whole (atomically) whenever a state is found and at the end. */
  const writeTable = (): void => writeFileAtomic(join(outDir, statesFile), [plan.columns, ...states.map((s) => stateRow(plan, prepared, s))].map(csvLine).join(''));
  writeTable();
  // leaving at once (a second Ctrl-C): run.json says `stopped` (resume goes on from the last checkpoint)
  const unregisterLeave = onLeaveAtOnce((reason) => {
    status = 'stopped';
    note = reason;
    writeRecord();
    options.lock?.release();
  });

  const guessDigests = prepared.guesses.map(guessDigest);
  /** A checkpoint of the search as it is now (between solves, or between traces). */
  const checkpoint = (reason: CheckpointDocument['reason']): void => {
    solvesCsv.sync();
    sequence++;
    const written = isoNow();
    const engine: FindCheckpoint = {
      search: search.snapshot(),
      find: { trace, guesses: guessDigests, warnings: warnings.slice(), traces: traces.filter((t) => t.status !== 'stopped').map((t) => ({ ...t, directory: relative(outDir, t.directory) })) },
    };
    const doc = checkpointDocument({
      sequence,
      written,
      reason,
      run: { started, seconds: previousSeconds + (Date.now() - t0) / 1000, caseFile: prepared.file ?? null, resumes: resumes.slice() },
      case: caseDoc,
      ledger: { ...emptyLedger(), points: solves.length, solutions: states.length, warnings: warnings.slice(), csvLengths: { [solvesFile]: solvesCsv.byteLength } },
      engine,
    });
    writeCheckpoint(outDir, doc);
    lastCheckpoint = { file: checkpointFile, sequence, written, solves: solves.length };
  };

  const ts = Date.now();
  let stopped = false;
  try {
    log('info', `searching for steady states at ${Object.entries(params).map(([k, v]) => `${k} = ${formatValue(v, 6)}`).join(', ')} from ${prepared.guesses.length} guess${prepared.guesses.length === 1 ? '' : 'es'}`);
    const events = search.events();
    for (;;) {
      if (options.signal?.aborted) {
        stopped = true;
        break;
      }
      const r = events.next();
      if (r.done) break;
      const ev = r.value;
      if (ev.type === 'solve-start') {
        options.progress?.({ solve: ev.solve, maxSolves: prepared.settings.maxSolves, states: ev.deflated, maxStates: prepared.settings.maxStates, guess: ev.guess });
      } else if (ev.type === 'solve') {
        const rec = ev.record;
        solves.push(rec);
        solvesCsv.append([rec.solve, rec.guess, rec.deflated, rec.outcome, rec.state ?? '', rec.iterations, rec.residual, rec.failure ?? '']);
        if (ev.state) {
          const s = ev.state;
          states.push(s);
          const { shape, data } = problem.toNodeArray(s.u, params);
          writeNpy(join(outDir, stateFile(s.id)), shape, data);
          log('info', `state ${s.id} found by solve ${rec.solve} (guess ${rec.guess}, ${rec.iterations} iterations, ${rec.deflated} deflated)${s.stability ? `: ${stabilityWords(s.stability)}` : ''}`);
          writeTable();
        }
        // every finished solve is kept: its row, its state file and the table are written first
        checkpoint('solve');
        writeRecord();
      } else if (ev.type === 'log') {
        log(ev.level, ev.message);
        if (ev.level === 'warning') warnings.push(ev.message);
      } else {
        endReason = ev.reason;
        log('info', `search ended after ${ev.solves} solves with ${ev.states} state${ev.states === 1 ? '' : 's'}: ${searchEndText[ev.reason]}`);
      }
      await tick();
    }
    const c = search.counters;
    counters = { 'newton-iterations': c.iterations, residuals: c.residuals, factorisations: c.factorisations };
  } catch (e) {
    status = 'failed';
    failure = e instanceof Error ? e.message : String(e);
    log('warning', `the search failed: ${failure}`);
  } finally {
    search.dispose();
    searchSeconds = (Date.now() - ts) / 1000;
  }
  // the table of states, final (a later solve can end at a state found earlier: its count grows)
  writeTable();
  if (status === 'running' && stopped) {
    status = 'stopped';
    log('warning', 'stopped on request');
  }
  // the search is done: a checkpoint that says so (a resume goes on with the traces)
  if (status === 'running' && !(saved?.search.done ?? false)) checkpoint('solve');
  solvesCsv.close();
  writeRecord();

  if (status === 'running' && trace && states.length > 0) {
    try {
      stopped = await traceStates(prepared, outDir, states, traces, options, () => {
        checkpoint('trace');
        writeRecord();
      });
    } catch (e) {
      status = 'failed';
      failure = `tracing: ${e instanceof Error ? e.message : String(e)}`;
      log('warning', `the traces failed: ${failure}`);
    }
    if (stopped && status === 'running') status = 'stopped';
  }
  if (status === 'running') status = 'finished';
  unregisterLeave();
  writeRecord();
  // a finished search has nothing left to resume
  if (status === 'finished') removeCheckpoints(outDir);
  // the pictures, from the files just written (as `branchline plot DIR` redraws them)
  try {
    const r = drawFindPlots(outDir);
    for (const w of r.warnings) {
      warnings.push(`plot: ${w}`);
      log('warning', `plot: ${w}`);
    }
    if (r.files.includes('diagram.svg')) log('info', `drew diagram.svg with the branches of ${new Set(traces.map((t) => t.state)).size} states`);
  } catch (e) {
    log('warning', `the pictures could not be drawn: ${(e as Error).message}`);
  }
  const doc = record();
  writeJsonAtomic(join(outDir, 'run.json'), doc);
  return {
    status: status as Exclude<RunStatus, 'running'>,
    directory: outDir,
    record: doc,
    states,
    solves,
    ...(endReason ? { endReason } : {}),
    traces,
    ...(failure !== undefined ? { failure } : {}),
    seconds: previousSeconds + (Date.now() - t0) / 1000,
  };
}

/** The case of one trace: the search case with its parameters fixed, started from the state, in one direction. */
function traceDocument(prepared: PreparedFindCase, outDir: string, s: FoundState, direction: 'increase' | 'decrease'): Record<string, unknown> {
  const c = prepared.case;
  const raw = prepared.raw;
  const continuation = { ...(raw.continuation as Record<string, unknown>), direction };
  return {
    ...caseDocumentHead({ ...c, name: `${c.name}-state-${s.id}-${direction}` }),
    continuation,
    output: { solutions: 'special' },
    stability: { eigenvalues: c.stability.eigenvalues },
    checkpoint: { 'every-points': c.checkpoint.everyPoints, 'every-seconds': c.checkpoint.everySeconds },
    ...(raw.plot !== undefined ? { plot: raw.plot } : {}),
    start: { solution: join(outDir, stateFile(s.id)) },
  };
}

/** A trace's folder, relative to the search's. */
export const traceFolder = (state: number, direction: 'increase' | 'decrease'): string => `traces/state-${state}-${direction}`;

/**
 * Trace every state in both directions (run folders under traces/, each with checkpoints of its
 * own), skipping the traces done before a resume and going on with the one under way from its
 * checkpoint; `done` is called after each trace that ended. Returns whether a stop request ended it.
 */
async function traceStates(prepared: PreparedFindCase, outDir: string, states: readonly FoundState[], traces: TraceRecord[], options: FindOptions, done: () => void): Promise<boolean> {
  const log = options.log ?? (() => {});
  mkdirSync(join(outDir, 'traces'), { recursive: true });
  for (const s of states) {
    for (const direction of ['increase', 'decrease'] as const) {
      if (traces.some((t) => t.state === s.id && t.direction === direction && t.status !== 'stopped')) continue;
      if (options.signal?.aborted) return true;
      const dir = join(outDir, traceFolder(s.id, direction));
      const going = options.resume?.trace;
      let run: PreparedCase;
      let resume: ResumeState | undefined;
      if (going && going.state === s.id && going.direction === direction) {
        // the trace under way: on from its own checkpoint (checked by the resume, its lock held)
        run = going.prepared;
        resume = resumeStateOf(going.plan.checkpoint!, going.plan.file);
      } else {
        const doc = traceDocument(prepared, outDir, s, direction);
        run = await prepareCaseObject(doc, { label: `${prepared.label} (trace of state ${s.id}, ${direction})`, baseDir: prepared.baseDir, ...(prepared.file ? { file: prepared.file } : {}), ...ownCodeModel(prepared.case) });
        // the state exactly as found (with its extra unknowns), not as read back from the node array
        run.start = { u: Float64Array.from(s.u), from: `state ${s.id} found by find-states` };
      }
      log('info', `${resume ? 'resuming the trace of' : 'tracing'} state ${s.id} (${run.settings.parameter} ${direction === 'increase' ? 'increasing' : 'decreasing'}) into ${traceFolder(s.id, direction)}`);
      const checkpointer = new Checkpointer(run.case.checkpoint, resume ? { sequence: resume.checkpoint!.sequence, points: resume.ledger.points } : {});
      const r = await runCase(run, {
        outDir: dir,
        // a trace begun before an interruption but without a checkpoint of its own is traced again
        ...(resume ? { resume, lock: going!.lock } : { force: true }),
        checkpoint: checkpointer.hook,
        ...(options.signal ? { signal: options.signal } : {}),
        log: (level, message) => (level === 'warning' ? log(level, `trace of state ${s.id} (${direction}): ${message}`) : undefined),
      });
      const specials = r.ledger.specials;
      traces.push({
        state: s.id,
        direction,
        directory: dir,
        status: r.status,
        points: r.ledger.points,
        folds: specials.filter((x) => x.kind === 'fold').length,
        branchPoints: specials.filter((x) => x.kind === 'branch-point').length,
        ...(r.failure !== undefined ? { failure: r.failure } : {}),
      });
      // a stopped trace is not done: a resume goes on with it from its own checkpoint
      if (r.status === 'stopped') return true;
      done();
    }
  }
  return false;
}
