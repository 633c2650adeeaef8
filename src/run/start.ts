/**
 * Special points of an earlier run, named the way users write them (`fold`, `fold:2`,
 * `branch-point:1`, `hopf`, `end:3`), and the start state a case can take from a run or from a
 * saved solution file.
 *
 *   start: {solution: path/to/file.npy}
 *       a node array as written in a run's solutions/ folder (or by the user's own tools):
 *       float64, C order, shape (fields, nz, ny, nx) with absent axes dropped. When the file lies
 *       in the solutions/ folder of a run, the extra unknowns (constraint multipliers, drift
 *       speeds) come from that run's points.json; otherwise from the model's initial guess.
 *   start: {run: DIR, point: fold[:N] | branch-point[:N] | hopf[:N] | end[:N], branch: K}
 *       the state at the N-th point of that kind (from 1; default 1) along branch K (default 1)
 *       of the run in DIR, with its extra unknowns, AND its parameter values (see
 *       `runPointParameters`).
 *
 * Nothing here writes files; errors are plain Errors whose messages the case reader turns into
 * one-line case errors naming the field.
 */
import { existsSync, statSync } from 'node:fs';
import { jsonFileLimit, npyHeaderAllowance, readTextFile } from './read-file.js';
import { basename, dirname, isAbsolute, join, relative, resolve } from 'node:path';
import type { SpecialRecord } from './run-directory.js';
import { parseJsonNumber, readNpy } from './writers.js';

export const pointKinds = ['fold', 'branch-point', 'hopf', 'end', 'cusp', 'bogdanov-takens', 'fold-branch-point', 'mode-change', 'mode-crossing', 'zero-hopf', 'bautin', 'double-hopf'] as const;
export type PointKind = (typeof pointKinds)[number];

/** The N-th special point of a kind (index from 1). */
export interface PointSpec {
  kind: PointKind;
  index: number;
}

export const pointSpecAccepted =
  'fold, branch-point, hopf or end (on curves also cusp, bogdanov-takens, fold-branch-point, mode-change, mode-crossing, zero-hopf, bautin, double-hopf), optionally with :N for the N-th along the branch (from 1), e.g. fold or branch-point:2; or final, the last state of a time integration (branchline settle)';

/** Parse `fold`, `fold:2`, `branch-point:1`...; returns null when the text is not one of these. */
export function parsePointSpec(text: string): PointSpec | null {
  const m = /^\s*([a-z-]+)\s*(?::\s*(\d+))?\s*$/.exec(String(text).toLowerCase());
  if (!m) return null;
  const kind = m[1] === 'branchpoint' ? 'branch-point' : m[1];
  if (!(pointKinds as readonly string[]).includes(kind)) return null;
  const index = m[2] === undefined ? 1 : Number(m[2]);
  if (!Number.isSafeInteger(index) || index < 1) return null;
  return { kind: kind as PointKind, index };
}

/** `fold 1`, `branch point 2`, `Hopf point 1`, `end 1` (plain words). */
export function pointWords(spec: PointSpec): string {
  const word = spec.kind === 'branch-point' ? 'branch point' : spec.kind === 'hopf' ? 'Hopf point' : spec.kind.replace(/-/g, ' ');
  return `${word} ${spec.index}`;
}

/** The spec as written on the command line and in case files (`fold:1`). */
export function pointSpecText(spec: PointSpec): string {
  return `${spec.kind}:${spec.index}`;
}

/** The N-th record of the kind on the branch, in the order the run found them. */
export function findSpecial(records: readonly SpecialRecord[], spec: PointSpec, branch: number): SpecialRecord | undefined {
  return records.filter((r) => r.kind === spec.kind && r.branch === branch)[spec.index - 1];
}

/** What a run has, in words: `branch 1: fold 1 (lambda = 3.5138), end 1; branch 2: end 1`. */
export function availablePoints(records: readonly SpecialRecord[]): string {
  if (records.length === 0) return 'no special points at all';
  const byBranch = new Map<number, string[]>();
  const counts = new Map<string, number>();
  for (const r of records) {
    const key = `${r.branch}:${r.kind}`;
    const k = (counts.get(key) ?? 0) + 1;
    counts.set(key, k);
    const list = byBranch.get(r.branch) ?? [];
    const value = typeof r.value === 'number' && Number.isFinite(r.value) ? ` (${r.parameter} = ${Number(r.value.toPrecision(6))})` : '';
    list.push(`${r.kind}:${k}${value}`);
    byBranch.set(r.branch, list);
  }
  return [...byBranch.entries()].map(([b, list]) => `branch ${b}: ${list.join(', ')}`).join('; ');
}

// ---------------------------------------------------------------------------------------------
// Reading an earlier run

/** The parts of a run directory a start needs. */
export interface RunFiles {
  dir: string;
  /** run.json as read. */
  run: Record<string, unknown>;
  /** points.json records. */
  points: SpecialRecord[];
}

function readJson(file: string): unknown {
  const text = readTextFile(file, jsonFileLimit, 'a run record');
  try {
    return JSON.parse(text);
  } catch (e) {
    throw new Error(`${file} is not valid JSON (${(e as Error).message})`);
  }
}

/** Read run.json of a run directory (clear errors when the folder holds no run of ours). */
export function readRunJson(dir: string): Record<string, unknown> {
  if (!existsSync(dir)) throw new Error(`${dir}: no such folder`);
  if (!statSync(dir).isDirectory()) throw new Error(`${dir} is a file, not a run folder`);
  const runFile = join(dir, 'run.json');
  if (!existsSync(runFile)) throw new Error(`${dir} holds no run (run.json is missing)`);
  const run = readJson(runFile);
  if (run === null || typeof run !== 'object' || (run as { format?: unknown }).format !== 'branchline run') {
    throw new Error(`${runFile} is not a branchline run record`);
  }
  return run as Record<string, unknown>;
}

/** The special points of a run directory (points.json); `optional`: an empty list when the file is absent. */
export function readPointsJson(dir: string, optional = false): SpecialRecord[] {
  const pointsFile = join(dir, 'points.json');
  if (!existsSync(pointsFile)) {
    if (optional) return [];
    throw new Error(`${dir} has no points.json (the run wrote no special points yet)`);
  }
  const doc = readJson(pointsFile) as { points?: unknown };
  if (!doc || !Array.isArray(doc.points)) throw new Error(`${pointsFile} holds no list of points`);
  return (doc.points as Record<string, unknown>[]).map((p) => ({ ...p, value: parseJsonNumber(p.value) }) as SpecialRecord);
}

/** Read run.json and points.json of a run directory (clear errors when it is not one). */
export function readRunFiles(dir: string): RunFiles {
  return { dir, run: readRunJson(dir), points: readPointsJson(dir) };
}

/**
 * The parameter values at a special point of a run: the run's start values with its
 * continuation parameter set to the point's located value.
 */
export function runPointParameters(files: RunFiles, record: SpecialRecord): Record<string, number> {
  const startParams = (files.run['start-parameters'] ?? {}) as Record<string, unknown>;
  const out: Record<string, number> = {};
  for (const [k, v] of Object.entries(startParams)) {
    try {
      out[k] = parseJsonNumber(v);
    } catch {
      // a value we cannot read is left to the case and the model defaults
    }
  }
  out[record.parameter] = record.value;
  // a point on a curve: the free parameter's value there too
  if (typeof record['free-parameter'] === 'string') {
    try {
      out[record['free-parameter']] = parseJsonNumber(record.free);
    } catch {
      /* left to the run's start value */
    }
  }
  return out;
}

/** A special point of a run (or the final state of a time integration), with its solution file and extra unknowns. */
export interface RunPoint {
  /** The points.json record (absent for the final state of a time integration). */
  record?: SpecialRecord;
  /** Absolute path of the solution file. */
  solution: string;
  params: Record<string, number>;
  extras?: Record<string, number>;
  /** `fold 1 on branch 1 of run runs/slab` (for messages). */
  words: string;
}

/** Find a special point in a run, with a clear error listing what the run has otherwise. */
export function runPoint(files: RunFiles, spec: PointSpec, branch: number): RunPoint {
  const record = findSpecial(files.points, spec, branch);
  const where = `run ${files.dir}`;
  if (!record) {
    throw new Error(`${where} has no ${pointWords(spec)} on branch ${branch} (it has: ${availablePoints(files.points)})`);
  }
  if (typeof record.solution !== 'string') {
    throw new Error(`${where} kept no solution file for ${pointWords(spec)} on branch ${branch} (it ran with output.solutions: none)`);
  }
  const solution = runFilePath(files.dir, record.solution, `the solution file of ${pointWords(spec)} on branch ${branch}`);
  if (!existsSync(solution)) throw new Error(`${where}: the solution file ${record.solution} of ${pointWords(spec)} on branch ${branch} is missing`);
  const extras = record['extra-unknowns'];
  return {
    record,
    solution,
    params: runPointParameters(files, record),
    ...(extras && typeof extras === 'object' ? { extras: numberMap(extras) } : {}),
    words: `${pointWords(spec)} on branch ${branch} of ${where}`,
  };
}

/**
 * The absolute path of a file a run's own records name (`solutions/...npy` in points.json):
 * it must lie inside the run folder (a run folder is data; its records must not send us
 * elsewhere on the disk). `what` names the file in the message.
 */
export function runFilePath(dir: string, name: string, what: string): string {
  const path = resolve(dir, name);
  const rel = relative(dir, path);
  if (rel === '' || rel.startsWith('..') || isAbsolute(rel)) throw new Error(`run ${dir}: ${what} (${name}) lies outside the run folder`);
  return path;
}

function numberMap(v: Record<string, unknown>): Record<string, number> {
  const out: Record<string, number> = {};
  for (const [k, x] of Object.entries(v)) {
    try {
      out[k] = parseJsonNumber(x);
    } catch {
      /* skipped */
    }
  }
  return out;
}

/**
 * When `file` lies in the solutions/ folder of a run, the extra unknowns recorded for it in that
 * run's points.json (undefined otherwise).
 */
export function extrasForSolutionFile(file: string): Record<string, number> | undefined {
  const folder = dirname(file);
  if (basename(folder) !== 'solutions') return undefined;
  const dir = dirname(folder);
  if (!existsSync(join(dir, 'points.json'))) return undefined;
  try {
    const files = readRunFiles(dir);
    const rel = relative(dir, file).split('\\').join('/');
    const rec = files.points.find((p) => p.solution === rel);
    const extras = rec?.['extra-unknowns'];
    return extras && typeof extras === 'object' ? numberMap(extras as Record<string, unknown>) : undefined;
  } catch {
    return undefined;
  }
}

/**
 * Read a solution file (float64 .npy) with messages naming the file. `values`: how many values
 * the grid implies (nodes times fields); a file longer than such an array needs is refused
 * before it is read.
 */
export function readSolutionFile(file: string, values?: number): { shape: number[]; data: Float64Array } {
  if (!existsSync(file)) throw new Error(`${file}: no such file`);
  if (statSync(file).isDirectory()) throw new Error(`${file} is a folder, not a .npy file`);
  return values === undefined ? readNpy(file) : readNpy(file, npyHeaderAllowance + 8 * values, `a solution of this grid (${values} values)`);
}

/** Extra unknowns by name as a vector in the problem's order; undefined when any is missing. */
export function extrasVector(names: readonly string[], extras: Record<string, number> | undefined): Float64Array | undefined {
  if (!extras || names.length === 0) return undefined;
  const out = new Float64Array(names.length);
  for (let i = 0; i < names.length; i++) {
    const v = extras[names[i]];
    if (typeof v !== 'number' || !Number.isFinite(v)) return undefined;
    out[i] = v;
  }
  return out;
}

/**
 * `start: {run: DIR, point: final}`: the final state of a time integration (`branchline settle`),
 * with its parameter values and extra unknowns (run.json `final`). Any outcome is accepted (a
 * continuation converges Newton from it; a new integration goes on from it); the words say which.
 */
export function finalPoint(dir: string): RunPoint {
  const run = readRunJson(dir);
  if (run.kind !== 'settle') {
    throw new Error(`run ${dir} is a continuation run; final names the last state of a time integration (branchline settle); this run has: ${availablePoints(readPointsJson(dir, true))}`);
  }
  const final = run.final as { solution?: unknown; 'extra-unknowns'?: unknown } | undefined;
  if (!final || typeof final.solution !== 'string') throw new Error(`run ${dir} has no final state yet (status ${String(run.status)}; resume it with branchline resume)`);
  const solution = resolve(dir, final.solution);
  if (!existsSync(solution)) throw new Error(`run ${dir}: the final state ${final.solution} is missing`);
  const params: Record<string, number> = {};
  for (const [k, v] of Object.entries((run['start-parameters'] ?? {}) as Record<string, unknown>)) {
    try {
      params[k] = parseJsonNumber(v);
    } catch {
      // left to the case and the model defaults
    }
  }
  const extras = final['extra-unknowns'];
  const outcome = (run.outcome as { kind?: unknown } | undefined)?.kind;
  return {
    solution,
    params,
    ...(extras && typeof extras === 'object' ? { extras: numberMap(extras as Record<string, unknown>) } : {}),
    words: `final state (${typeof outcome === 'string' ? outcome : 'unfinished'}) of the time integration in ${dir}`,
  };
}

/** `settle` for the folder of a time integration, `continuation` for other runs, undefined when unreadable. */
export function runKind(dir: string): 'settle' | 'find-states' | 'continuation' | undefined {
  try {
    const kind = readRunJson(dir).kind;
    return kind === 'settle' || kind === 'find-states' ? kind : 'continuation';
  } catch {
    return undefined;
  }
}
