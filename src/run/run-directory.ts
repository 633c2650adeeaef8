/**
 * The run directory (our own layout):
 *
 *   run.json             the resolved case, software version, start/end time, status
 *                        (running | finished | stopped | failed), branches with their stop
 *                        reasons, counts, timings, grid spacing and unknown count, caution
 *   points.json          the special points (fold, branch-point, hopf, end) with located values
 *   branches/<id>.csv    one row per accepted point of branch <id>
 *   solutions/*.npy      node arrays at the special points (float64, C order,
 *                        shape (fields, nz, ny, nx) with absent axes dropped)
 *
 * JSON files are replaced atomically; CSV rows are appended straight to the files, and
 * `csvLengths()` gives the byte lengths a checkpoint records so that `RunDirectory.reopen`
 * can truncate back to them (no row lost or doubled on resume).
 *
 * Every file a run writes is listed in run.json's `files` before it is created (manifest.ts).
 * An existing folder is used only when it is empty (its lock file aside). A non-empty folder is
 * refused unless `force` is set AND it holds an earlier branchline run with a usable manifest;
 * then exactly the files that run listed are removed, and every other file the user put there
 * (notes, figures, their own CSVs, also inside branches/ or plots/) is left alone and named. We
 * never empty an arbitrary folder. The caller holds the folder's lock (lock.ts) throughout.
 */
import { existsSync, mkdirSync, readdirSync, rmSync, statSync } from 'node:fs';
import { join, relative } from 'node:path';
import type { ContinuationPoint, SpecialPoint, StopReason } from '../continuation/types.js';
import type { CurveStopReason } from '../continuation/curves/types.js';
import type { Params, Problem } from '../problem/problem.js';
import { InputError } from './errors.js';
import { isLockFile } from './lock.js';
import { Manifest, keptText, readManifest, removeRunFiles } from './manifest.js';
import { jsonFileLimit, readTextFile } from './read-file.js';
import { type CsvCell, CsvWriter, csvLine, writeFileAtomic, writeJsonAtomic, writeNpy } from './writers.js';

export const runFormat = 'branchline run';
export const runFormatVersion = 1;

export type RunStatus = 'running' | 'finished' | 'stopped' | 'failed';

// ---------------------------------------------------------------------------------------------
// Records kept while the run goes (plain objects: a checkpoint can store them)

export interface BranchRecord {
  id: number;
  depth: number;
  origin:
    | { kind: 'start'; direction: 'increase' | 'decrease'; at?: 'bogdanov-takens' }
    | { kind: 'branch-point'; branch: number; value: number; direction?: 'increase' | 'decrease' | 'both' }
    /** Curve runs: a curve that follows the new critical mode from a mode change of curve `branch`. */
    | { kind: 'mode-change'; branch: number; value: number };
  /** Curve runs: what the curve follows, and (branch-point curves) its critical mode at the start. */
  follow?: string;
  mode?: number[];
  /** CSV file, relative to the run directory. */
  file: string;
  points: number;
  /** Continuation parameter at the first and last accepted point. */
  first?: number;
  last?: number;
  stopReason?: StopReason | CurveStopReason;
  stopText?: string;
  message?: string;
  /**
   * Stretches of equal stability along the branch, in order: the parameter at the first and last
   * point of each, whether it is stable (null: not certified) and its unstable-eigenvalue count.
   */
  stability?: { from: number; to: number; stable: boolean | null; unstable: number }[];
  /** Hopf curves: stretches of equal criticality (the sign of the first Lyapunov coefficient), in order. */
  criticality?: { from: number; to: number; criticality: string }[];
}

/** A special point as written to points.json (keys in our lowercase words). */
export interface SpecialRecord {
  kind: string;
  branch: number;
  parameter: string;
  value: number;
  arclength: number;
  monitors: Record<string, number>;
  residual: number;
  /** Solution file relative to the run directory, when written. */
  solution?: string;
  'extra-unknowns'?: Record<string, number>;
  [detail: string]: unknown;
}

/** Everything the run layer must remember to continue writing a run (checkpointable). */
export interface RunLedger {
  branches: BranchRecord[];
  specials: SpecialRecord[];
  points: number;
  solutions: number;
  warnings: string[];
  /** Byte length of every branch CSV after its last complete row, by file name. */
  csvLengths: Record<string, number>;
}

export function emptyLedger(): RunLedger {
  return { branches: [], specials: [], points: 0, solutions: 0, warnings: [], csvLengths: {} };
}

// ---------------------------------------------------------------------------------------------
// Columns

/** Stability columns added when `stability.eigenvalues > 0` (filled by the stability issue). */
export const stabilityColumns = ['stable', 'unstable-count', 'leading-real', 'leading-imag'] as const;

export interface ColumnPlan {
  columns: string[];
  monitors: string[];
  extras: string[];
  stability: boolean;
  /** Eigenvalues written per point (real and imaginary part each): stability.eigenvalues. */
  eigenvalues: number;
  /** Curve runs: the free parameter's column, test-function columns and mode columns. */
  curve?: CurveColumns;
}

/** The extra columns of a curve run's CSVs (./curve-run.ts). */
export interface CurveColumns {
  /** The free parameter (its column follows the continuation parameter's). */
  free: string;
  /** Test-function columns (last), in the system's order. */
  tests: string[];
  /** Mode columns (`mode-x`, …) for branch-point curves: the critical mode's wavenumber per axis. */
  modes: string[];
}

/** Per-point eigenvalue columns: `eigenvalue-1-real`, `eigenvalue-1-imag`, … (rightmost first). */
export function eigenvalueColumns(count: number): string[] {
  const out: string[] = [];
  for (let k = 1; k <= count; k++) out.push(`eigenvalue-${k}-real`, `eigenvalue-${k}-imag`);
  return out;
}

/**
 * Columns of a branch CSV: point, arclength, the continuation parameter, the monitors (in the
 * problem's order: max, min, l2-norm per field, then model monitors), the extra unknowns by
 * name, newton-iterations, residual (‖F‖ of the point's state, weighted norm), step-length, and
 * with stability analysis (`eigenvalues` > 0) the stability columns, `search-complete` (whether every eigenvalue with real part ≥ 0 was certified found),
 * the real and imaginary parts of the `eigenvalues` rightmost eigenvalues, and
 * `unexplained-change` (empty, or e.g. "the unstable count changed from 1 to 2" when no fold,
 * branch point or Hopf point located in the step explains the change, even at the minimum step).
 */
export function columnPlan(problem: Problem, parameter: string, eigenvalues: number, curve?: CurveColumns): ColumnPlan {
  const monitors = problem.monitors.map((m) => m.name);
  const extras = problem.extraUnknowns.map((e) => e.name).filter((n) => !monitors.includes(n));
  // (curve runs write no stability columns: a Hopf curve's eigenvalues serve its double-Hopf test)
  const stability = eigenvalues > 0 && !curve;
  const columns = [
    'point',
    'arclength',
    parameter,
    ...(curve ? [curve.free] : []),
    ...monitors,
    ...extras,
    'newton-iterations',
    'residual',
    'step-length',
    ...(stability ? [...stabilityColumns, 'search-complete', ...eigenvalueColumns(eigenvalues), 'unexplained-change'] : []),
    ...(curve ? [...curve.tests, ...curve.modes] : []),
  ];
  return { columns, monitors, extras, stability, eigenvalues, ...(curve ? { curve } : {}) };
}

/** The stability data a point carries when the engine computes eigenvalues (see types.ts). */
interface PointStabilityCells {
  stable?: boolean | null;
  unstableCount?: number;
  leadingReal?: number;
  leadingImag?: number;
  complete?: boolean;
  eigenvalues?: { re: number; im: number }[];
}

/** Whether a point carries stability data. */
export function hasStability(p: ContinuationPoint): boolean {
  return (p as { stability?: unknown }).stability != null;
}

export function pointRow(plan: ColumnPlan, problem: Problem, p: ContinuationPoint): CsvCell[] {
  const row: CsvCell[] = [p.index, p.arclength, p.parameter];
  // a curve point also carries the free parameter, its test functions and its critical mode
  const cp = p as ContinuationPoint & { free?: number; tests?: Record<string, number>; mode?: number[] };
  if (plan.curve) row.push(cp.free);
  for (const m of plan.monitors) row.push(p.monitors[m]);
  plan.extras.forEach((_name, i) => row.push(p.u[problem.gridUnknowns + i]));
  row.push(p.newtonIterations, p.residual, p.step);
  if (plan.stability) {
    // empty cells when the point has no stability data (or `stable` is not certified: null)
    const s = (p as { stability?: PointStabilityCells }).stability;
    row.push(s?.stable, s?.unstableCount, s?.leadingReal, s?.leadingImag, s?.complete);
    for (let k = 0; k < plan.eigenvalues; k++) {
      const e = s?.eigenvalues?.[k];
      row.push(e?.re, e?.im);
    }
    row.push(p.unexplained);
  }
  if (plan.curve) {
    for (const t of plan.curve.tests) row.push(cp.tests?.[t]);
    plan.curve.modes.forEach((_c, a) => row.push(cp.mode?.[a]));
  }
  return row;
}

/** Extra unknowns by name (points.json). */
export function extraValues(problem: Problem, u: Float64Array): Record<string, number> | undefined {
  if (problem.extraUnknowns.length === 0) return undefined;
  const out: Record<string, number> = {};
  problem.extraUnknowns.forEach((e, i) => (out[e.name] = u[problem.gridUnknowns + i]));
  return out;
}

/** The points.json record of a special point, kind-specific details in lowercase words. */
export function specialRecord(problem: Problem, parameter: string, s: SpecialPoint, solution: string | undefined): SpecialRecord {
  const rec: SpecialRecord = {
    kind: s.kind,
    branch: s.branch,
    parameter,
    value: s.value,
    arclength: s.arclength,
    monitors: { ...s.monitors },
    residual: s.residual,
  };
  switch (s.kind) {
    case 'fold':
      rec.located = s.located;
      rec.turn = s.turn;
      break;
    case 'branch-point':
      rec.located = s.located;
      rec.multiplicity = s.multiplicity;
      rec.type = s.type;
      rec.criticality = s.criticality;
      if (s.newBranchDirection !== undefined) rec['new-branch-direction'] = s.newBranchDirection;
      rec['new-branches'] = s.newBranches.slice();
      if (s.note !== undefined) rec.note = s.note;
      break;
    case 'hopf':
      rec.located = s.located;
      rec.frequency = s.frequency;
      rec.period = s.period;
      rec.crossing = s.crossing;
      if (s.lyapunov !== undefined) rec['first-lyapunov-coefficient'] = s.lyapunov;
      if (s.criticality !== undefined) rec.criticality = s.criticality;
      if (s.criticalityNote !== undefined) rec.note = s.criticalityNote;
      break;
    case 'end':
      rec.reason = s.reason;
      break;
    default: {
      // kinds added later: copy their scalar details under lowercase-dashed names
      const extra = s as unknown as Record<string, unknown>;
      for (const [k, v] of Object.entries(extra)) {
        if (['kind', 'branch', 'value', 'arclength', 'u', 'monitors', 'residual'].includes(k)) continue;
        if (v === undefined || typeof v === 'function' || ArrayBuffer.isView(v)) continue;
        rec[k.replace(/[A-Z]/g, (c) => '-' + c.toLowerCase())] = v;
      }
    }
  }
  if (solution !== undefined) rec.solution = solution;
  const extras = extraValues(problem, s.u);
  if (extras) rec['extra-unknowns'] = extras;
  return rec;
}

/**
 * points.csv: the special points as a table for other tools — kind, branch, the parameter (and
 * on curves the free parameter), located, the Hopf details (frequency, period, first Lyapunov
 * coefficient, criticality; empty elsewhere), the monitors, the solution file. Rewritten with
 * points.json.
 */
export function pointsCsv(parameter: string, specials: readonly SpecialRecord[]): string {
  const free = specials.map((s) => s['free-parameter']).find((f): f is string => typeof f === 'string');
  const monitors: string[] = [];
  for (const s of specials) for (const m of Object.keys(s.monitors ?? {})) if (!monitors.includes(m)) monitors.push(m);
  const hopf = ['frequency', 'period', 'first-lyapunov-coefficient', 'criticality'];
  let out = csvLine(['kind', 'branch', parameter, ...(free ? [free] : []), 'located', ...hopf, ...monitors, 'solution']);
  const cell = (v: unknown): CsvCell => (typeof v === 'number' || typeof v === 'string' || typeof v === 'boolean' ? v : undefined);
  for (const s of specials) {
    out += csvLine([s.kind, s.branch, s.value, ...(free ? [cell(s.free)] : []), cell(s.located), ...hopf.map((k) => cell(s[k])), ...monitors.map((m) => s.monitors?.[m]), s.solution]);
  }
  return out;
}

// ---------------------------------------------------------------------------------------------
// The directory

/** run.json of `dir` when it is a branchline run's, else undefined. */
export function readRunRecord(dir: string): Record<string, unknown> | undefined {
  try {
    const doc = JSON.parse(readTextFile(join(dir, 'run.json'), jsonFileLimit, 'a run record')) as Record<string, unknown>;
    return doc && typeof doc === 'object' && doc.format === runFormat ? doc : undefined;
  } catch {
    return undefined;
  }
}

/** The entries of a folder that are not the files of its lock. */
export function folderEntries(path: string): string[] {
  return readdirSync(path).filter((e) => !isLockFile(e));
}

/**
 * Why `path` cannot take a new run (undefined when it can): the policy of RunDirectory.create,
 * read-only (the up-front checks of a batch use it too).
 */
export function newRunProblem(path: string, force: boolean): string | undefined {
  if (!existsSync(path)) return undefined;
  if (!statSync(path).isDirectory()) return `output folder ${path} exists and is a file, not a folder`;
  const entries = folderEntries(path);
  if (entries.length === 0) return undefined;
  const run = readRunRecord(path);
  if (!force) return `output folder ${path} is not empty (${run ? 'it holds an earlier run' : `it holds ${entries.length} entries`}); choose another with --out, or pass --force to replace an earlier run`;
  if (!run) return `output folder ${path} is not empty and holds no earlier branchline run; --force replaces only an earlier run, choose another folder with --out`;
  const manifest = readManifest(run);
  if (typeof manifest === 'string') {
    return `output folder ${path} holds a run.json, but ${manifest}; --force removes only the files a run lists as its own: choose another folder with --out, or empty this one yourself`;
  }
  return undefined;
}

/**
 * Left in place when an earlier run's files are removed: the lock, and run.json (the new run
 * replaces it atomically at once, so that a folder never lacks one while it holds run files).
 */
const keptForNow = (rel: string): boolean => isLockFile(rel) || rel === 'run.json';

export class RunDirectory {
  readonly path: string;
  /** The files of the run (run.json `files`). */
  readonly manifest: Manifest;
  /** Files of the user that `create` with force left in place (relative paths). */
  kept: string[] = [];
  private readonly writers = new Map<number, CsvWriter>();
  private closed = false;
  private persist: (() => void) | undefined;

  private constructor(path: string, manifest: Manifest) {
    this.path = path;
    this.manifest = manifest;
  }

  /**
   * Prepare the folder `path` (its lock held by the caller) for a new run; see the header for the
   * policy on non-empty folders. `alongside`: the folder belongs to the caller (a study's grid
   * folder) and may hold the user's files, which stay, as long as it holds no run. `folders`: the
   * sub-folders to make (default branches/). Throws InputError (bad input, nothing changed) when
   * the folder cannot be used.
   */
  static create(path: string, options: { force?: boolean; alongside?: boolean; folders?: readonly string[] } = {}): RunDirectory {
    let kept: string[] = [];
    const entries = existsSync(path) && statSync(path).isDirectory() ? folderEntries(path) : [];
    if (options.alongside && entries.length > 0 && !readRunRecord(path)) {
      // a folder the caller owns (a study's grid folder) that holds no run: the user's files there stay
      kept = entries;
    } else {
      const problem = newRunProblem(path, options.force === true);
      if (problem) throw new InputError(problem);
      if (entries.length > 0) kept = removeRunFiles(path, readManifest(readRunRecord(path)!) as Manifest, keptForNow);
    }
    try {
      mkdirSync(path, { recursive: true });
      for (const f of options.folders ?? ['branches']) mkdirSync(join(path, f), { recursive: true });
    } catch (e) {
      throw new InputError(`output folder ${path} cannot be created (${(e as NodeJS.ErrnoException).code ?? (e as Error).message})`);
    }
    const dir = new RunDirectory(path, new Manifest());
    dir.kept = kept;
    return dir;
  }

  /**
   * Start the run in `path` over (it ended before its first checkpoint): remove the files of
   * `manifest` (the user's stay) and begin a new manifest. The caller holds the lock.
   */
  static restart(path: string, manifest: Manifest): RunDirectory {
    if (!readRunRecord(path)) throw new InputError(`${path} holds no branchline run (run.json missing or not ours)`);
    const kept = removeRunFiles(path, manifest, keptForNow);
    mkdirSync(join(path, 'branches'), { recursive: true });
    const dir = new RunDirectory(path, new Manifest());
    dir.kept = kept;
    return dir;
  }

  /**
   * Reopen a run directory to continue a run: every branch CSV the ledger knows is truncated to
   * its recorded length; CSVs of the run that the ledger does not know (rows written after the
   * checkpoint for a branch that had not started then) are removed. `manifest`: the files the run
   * wrote so far (run.json `files`).
   */
  static reopen(path: string, ledger: RunLedger, columnsOf: (branch: number) => string[], manifest: Manifest): RunDirectory {
    if (!readRunRecord(path)) throw new InputError(`${path} holds no branchline run (run.json missing or not ours)`);
    const dir = new RunDirectory(path, manifest);
    mkdirSync(join(path, 'branches'), { recursive: true });
    const known = new Set(Object.keys(ledger.csvLengths));
    for (const f of readdirSync(join(path, 'branches'))) {
      const rel = `branches/${f}`;
      if (manifest.covers(rel) && !known.has(rel)) rmSync(join(path, rel), { force: true });
    }
    for (const b of ledger.branches) {
      const len = ledger.csvLengths[b.file];
      if (len === undefined) continue;
      const open = b.stopReason === undefined;
      const w = CsvWriter.reopen(join(path, b.file), columnsOf(b.id), len);
      if (open) dir.writers.set(b.id, w);
      else w.close();
    }
    return dir;
  }

  /** File name of a branch's CSV, relative to the run directory. */
  static branchFile(id: number): string {
    return `branches/${id}.csv`;
  }

  /** Called (to rewrite run.json) whenever the manifest gains a file, before the file is created. */
  onManifestChange(persist: () => void): void {
    this.persist = persist;
  }

  /** Record that the run is about to write `rel` (see the header); run.json first when it is new. */
  claim(rel: string): void {
    if (this.manifest.covers(rel)) return;
    this.manifest.add(rel);
    this.persist?.();
  }

  openBranch(id: number, columns: readonly string[], ledger: RunLedger): void {
    if (this.writers.has(id)) throw new Error(`branch ${id} is already open`);
    const file = RunDirectory.branchFile(id);
    this.claim(file);
    const w = CsvWriter.create(join(this.path, file), columns);
    this.writers.set(id, w);
    ledger.csvLengths[file] = w.byteLength;
  }

  /** Append a point's row (unbuffered write) and record the new length. */
  appendRow(id: number, cells: readonly CsvCell[], ledger: RunLedger): void {
    const w = this.writers.get(id);
    if (!w) throw new Error(`branch ${id} has no open CSV file`);
    w.append(cells);
    ledger.csvLengths[RunDirectory.branchFile(id)] = w.byteLength;
  }

  closeBranch(id: number): void {
    const w = this.writers.get(id);
    if (!w) return;
    w.close();
    this.writers.delete(id);
  }

  /** fsync every open CSV (before a checkpoint records their lengths). */
  syncAll(): void {
    for (const w of this.writers.values()) w.sync();
  }

  /** Byte lengths of every open branch CSV, by file name relative to the run directory. */
  csvLengths(): Record<string, number> {
    const out: Record<string, number> = {};
    for (const [id, w] of this.writers) out[RunDirectory.branchFile(id)] = w.byteLength;
    return out;
  }

  /** Write a node array to solutions/<name>.npy; returns the path relative to the run directory. */
  writeSolution(name: string, problem: Problem, u: Float64Array, p: Params): string {
    mkdirSync(join(this.path, 'solutions'), { recursive: true });
    const rel = `solutions/${name}.npy`;
    this.claim(rel);
    const { shape, data } = problem.toNodeArray(u, p);
    writeNpy(join(this.path, rel), shape, data);
    return rel;
  }

  writeRunJson(doc: unknown): void {
    writeJsonAtomic(join(this.path, 'run.json'), doc);
  }

  writePoints(parameter: string, specials: readonly SpecialRecord[]): void {
    writeJsonAtomic(join(this.path, 'points.json'), { parameter, points: specials });
    writeFileAtomic(join(this.path, 'points.csv'), pointsCsv(parameter, specials));
  }

  /** A path inside the run directory, relative to `from` (for messages). */
  display(from = process.cwd()): string {
    const r = relative(from, this.path);
    return r === '' ? '.' : r.startsWith('..') && r.split('/').filter((s) => s === '..').length > 2 ? this.path : r;
  }

  close(): void {
    if (this.closed) return;
    for (const id of [...this.writers.keys()]) this.closeBranch(id);
    this.closed = true;
  }
}

/**
 * Before a resume: remove the files of `dir` and of its `subfolders` that `stale(rel, name)` calls
 * stale (`rel` is '' or 'sub/'); missing folders are skipped. The callers decide what is stale
 * (files the checkpoint does not list, temporary files) and what is never touched.
 */
export function removeStaleFiles(dir: string, subfolders: readonly string[], stale: (rel: string, name: string) => boolean): void {
  for (const rel of ['', ...subfolders.map((f) => `${f}/`)]) {
    const folder = rel ? join(dir, rel) : dir;
    let entries: string[];
    try {
      entries = readdirSync(folder);
    } catch {
      continue;
    }
    for (const e of entries) if (stale(rel, e)) rmSync(join(folder, e), { force: true });
  }
}
