/**
 * Fold location by Newton's method on a minimally augmented system (Govaerts 2000; also
 * Griewank & Reddien 1984): unknowns (u, λ), equations
 *
 *     F(u, λ) = 0,     g(u, λ) = 0,
 *
 * where g is defined through the bordered matrix  M = [[J, b], [cᵀ, d]]:
 *     M [v; g] = [0; 1]      and      Mᵀ [ψ; g] = [0; 1].
 * M stays nonsingular at a simple fold when b, c approximate the null vectors, and g vanishes
 * exactly where J is singular. The corner of M is d = max|b_i| rather than 0: g = det J / det M
 * and the derivatives below do not depend on it, but with d = 0 the sparse LU's threshold
 * pivoting takes the border row as a pivot early near the fold (the border row's Schur entries
 * grow like 1/σ_min(J)) and the factors fill in about nine times more (2D Bratu 200²: 8.9 million
 * entries in L instead of 1.0 million, 2 s instead of 0.13 s per factorisation) — as in the
 * null-vector border of the curve systems (curves/null-border.ts). Its derivatives are
 *     g_u δ = −ψᵀ F_uu[v, δ]      g_λ = −ψᵀ F_uλ v,
 * so g_u = −(J'_v)ᵀ ψ with J'_v = d/dε J(u + εv) — Jacobian values differenced along v (they share
 * J's pattern). The Newton matrix [[J, F_λ], [g_uᵀ, g_λ]] is one more bordered matrix of J's
 * pattern. The borders b, c are refreshed from v and ψ at every iteration.
 */
import { matTVec } from '../linalg/sparse.js';
import { infNorm } from '../linalg/vector.js';
import { derivativeEvaluator, directionalJacobian } from '../problem/derivatives.js';
import { type ContinuationSystem, allFinite } from './system.js';
import { rethrowInterrupt } from '../linalg/lu.js';

export interface FoldLocation {
  converged: boolean;
  /** (u, λ) at the fold (best estimate when not converged). */
  x: Float64Array;
  iterations: number;
  /** ‖F‖_w at x. */
  residual: number;
  message?: string;
}

/**
 * Locate a fold between two points (u, λ) with tangents whose λ components differ in sign.
 * `tolerance` applies to the parameter.
 */
export function locateFold(
  sys: ContinuationSystem,
  xa: Float64Array,
  ta: Float64Array,
  xb: Float64Array,
  tb: Float64Array,
  tolerance: number,
  residualTolerance: number,
  maxIterations = 20,
): FoldLocation {
  const n = sys.n;
  const problem = sys.problem;
  const pattern = problem.pattern();
  const nz = pattern.colPtr[pattern.cols];
  // start where the tangent's λ component vanishes (linear interpolation)
  const theta = ta[n] / (ta[n] - tb[n]);
  const x = new Float64Array(n + 1);
  for (let i = 0; i <= n; i++) x[i] = xa[i] + theta * (xb[i] - xa[i]);
  // null-vector guess: the tangent's u part there
  const b = new Float64Array(n);
  for (let i = 0; i < n; i++) b[i] = ta[i] + theta * (tb[i] - ta[i]);
  normaliseWeighted(sys, b);
  const c = new Float64Array(n);
  for (let i = 0; i < n; i++) c[i] = sys.weights[i] * b[i];

  const rhs = new Float64Array(n + 1);
  const sol = new Float64Array(n + 1);
  const v = new Float64Array(n);
  const psi = new Float64Array(n);
  const jp = new Float64Array(nz);
  const jm = new Float64Array(nz);
  const shifted = new Float64Array(n);
  const gu = new Float64Array(n);
  const fuv = new Float64Array(n);
  const derivatives = derivativeEvaluator(problem);
  let residual = Infinity;

  for (let it = 1; it <= maxIterations; it++) {
    const u = x.subarray(0, n);
    const lambda = x[n];
    const p = sys.params(lambda);
    residual = sys.residual(u, lambda);
    if (!Number.isFinite(residual)) return { converged: false, x, iterations: it, residual, message: 'non-finite residual while locating a fold' };
    // M = [[J, b], [cᵀ, d]], d = max|b_i| (see above)
    sys.assemble(u, lambda);
    sys.setColumn(b);
    sys.setRow(c, infNorm(b));
    try {
      sys.factor(true);
    } catch (e) {
      rethrowInterrupt(e);
      return { converged: false, x, iterations: it, residual, message: 'the fold-location border matrix is singular' };
    }
    rhs.fill(0);
    rhs[n] = 1;
    sys.solve(rhs, sol);
    v.set(sol.subarray(0, n));
    const g = sol[n];
    sys.solveTranspose(rhs, sol);
    psi.set(sol.subarray(0, n));
    // g_u = −(J'_v)ᵀ ψ, J'_v from Jacobian values differenced along v
    if (directionalJacobian(problem, u, p, v, jp, jm, shifted)) {
      matTVec({ ...pattern, values: jp }, psi, gu);
      for (let i = 0; i < n; i++) gu[i] = -gu[i];
    } else {
      gu.fill(0);
    }
    derivatives.mixedDerivative(u, p, sys.parameter, v, fuv);
    let gl = 0;
    for (let i = 0; i < n; i++) gl -= psi[i] * fuv[i];
    // Newton matrix [[J, F_λ], [g_uᵀ, g_λ]]
    sys.bordered.setInner(sys.jacobian);
    sys.setColumn(sys.fParameter);
    sys.setRow(gu, gl);
    try {
      sys.factor(true);
    } catch (e) {
      rethrowInterrupt(e);
      return { converged: false, x, iterations: it, residual, message: 'the fold Newton matrix is singular (not a simple fold?)' };
    }
    for (let i = 0; i < n; i++) rhs[i] = -sys.f[i];
    rhs[n] = -g;
    sys.solve(rhs, sol);
    if (!allFinite(sol)) return { converged: false, x, iterations: it, residual, message: 'non-finite Newton update while locating a fold' };
    for (let i = 0; i <= n; i++) x[i] += sol[i];
    // refresh the borders from the current null vectors
    b.set(v);
    normaliseWeighted(sys, b);
    for (let i = 0; i < n; i++) c[i] = sys.weights[i] * b[i];
    if (Math.abs(sol[n]) <= tolerance * Math.max(1, Math.abs(x[n])) && sys.normU(sol) <= 1e-8 * (1 + sys.normU(x))) {
      residual = sys.residual(x.subarray(0, n), x[n]);
      if (residual <= sys.residualBound(x.subarray(0, n), x[n], residualTolerance, residual)) return { converged: true, x, iterations: it, residual };
    }
  }
  return { converged: false, x, iterations: maxIterations, residual, message: `fold location did not converge in ${maxIterations} iterations` };
}

function normaliseWeighted(sys: ContinuationSystem, a: Float64Array): void {
  const s = sys.normU(a);
  if (s > 0) for (let i = 0; i < a.length; i++) a[i] /= s;
}
