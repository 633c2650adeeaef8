/**
 * Newton's method for curve points: G(y) = 0 together with one scalar condition
 * ⟨t, y − ref⟩_w = 0 (t = a unit vector fixes a parameter; t = the tangent is Keller's
 * pseudo-arclength condition). The acceptance rule is the one-parameter corrector's
 * (../newton.ts): the system's scaled residual below `residualTolerance` and the weighted norm
 * of the last update below `stepTolerance`·(1 + ‖y‖_w), or a residual four orders below the
 * tolerance after at least one iteration (near singular points the update stalls at rounding
 * level). The residual tolerance is raised to the system's rounding level where that is higher
 * (g near a second singularity). Failures carry a reason in words.
 *
 * The residual is exact at every iterate; the linearisation starts as the system's last one
 * (chord iterations: the last converged point's) unless `exact` is set, and is made exact at
 * the current iterate as soon as an iteration fails to quarter the residual.
 */
import { SparseLUError } from '../../linalg/lu.js';
import type { NewtonFailure } from '../newton.js';
import type { NewtonSettings } from '../types.js';
import type { AugmentedSystem } from './augmented.js';

export interface CurveNewtonResult {
  converged: boolean;
  iterations: number;
  residual: number;
  failure?: NewtonFailure;
  message?: string;
}

export interface CurveWork {
  g: Float64Array;
  rhs: Float64Array;
  delta: Float64Array;
  row: Float64Array;
}

export function curveWork(size: number): CurveWork {
  return { g: new Float64Array(size - 1), rhs: new Float64Array(size), delta: new Float64Array(size), row: new Float64Array(size) };
}

/** Weighted inner product and norm in the system's unknowns. */
export function wdot(sys: AugmentedSystem, a: ArrayLike<number>, b: ArrayLike<number>): number {
  const w = sys.weights;
  let s = 0;
  for (let i = 0; i < sys.size; i++) s += w[i] * a[i] * b[i];
  return s;
}

export function wnorm(sys: AugmentedSystem, a: ArrayLike<number>): number {
  return Math.sqrt(wdot(sys, a, a));
}

/** Correct y in place onto G = 0 ∩ {⟨t, y − ref⟩_w = 0}. */
export function correctCurve(
  sys: AugmentedSystem,
  y: Float64Array,
  t: Float64Array,
  ref: Float64Array,
  options: NewtonSettings & { maxUpdate?: number; exact?: boolean },
  work: CurveWork,
): CurveNewtonResult {
  const m = sys.size;
  const { g, rhs, delta, row } = work;
  for (let i = 0; i < m; i++) row[i] = sys.weights[i] * t[i];
  let lastUpdate = Infinity;
  let firstResidual = NaN;
  let bestResidual = Infinity;
  let sinceBest = 0;
  let previous = Infinity;
  let exact = false;
  for (let it = 0; ; it++) {
    let res: number;
    try {
      res = sys.evaluate(y, g);
    } catch (e) {
      if (e instanceof SparseLUError) {
        return { converged: false, iterations: it, residual: NaN, failure: e.kind === 'non-finite' ? 'non-finite' : 'singular', message: `the bordered matrix ${e.kind === 'singular' ? 'is singular' : 'has non-finite entries'} here` };
      }
      throw e;
    }
    if (!Number.isFinite(res)) return { converged: false, iterations: it, residual: res, failure: 'non-finite', message: 'the residual is not finite' };
    if (it === 0) firstResidual = res;
    let c = 0;
    for (let i = 0; i < m; i++) c += row[i] * (y[i] - ref[i]);
    const yNorm = wnorm(sys, y);
    const stepOk = it === 0 ? Math.abs(c) <= options.stepTolerance * (1 + yNorm) : lastUpdate <= options.stepTolerance * (1 + yNorm);
    // near a second singularity the residual cannot go below its rounding level
    const tol = Math.max(options.residualTolerance, sys.residualFloor?.() ?? 0);
    if (res <= tol && (stepOk || (it > 0 && res <= 1e-4 * tol))) {
      return { converged: true, iterations: it, residual: res };
    }
    if (it >= options.maxIterations) {
      return { converged: false, iterations: it, residual: res, failure: 'max-iterations', message: `no convergence in ${it} Newton iterations (residual ${res.toExponential(2)})` };
    }
    if (it > 0 && res > 1e8 * Math.max(firstResidual, options.residualTolerance)) {
      return { converged: false, iterations: it, residual: res, failure: 'diverged', message: `Newton diverged (residual grew from ${firstResidual.toExponential(2)} to ${res.toExponential(2)})` };
    }
    if (res < 0.9 * bestResidual) {
      bestResidual = res;
      sinceBest = 0;
    } else if (++sinceBest >= 4 && res > tol) {
      return { converged: false, iterations: it, residual: res, failure: 'stalled', message: `Newton stalled at residual ${res.toExponential(2)}` };
    }
    // chord iterations while they contract well (the residual at least quartered); else the
    // exact linearisation here (full Newton from now on)
    if (!exact && (it === 0 ? options.exact === true : res > 0.25 * previous)) {
      try {
        sys.exact();
      } catch (e) {
        if (e instanceof SparseLUError) return { converged: false, iterations: it, residual: res, failure: 'singular', message: e.message };
        throw e;
      }
      exact = true;
    }
    previous = res;
    for (let i = 0; i < m - 1; i++) rhs[i] = -g[i];
    rhs[m - 1] = -c;
    try {
      sys.solve(row, rhs, delta);
    } catch (e) {
      if (e instanceof SparseLUError || e instanceof Error) {
        return { converged: false, iterations: it, residual: res, failure: 'singular', message: e.message };
      }
      throw e;
    }
    let finite = true;
    for (let i = 0; i < m; i++) if (!Number.isFinite(delta[i])) finite = false;
    if (!finite) return { converged: false, iterations: it + 1, residual: res, failure: 'non-finite', message: 'the Newton update is not finite' };
    for (let i = 0; i < m; i++) y[i] += delta[i];
    lastUpdate = wnorm(sys, delta);
    if (options.maxUpdate !== undefined && lastUpdate > options.maxUpdate) {
      return { converged: false, iterations: it + 1, residual: res, failure: 'diverged', message: `Newton update ${lastUpdate.toExponential(2)} is longer than allowed (${options.maxUpdate.toExponential(2)})` };
    }
  }
}
