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
 * An existing folder is used only when it is empty. A non-empty folder is refused unless
 * `force` is set AND it holds an earlier branchline run (a run.json of ours); then only our own
 * entries (run.json, points.json, branches/, solutions/, checkpoint files) are removed and any
 * other files the user put there are left alone. We never empty an arbitrary folder.
 */
import { existsSync, mkdirSync, readdirSync, readFileSync, rmSync, statSync } from 'node:fs';
import { join, relative } from 'node:path';
import type { ContinuationPoint, SpecialPoint, StopReason } from '../continuation/types.js';
import type { CurveStopReason } from '../continuation/curves/types.js';
import type { Params, Problem } from '../problem/problem.js';
import { InputError } from './errors.js';
import { type CsvCell, CsvWriter, csvLine, writeFileAtomic, writeJsonAtomic, writeNpy } from './writers.js';

export const runFormat = 'branchline run';
export const runFormatVersion = 1;

export type RunStatus = 'running' | 'finished' | 'stopped' | 'failed';

/** Entries of a run directory that belong to us (removed by `force`). */
const ownEntries = ['run.json', 'points.json', 'points.csv', 'branches', 'solutions', 'diagram.svg', 'plots', 'monitors.csv', 'monitors.svg', 'snapshots'];
const ownEntryPattern = /^(checkpoint.*|\..*\.tmp)$/;

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
 * name, newton-iterations, step, and with stability analysis (`eigenvalues` > 0) the stability
 * columns, `search-complete` (whether every eigenvalue with real part ≥ 0 was certified found)
 * and the real and imaginary parts of the `eigenvalues` rightmost eigenvalues.
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
    'step-length',
    ...(stability ? [...stabilityColumns, 'search-complete', ...eigenvalueColumns(eigenvalues)] : []),
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
  row.push(p.newtonIterations, p.step);
  if (plan.stability) {
    // empty cells when the point has no stability data (or `stable` is not certified: null)
    const s = (p as { stability?: PointStabilityCells }).stability;
    row.push(s?.stable, s?.unstableCount, s?.leadingReal, s?.leadingImag, s?.complete);
    for (let k = 0; k < plan.eigenvalues; k++) {
      const e = s?.eigenvalues?.[k];
      row.push(e?.re, e?.im);
    }
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

function isOurRun(dir: string): boolean {
  const file = join(dir, 'run.json');
  if (!existsSync(file)) return false;
  try {
    const doc = JSON.parse(readFileSync(file, 'utf8')) as { format?: unknown };
    return doc.format === runFormat;
  } catch {
    return false;
  }
}

export class RunDirectory {
  readonly path: string;
  private readonly writers = new Map<number, CsvWriter>();
  private closed = false;

  private constructor(path: string) {
    this.path = path;
  }

  /**
   * Prepare `path` for a new run (see the header for the policy on existing folders).
   * Throws InputError (bad input, nothing changed) when the folder cannot be used.
   */
  static create(path: string, options: { force?: boolean; folders?: readonly string[] } = {}): RunDirectory {
    if (existsSync(path)) {
      if (!statSync(path).isDirectory()) throw new InputError(`output folder ${path} exists and is a file, not a folder`);
      const entries = readdirSync(path);
      if (entries.length > 0) {
        if (!options.force) {
          throw new InputError(
            `output folder ${path} is not empty (${isOurRun(path) ? 'it holds an earlier run' : `it holds ${entries.length} entries`}); choose another with --out, or pass --force to replace an earlier run`,
          );
        }
        if (!isOurRun(path)) {
          throw new InputError(`output folder ${path} is not empty and holds no earlier branchline run; --force replaces only an earlier run, choose another folder with --out`);
        }
        for (const e of entries) {
          if (ownEntries.includes(e) || ownEntryPattern.test(e)) rmSync(join(path, e), { recursive: true, force: true });
        }
      }
    }
    try {
      mkdirSync(path, { recursive: true });
      for (const f of options.folders ?? ['branches']) mkdirSync(join(path, f), { recursive: true });
    } catch (e) {
      throw new InputError(`output folder ${path} cannot be created (${(e as NodeJS.ErrnoException).code ?? (e as Error).message})`);
    }
    return new RunDirectory(path);
  }

  /**
   * Reopen a run directory to continue a run: every branch CSV the ledger knows is truncated to
   * its recorded length; CSVs the ledger does not know (rows written after the checkpoint for a
   * branch that had not started then) are removed.
   */
  static reopen(path: string, ledger: RunLedger, columnsOf: (branch: number) => string[]): RunDirectory {
    if (!isOurRun(path)) throw new InputError(`${path} holds no branchline run (run.json missing or not ours)`);
    const dir = new RunDirectory(path);
    mkdirSync(join(path, 'branches'), { recursive: true });
    const known = new Set(Object.keys(ledger.csvLengths));
    for (const f of readdirSync(join(path, 'branches'))) {
      if (f.endsWith('.csv') && !known.has(`branches/${f}`)) rmSync(join(path, 'branches', f));
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

  openBranch(id: number, columns: readonly string[], ledger: RunLedger): void {
    if (this.writers.has(id)) throw new Error(`branch ${id} is already open`);
    const file = RunDirectory.branchFile(id);
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
