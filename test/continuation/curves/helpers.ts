/** Helpers for curve tests: uniform start states and running the curve engine in memory. */
import { CurveContinuation, type CurveOptions, type CurveSummary } from '../../../src/continuation/curves/engine.js';
import { type CurvePoint, type CurveSettings, type CurveSpecial, defaultCurveSettings } from '../../../src/continuation/curves/types.js';
import { type Params, type Problem, resolveParameters } from '../../../src/problem/problem.js';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { denseJacobian } from '../../discretisations/helpers.js';

/** A state with every field uniform: values[f] at every node of field f. */
export function uniformStart(problem: Problem, values: number[], p: Params): Float64Array {
  const { shape } = problem.toNodeArray(problem.initialGuess(p), p);
  const nodes = shape.slice(1).reduce((a, b) => a * b, 1);
  const data = new Float64Array(shape.reduce((a, b) => a * b, 1));
  values.forEach((v, f) => data.fill(v, f * nodes, (f + 1) * nodes));
  return problem.fromNodeArray(shape, data, p);
}

export function curveSettings(partial: Partial<CurveSettings> & Pick<CurveSettings, 'follow' | 'parameter' | 'free' | 'bounds'>): CurveSettings {
  return { ...defaultCurveSettings, ...partial };
}

export interface CurveRun {
  points: CurvePoint[];
  specials: CurveSpecial[];
  ends: { branch: number; reason: string; message: string }[];
  logs: string[];
  summary: CurveSummary;
  curve(id: number): CurvePoint[];
}

export function runCurve(problem: Problem, given: Record<string, number>, s: CurveSettings, options: CurveOptions = {}): CurveRun {
  const params = resolveParameters(problem, given);
  const c = new CurveContinuation(problem, params, s, options);
  const points: CurvePoint[] = [];
  const specials: CurveSpecial[] = [];
  const ends: CurveRun['ends'] = [];
  const logs: string[] = [];
  const it = c.events();
  let r = it.next();
  try {
    while (!r.done) {
      const e = r.value;
      if (e.type === 'point') points.push(e.point);
      else if (e.type === 'special') specials.push(e.point);
      else if (e.type === 'branch-end') ends.push({ branch: e.branch, reason: e.reason, message: e.message });
      else if (e.type === 'log') logs.push(e.message);
      r = it.next();
    }
  } finally {
    c.dispose();
  }
  return { points, specials, ends, logs, summary: r.value, curve: (id) => points.filter((p) => p.branch === id) };
}

/** Eigenvalues of the Jacobian at (u, p), dense (ml-matrix), sorted by modulus. */
export function denseEigenvalues(problem: Problem, u: Float64Array, p: Params): { re: number; im: number }[] {
  const J = new Matrix(denseJacobian(problem, u, p));
  const e = new EigenvalueDecomposition(J);
  return e.realEigenvalues.map((re, i) => ({ re, im: e.imaginaryEigenvalues[i] })).sort((a, b) => Math.hypot(a.re, a.im) - Math.hypot(b.re, b.im));
}

/** The largest absolute Jacobian entry (the scale for "zero" eigenvalues). */
export function jacobianScale(problem: Problem, u: Float64Array, p: Params): number {
  return Math.max(...denseJacobian(problem, u, p).map((r) => Math.max(...r.map(Math.abs))));
}

/** Scaled residual max_i |F_i| / (1 + max_j |J_ij|) at (u, p), recomputed here (independent of the engine). */
export function independentResidual(problem: Problem, u: Float64Array, p: Params): number {
  const f = new Float64Array(problem.size);
  problem.residual(u, p, f);
  const J = denseJacobian(problem, u, p);
  let m = 0;
  for (let i = 0; i < f.length; i++) m = Math.max(m, Math.abs(f[i]) / (1 + Math.max(...J[i].map(Math.abs))));
  return m;
}

/**
 * The ignition limit λ*(Bi) of the unit slab with convective faces from its closed-form family
 * (derived in slab.test.ts): the maximum over θ of θ²/(2cosh²(θ/4))·exp(−θ tanh(θ/4)/Bi), at the
 * root of d ln λ/dθ = 0 (bisection).
 */
export function ignitionLimit(Bi: number): number {
  const slope = (t: number): number => 2 / t - 0.5 * Math.tanh(t / 4) - (Math.tanh(t / 4) + (t / 4) / Math.cosh(t / 4) ** 2) / Bi;
  let a = 1e-12;
  let b = 60;
  for (let k = 0; k < 200; k++) {
    const m = 0.5 * (a + b);
    if (slope(m) > 0) a = m;
    else b = m;
  }
  const t = 0.5 * (a + b);
  return ((t * t) / (2 * Math.cosh(t / 4) ** 2)) * Math.exp((-t * Math.tanh(t / 4)) / Bi);
}

