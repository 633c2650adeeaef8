/**
 * Newton polish of a nearly steady state: Newton's method on F(u, p) = 0 at fixed parameters,
 * from the state a time integration reached. The iteration matrix is J − σM with a tiny shift σ
 * (σ = 1e-8 on the scale of the Jacobian's largest entry), which keeps the iteration well defined
 * where J has a neutral mode — a pattern on a periodic domain can be shifted, so its Jacobian
 * is (nearly) singular — while the fixed point is still F = 0 and the convergence quadratic for
 * every mode with |μ| ≫ σ. Backtracking halves a step that does not lower ‖F‖_w.
 *
 * Converged by the same two tests as the continuation's Newton (src/continuation/newton.ts), at
 * the state that is returned:
 *   residual:  ‖F(u)‖_w ≤ rtol·‖terms‖_w + 16·ε·‖rounding‖_w   (src/problem/residual-size.ts: no
 *              row scaling, so a stiff stencil cannot make a wrong state look converged);
 *   update:    the estimated error of u is at most stol·(1 + ‖u‖_w): the full (undamped) update
 *              that led to u, times ρ/(1 − ρ) once the updates contract with ρ ≤ ½.
 * Where the update stops shrinking at the rounding level (a neutral mode amplifies rounding
 * errors by 1/σ), the residual test alone accepts u once the update from it does not lower the
 * residual (u is kept as it was). The residual returned is ‖F‖_w of the returned state.
 */
import { SparseLUError } from '../linalg/lu.js';
import { weightedNorm, type Params, type Problem } from '../problem/problem.js';
import { ResidualSizes } from '../problem/residual-size.js';
import type { IterationMatrix } from './iteration-matrix.js';

export interface PolishResult {
  converged: boolean;
  iterations: number;
  /** ‖F‖_w at the returned state. */
  residual: number;
  /** What that residual was tested against (rtol·‖terms‖_w + 16·ε·‖rounding‖_w). */
  residualBound: number;
  message?: string;
}

/** Tolerances of the polish: the residual test's rtol, the update test's, the iteration limit. */
export interface PolishSettings {
  residualTolerance: number;
  stepTolerance: number;
  maxIterations: number;
}

/** Relative shift σ of the polish's iteration matrix J − σM. */
export const polishShift = 1e-8;

/** Polish `u` in place; on failure `u` holds the last iterate. */
export function polishSteadyState(problem: Problem, p: Params, u: Float64Array, matrix: IterationMatrix, options: PolishSettings): PolishResult {
  const n = problem.size;
  const w = problem.weights;
  const f = new Float64Array(n);
  const rhs = new Float64Array(n);
  const d = new Float64Array(n);
  const trial = new Float64Array(n);
  const ft = new Float64Array(n);
  const sizes = new ResidualSizes(problem);
  // the shift relative to the Jacobian's scale: c = 1/σ, σ = polishShift · (largest entry, at least 1)
  let c = Number.NaN;
  problem.residual(u, p, f);
  let res = weightedNorm(w, f);
  let lastUpdate = Infinity;
  let previousUpdate = Infinity;
  for (let it = 0; ; it++) {
    if (!Number.isFinite(res)) return { converged: false, iterations: it, residual: res, residualBound: NaN, message: 'the residual is not finite' };
    sizes.evaluate(u, p, f);
    const bound = sizes.bound(options.residualTolerance);
    const residualOk = res <= bound;
    const stepLimit = options.stepTolerance * (1 + weightedNorm(w, u));
    // the contraction rate needs two full updates; after one, the update itself is the estimate
    const rho = Number.isFinite(previousUpdate) ? lastUpdate / previousUpdate : 1;
    const errorEstimate = rho <= 0.5 ? (rho / (1 - rho)) * lastUpdate : lastUpdate;
    const done = (): PolishResult => ({ converged: true, iterations: it, residual: res, residualBound: bound });
    if (residualOk && (errorEstimate <= stepLimit || res === 0)) return done();
    if (it >= options.maxIterations) {
      return {
        converged: false,
        iterations: it,
        residual: res,
        residualBound: bound,
        message: `no convergence in ${it} Newton iterations (residual ${res.toExponential(2)} against ${bound.toExponential(2)})`,
      };
    }
    matrix.evaluateJacobian(u, p);
    if (it === 0) {
      let scale = 1;
      for (let k = 0; k < matrix.jacobian.length; k++) scale = Math.max(scale, Math.abs(matrix.jacobian[k]));
      c = 1 / (polishShift * scale);
    }
    try {
      matrix.factor(c);
      // (M − cJ) d = c F  ⇔  (J − σM) d = −F
      for (let i = 0; i < n; i++) rhs[i] = c * f[i];
      matrix.solve(rhs, d);
    } catch (e) {
      if (e instanceof SparseLUError) return { converged: false, iterations: it, residual: res, residualBound: bound, message: `the Jacobian is singular at the state (${e.message})` };
      throw e;
    }
    // the update is applied even when it is already below the step limit (a polish has no
    // reason to stop short of what one more residual evaluation gives): the next iteration's
    // contraction estimate accepts the result
    const update = weightedNorm(w, d);
    // backtracking: halve the update until the residual drops (at most 5 times)
    let lambda = 1;
    for (let k = 0; ; k++) {
      for (let i = 0; i < n; i++) trial[i] = u[i] + lambda * d[i];
      problem.residual(trial, p, ft);
      const r = weightedNorm(w, ft);
      // u passed the residual test and the full update does not lower the residual: the update
      // is rounding amplified along a near-null mode; u is as converged as double precision allows
      if (k === 0 && residualOk && !(r < res)) return done();
      if (r < res || k >= 5) {
        u.set(trial);
        f.set(ft);
        res = r;
        break;
      }
      lambda /= 2;
    }
    // a damped step says nothing about the error left: only full steps feed the estimate
    previousUpdate = lambda === 1 ? lastUpdate : Infinity;
    lastUpdate = lambda === 1 ? update : Infinity;
  }
}
