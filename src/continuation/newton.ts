/**
 * Newton's method on the bordered system: F(u, λ) = 0 together with one scalar condition
 *   g(x) = ⟨t, x − x_ref⟩_w = 0,
 * where t is a direction in (u, λ) space. With t = e_λ this fixes the parameter (plain Newton at
 * fixed λ, to converge a start point); with t the unit tangent it is Keller's pseudo-arclength
 * condition (the corrector moves in the hyperplane through the predicted point orthogonal to t).
 *
 * Convergence: the scaled weighted residual ‖D⁻¹F‖_w below `residualTolerance` and the weighted
 * norm of the last update below `stepTolerance`·(1 + ‖x‖_w). Failures carry a reason.
 */
import { SparseLUError } from '../linalg/lu.js';
import { type ContinuationSystem, allFinite } from './system.js';
import type { NewtonSettings } from './types.js';

export type NewtonFailure = 'diverged' | 'stalled' | 'non-finite' | 'max-iterations' | 'singular';

export interface NewtonResult {
  converged: boolean;
  /** Linear solves done (Newton iterations). */
  iterations: number;
  /** Scaled weighted residual norm at the final iterate. */
  residual: number;
  /** Whether the final bordered factorisation is at the final iterate's previous Newton iterate (usable for tangents). */
  factored: boolean;
  failure?: NewtonFailure;
  message?: string;
}

export interface CorrectOptions extends NewtonSettings {
  /** Factor with fresh pivots at the first iteration (near folds and branch points). */
  fresh: boolean;
  /**
   * Chord iterations: start with the factorisation the system already holds (a nearby point's
   * bordered matrix) and switch to full Newton when an iteration reduces the residual by less
   * than a factor of four.
   */
  chord?: boolean;
  /** Give up when an update is longer than this (weighted norm): the corrector is leaving the branch. */
  maxUpdate?: number;
}

/**
 * Correct x (length n+1: u then λ) in place onto F = 0 ∩ {⟨t, x − ref⟩_w = 0}.
 */
export function correct(
  sys: ContinuationSystem,
  x: Float64Array,
  t: Float64Array,
  ref: Float64Array,
  options: CorrectOptions,
  work: { rhs: Float64Array; delta: Float64Array },
): NewtonResult {
  const n = sys.n;
  const u = x.subarray(0, n);
  const { rhs, delta } = work;
  let lastUpdate = Infinity;
  let factored = false;
  let firstResidual = NaN;
  let bestResidual = Infinity;
  let sinceBest = 0;
  let chord = options.chord === true;
  let chordSteps = 0;
  let previousResidual = Infinity;
  let freshUsed = false;
  for (let it = 0; ; it++) {
    const res = sys.residual(u, x[n]);
    if (!Number.isFinite(res)) {
      return { converged: false, iterations: it, residual: res, factored, failure: 'non-finite', message: `the residual is not finite at ${sys.parameter} = ${x[n]}` };
    }
    if (it === 0) firstResidual = res;
    // constraint value
    let g = 0;
    const w = sys.weights;
    for (let i = 0; i < n; i++) g += w[i] * t[i] * (x[i] - ref[i]);
    g += t[n] * (x[n] - ref[n]);
    const xNorm = sys.norm(x);
    const stepOk = it === 0 ? Math.abs(g) <= options.stepTolerance * (1 + xNorm) : lastUpdate <= options.stepTolerance * (1 + xNorm);
    // near singular points the update stalls at the rounding level while the residual is already
    // at round-off: accept a residual four orders below the tolerance after one iteration
    if (res <= options.residualTolerance && (stepOk || (it > 0 && res <= 1e-4 * options.residualTolerance))) {
      return { converged: true, iterations: it, residual: res, factored };
    }
    if (it >= options.maxIterations) {
      return { converged: false, iterations: it, residual: res, factored, failure: 'max-iterations', message: `no convergence in ${it} Newton iterations (residual ${res.toExponential(2)})` };
    }
    if (it > 0 && res > 1e8 * Math.max(firstResidual, options.residualTolerance)) {
      return { converged: false, iterations: it, residual: res, factored, failure: 'diverged', message: `Newton diverged (residual grew from ${firstResidual.toExponential(2)} to ${res.toExponential(2)})` };
    }
    // stalled: no 10% progress in four iterations (near singular points Newton converges only
    // linearly, typically halving the residual, which still counts as progress)
    if (res < 0.9 * bestResidual) {
      bestResidual = res;
      sinceBest = 0;
    } else if (++sinceBest >= 4 && res > options.residualTolerance) {
      return { converged: false, iterations: it, residual: res, factored, failure: 'stalled', message: `Newton stalled at residual ${res.toExponential(2)}` };
    }
    // chord while it contracts well (residual at least quartered per iteration); else full Newton
    if (chord && (chordSteps >= 8 || (chordSteps > 0 && res > 0.25 * previousResidual))) chord = false;
    previousResidual = res;
    if (chord) {
      chordSteps++;
      for (let i = 0; i < n; i++) rhs[i] = -sys.f[i];
      rhs[n] = -g;
      try {
        sys.solve(rhs, delta);
      } catch {
        chord = false;
      }
      if (chord && allFinite(delta)) {
        for (let i = 0; i <= n; i++) x[i] += delta[i];
        lastUpdate = sys.norm(delta);
        if (options.maxUpdate === undefined || lastUpdate <= options.maxUpdate) continue;
        for (let i = 0; i <= n; i++) x[i] -= delta[i];
        chord = false;
      }
      chord = false;
    }
    sys.assemble(u, x[n]);
    sys.setTangentRow(t);
    try {
      sys.factor(options.fresh && !freshUsed);
      freshUsed = true;
    } catch (e) {
      if (e instanceof SparseLUError) {
        const failure: NewtonFailure = e.kind === 'non-finite' ? 'non-finite' : 'singular';
        return { converged: false, iterations: it, residual: res, factored: false, failure, message: `bordered matrix ${e.kind === 'singular' ? 'is singular' : 'has non-finite entries'} at ${sys.parameter} = ${x[n]}` };
      }
      throw e;
    }
    factored = true;
    for (let i = 0; i < n; i++) rhs[i] = -sys.f[i];
    rhs[n] = -g;
    try {
      sys.solve(rhs, delta);
    } catch (e) {
      if (e instanceof SparseLUError) {
        return { converged: false, iterations: it, residual: res, factored: false, failure: 'singular', message: e.message };
      }
      throw e;
    }
    if (!allFinite(delta)) {
      return { converged: false, iterations: it + 1, residual: res, factored, failure: 'non-finite', message: 'the Newton update is not finite' };
    }
    for (let i = 0; i <= n; i++) x[i] += delta[i];
    lastUpdate = sys.norm(delta);
    if (options.maxUpdate !== undefined && lastUpdate > options.maxUpdate) {
      return { converged: false, iterations: it + 1, residual: res, factored, failure: 'diverged', message: `Newton update ${lastUpdate.toExponential(2)} is longer than allowed (${options.maxUpdate.toExponential(2)})` };
    }
  }
}

/** Workspace for `correct` (allocate once per branch). */
export function correctWork(n: number): { rhs: Float64Array; delta: Float64Array } {
  return { rhs: new Float64Array(n + 1), delta: new Float64Array(n + 1) };
}
