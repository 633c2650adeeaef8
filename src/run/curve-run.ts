/**
 * Curve runs in the run layer: the curve engine behind the same event loop, files and
 * checkpoints as branches (run-case.ts, run-events.ts). What differs is gathered here:
 *
 *  - the engine (src/continuation/curves/engine.ts), started from the case's start state — at
 *    the special point itself when the case starts from one of an earlier run;
 *  - the CSV columns: the free parameter after the continuation parameter, and at the end the
 *    test functions and, for branch-point curves, the critical mode's wavenumber per axis
 *    (`mode-x`, …);
 *  - points.json records: both parameters (`parameter`/`value` and `free-parameter`/`free`), the
 *    test functions at the point and the kind's details (modes, new curves, notes).
 */
import { CurveContinuation, type CurveState } from '../continuation/curves/engine.js';
import { branchPointTestFunctions } from '../continuation/curves/branch-point-system.js';
import { foldTestFunctions } from '../continuation/curves/fold-system.js';
import { hopfTestFunctions } from '../continuation/curves/hopf-system.js';
import { type CurveInfo, type CurveSpecial, curveName } from '../continuation/curves/types.js';
import { criticalityOf } from '../continuation/hopf/lyapunov.js';
import type { Problem } from '../problem/problem.js';
import type { PreparedCase } from './case.js';
import type { EngineFactory, EngineLike } from './run-case.js';
import { type BranchRecord, type CurveColumns, type SpecialRecord, extraValues } from './run-directory.js';

/** The extra CSV columns of a curve run (undefined for a branch run). */
export function curveColumns(prepared: PreparedCase): CurveColumns | undefined {
  const c = prepared.curve;
  if (!c) return undefined;
  const tests = (c.settings.follow === 'fold' ? foldTestFunctions : c.settings.follow === 'hopf' ? hopfTestFunctions : branchPointTestFunctions).map((t) => t.name);
  const modes = c.settings.follow === 'branch-point' ? prepared.problem.describe().axes.map((a) => `mode-${a.name}`) : [];
  return { free: c.settings.free, tests, modes };
}

/** The curve engine for a prepared curve case (the run layer's EngineFactory shape). */
export function curveEngine(prepared: PreparedCase): EngineFactory {
  const curve = prepared.curve!;
  return (problem, params, _settings, options) =>
    new CurveContinuation(problem, params, curve.settings, {
      ...(options.start ? { start: options.start } : {}),
      atPoint: curve.atPoint && options.start !== undefined,
      ...(curve.atPoint && curve.frequency !== undefined ? { frequency: curve.frequency } : {}),
      ...(options.state ? { state: options.state as CurveState } : {}),
    }) as EngineLike;
}

/** The ledger's record of a curve that starts. */
export function curveBranchRecord(info: CurveInfo, file: string): BranchRecord {
  return {
    id: info.id,
    depth: info.depth,
    origin: info.origin.kind === 'start' ? { kind: 'start', direction: info.direction, ...(info.origin.at ? { at: info.origin.at } : {}) } : { kind: 'mode-change', branch: info.origin.branch, value: info.origin.value },
    file,
    points: 0,
    follow: info.follow,
    ...(info.mode ? { mode: info.mode.slice() } : {}),
  };
}

/** The points.json record of a special point on a curve. */
export function curveSpecialRecord(problem: Problem, parameter: string, free: string, s: CurveSpecial, solution: string | undefined): SpecialRecord {
  const rec: SpecialRecord = {
    kind: s.kind,
    branch: s.branch,
    parameter,
    value: s.value,
    'free-parameter': free,
    free: s.free,
    arclength: s.arclength,
    monitors: { ...s.monitors },
    residual: s.residual,
  };
  if (s.kind === 'end') {
    rec.reason = s.reason;
  } else {
    rec.located = s.located;
    rec.tests = { ...s.tests };
    if (s.mode) rec.mode = s.mode.slice();
    if (s.newMode) rec['new-mode'] = s.newMode.slice();
    if (s.newBranches) rec['new-branches'] = s.newBranches.slice();
    if (s.note !== undefined) rec.note = s.note;
    hopfDetails(rec, s.tests);
  }
  if (solution !== undefined) rec.solution = solution;
  const extras = extraValues(problem, s.u);
  if (extras) rec['extra-unknowns'] = extras;
  return rec;
}

/**
 * Points on Hopf curves: the frequency ω and period 2π/ω of the pair on the axis, the first
 * Lyapunov coefficient and the criticality it gives (except where it is zero: a Bautin point).
 */
function hopfDetails(rec: SpecialRecord, tests: Record<string, number>): void {
  const omega = tests.frequency;
  if (omega === undefined) return;
  rec.frequency = omega;
  rec.period = omega > 0 ? (2 * Math.PI) / omega : Infinity;
  const l1 = tests['first-lyapunov-coefficient'];
  rec['first-lyapunov-coefficient'] = l1;
  if (rec.kind !== 'bautin' && rec.kind !== 'bogdanov-takens') rec.criticality = criticalityOf(l1);
}

/** Extend the curve's criticality stretches with a point's first Lyapunov coefficient (Hopf curves). */
export function addCriticality(b: BranchRecord, parameter: number, tests: Record<string, number> | undefined): void {
  const l1 = tests?.['first-lyapunov-coefficient'];
  if (l1 === undefined || !Number.isFinite(l1)) return;
  const word = criticalityOf(l1);
  const st = (b.criticality ??= []);
  const last = st[st.length - 1];
  if (last && last.criticality === word) last.to = parameter;
  else st.push({ from: parameter, to: parameter, criticality: word });
}

/** `curve 2 started at the mode change at kf = 385.6 on curve 1 (mode 2)` and the like. */
export function curveStartWords(info: CurveInfo, parameter: string): string {
  const mode = info.mode ? ` (mode ${info.mode.join(', ')})` : '';
  if (info.origin.kind === 'start') return `${curveName(info.follow)} ${info.id} started${info.origin.at === 'bogdanov-takens' ? ' at the Bogdanov–Takens point (ω growing from 0)' : ''}${mode}`;
  return `${curveName(info.follow)} ${info.id} started at the mode change at ${parameter} = ${info.origin.value} on curve ${info.origin.branch}${mode}`;
}
