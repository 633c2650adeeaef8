/**
 * The case key `start:` — a state of an earlier run (`{run: DIR, point: fold:1, branch: 1}` or
 * `point: final`) or a saved node array (`{solution: file.npy}`) — checked, and the state it names
 * read and fitted to the case's problem (./start.ts reads run folders and .npy files).
 */
import { resolve } from 'node:path';
import type { Params, Problem } from '../problem/problem.js';
import type { ResolvedStart } from './case.js';
import { showValue } from './case-messages.js';
import { type RunPoint, extrasForSolutionFile, extrasVector, finalPoint, parsePointSpec, pointSpecAccepted, pointSpecText, readRunFiles, readSolutionFile, runPoint } from './start.js';

/** The `start` key, checked: what it names and what was read of it. */
export interface StartKey {
  resolved: ResolvedStart;
  /** For a start from a run point: the point (solution file, parameters, extras). */
  point?: RunPoint;
  /** For a start from a solution file. */
  solution?: string;
}

/** Check the `start` key and read what it names (the run's files; the .npy later). */
export function resolveStartKey(
  start: { solution?: string; run?: string; point?: string; branch?: number } | undefined,
  baseDir: string,
  fail: (field: string, detail: string) => never,
): StartKey | undefined {
  if (start === undefined) return undefined;
  const accepted = '{solution: file.npy}, {run: folder, point: fold[:N], branch: K} or {run: folder, point: final}';
  if (start.solution !== undefined && start.run !== undefined) fail('start', `gives both solution and run (accepted: ${accepted})`);
  if (start.solution !== undefined) {
    if (start.point !== undefined || start.branch !== undefined) fail('start', `point and branch go with run, not with solution (accepted: ${accepted})`);
    const file = resolve(baseDir, start.solution);
    return { resolved: { solution: file }, solution: file };
  }
  if (start.run === undefined) fail('start', `names neither a solution file nor a run (accepted: ${accepted})`);
  if (start.point === undefined) fail('start.point', `is missing (accepted: ${pointSpecAccepted})`);
  if (start.point!.trim().toLowerCase() === 'final') {
    const dir = resolve(baseDir, start.run!);
    try {
      return { resolved: { run: dir, point: 'final', branch: 1 }, point: finalPoint(dir) };
    } catch (e) {
      return fail('start.run', (e as Error).message);
    }
  }
  const spec = parsePointSpec(start.point!);
  if (!spec) fail('start.point', `${showValue(start.point)} is not accepted (accepted: ${pointSpecAccepted})`);
  const dir = resolve(baseDir, start.run!);
  const branch = start.branch ?? 1;
  let files: ReturnType<typeof readRunFiles>;
  try {
    files = readRunFiles(dir);
  } catch (e) {
    return fail('start.run', (e as Error).message);
  }
  let point: RunPoint;
  try {
    point = runPoint(files, spec!, branch);
  } catch (e) {
    return fail('start.point', (e as Error).message);
  }
  return { resolved: { run: dir, point: pointSpecText(spec!), branch }, point };
}

/** Read the start state named by the `start` key and check it against the problem's grid. */
export function readStartState(start: StartKey, problem: Problem, params: Params, fail: (field: string, detail: string) => never): { u: Float64Array; from: string } {
  const file = start.point?.solution ?? start.solution!;
  const field = start.point ? 'start.run' : 'start.solution';
  let array: { shape: number[]; data: Float64Array };
  try {
    // the grid says how large the file can be: nodes times fields
    const d = problem.describe();
    array = readSolutionFile(file, d.axes.reduce((a, ax) => a * ax.nodes, 1) * Math.max(1, d.fields.length));
  } catch (e) {
    return fail(field, (e as Error).message);
  }
  const extrasByName = start.point ? start.point.extras : extrasForSolutionFile(file);
  const extras = extrasVector(problem.extraUnknowns.map((x) => x.name), extrasByName);
  let u: Float64Array;
  try {
    u = problem.fromNodeArray(array.shape, array.data, params, extras);
  } catch (e) {
    return fail(field, `${file}: ${(e as Error).message}`);
  }
  if (u.length !== problem.size) fail(field, `${file}: the model made ${u.length} unknowns from it, the problem has ${problem.size}`);
  for (let i = 0; i < u.length; i++) {
    if (!Number.isFinite(u[i])) fail(field, `${file}: holds non-finite values (unknown ${i})`);
  }
  setPhaseReference(problem, u);
  return { u, from: start.point ? `the ${start.point.words}` : `the solution file ${file}` };
}

/** A phase condition measures shifts against a reference profile: the start state is the natural one. */
export function setPhaseReference(problem: Problem, u: Float64Array): void {
  const withReference = problem as Problem & { setPhaseReference?: (u: Float64Array) => void };
  if (problem.extraUnknowns.length > 0 && typeof withReference.setPhaseReference === 'function') withReference.setPhaseReference(u);
}
