/**
 * Newton polish of a nearly steady state: Newton's method on F(u, p) = 0 at fixed parameters,
 * from the state a time integration reached. The iteration matrix is J − σM with a tiny shift σ
 * (σ = 1e-8 on the scale of the row-scaled Jacobian), which keeps the iteration well defined
 * where J has a neutral mode — a pattern on a periodic domain can be shifted, so its Jacobian
 * is (nearly) singular — while the fixed point is still F = 0 and the convergence quadratic for
 * every mode with |μ| ≫ σ. Backtracking halves a step that does not lower the residual.
 *
 * Converged when the scaled residual ‖D⁻¹F‖_w is below the tolerance and the last update is
 * small (or the residual is four orders below the tolerance), as in the continuation's Newton.
 */
import { SparseLUError } from '../linalg/lu.js';
import { weightedNorm, type Params, type Problem } from '../problem/problem.js';
import type { IterationMatrix } from './iteration-matrix.js';

export interface PolishResult {
  converged: boolean;
  iterations: number;
  /** Scaled residual at the final iterate. */
  residual: number;
  message?: string;
}

/** Relative shift σ of the polish's iteration matrix J − σM. */
export const polishShift = 1e-8;

/**
 * Polish `u` in place. `scaled(f)` is the scaled residual norm of a residual vector; `rowScale` the
 * scaling D⁻¹ (1 / the largest Jacobian entry per row, at least 1).
 */
export function polishSteadyState(
  problem: Problem,
  p: Params,
  u: Float64Array,
  matrix: IterationMatrix,
  scaled: (f: Float64Array) => number,
  options: { tolerance: number; maxIterations: number },
): PolishResult {
  const n = problem.size;
  const f = new Float64Array(n);
  const rhs = new Float64Array(n);
  const d = new Float64Array(n);
  const trial = new Float64Array(n);
  const w = problem.weights;
  // the shift relative to the Jacobian's scale: c = 1/σ, σ = polishShift · (largest entry, at least 1)
  let c = Number.NaN;
  problem.residual(u, p, f);
  let res = scaled(f);
  let lastUpdate = Infinity;
  for (let it = 0; ; it++) {
    if (!Number.isFinite(res)) return { converged: false, iterations: it, residual: res, message: 'the residual is not finite' };
    const stepOk = lastUpdate <= options.tolerance * (1 + weightedNorm(w, u));
    if (res <= options.tolerance && (stepOk || res <= 1e-4 * options.tolerance)) return { converged: true, iterations: it, residual: res };
    if (it >= options.maxIterations) {
      return { converged: false, iterations: it, residual: res, message: `no convergence in ${it} Newton iterations (residual ${res.toExponential(2)})` };
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
      if (e instanceof SparseLUError) return { converged: false, iterations: it, residual: res, message: `the Jacobian is singular at the state (${e.message})` };
      throw e;
    }
    // backtracking: halve the update until the residual drops (at most 5 times)
    let lambda = 1;
    for (let k = 0; ; k++) {
      for (let i = 0; i < n; i++) trial[i] = u[i] + lambda * d[i];
      problem.residual(trial, p, f);
      const r = scaled(f);
      if (r < res || k >= 5) {
        u.set(trial);
        res = r;
        break;
      }
      lambda /= 2;
    }
    lastUpdate = lambda * weightedNorm(w, d);
  }
}
