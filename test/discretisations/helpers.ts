/** Test helpers: dense Jacobians, central finite differences, small dense utilities. */
import type { Params, Problem } from '../../src/problem/problem.js';

export function denseJacobian(problem: Problem, u: Float64Array, p: Params): number[][] {
  const pat = problem.pattern();
  const values = new Float64Array(pat.rowIdx.length);
  problem.jacobian(u, p, values);
  const n = problem.size;
  const d = Array.from({ length: n }, () => new Array<number>(n).fill(0));
  for (let j = 0; j < n; j++) for (let k = pat.colPtr[j]; k < pat.colPtr[j + 1]; k++) d[pat.rowIdx[k]][j] += values[k];
  return d;
}

/** Dense central-difference Jacobian, column by column. */
export function fdJacobian(problem: Problem, u: Float64Array, p: Params, step = 1e-6): number[][] {
  const n = problem.size;
  const fp = new Float64Array(n);
  const fm = new Float64Array(n);
  const d = Array.from({ length: n }, () => new Array<number>(n).fill(0));
  const w = u.slice();
  for (let j = 0; j < n; j++) {
    const h = step * Math.max(1, Math.abs(u[j]));
    w[j] = u[j] + h;
    problem.residual(w, p, fp);
    w[j] = u[j] - h;
    problem.residual(w, p, fm);
    w[j] = u[j];
    for (let i = 0; i < n; i++) d[i][j] = (fp[i] - fm[i]) / (2 * h);
  }
  return d;
}

export function maxAbsDiff(a: number[][], b: number[][]): number {
  let m = 0;
  for (let i = 0; i < a.length; i++) for (let j = 0; j < a[i].length; j++) m = Math.max(m, Math.abs(a[i][j] - b[i][j]));
  return m;
}

export function residualOf(problem: Problem, u: Float64Array, p: Params): Float64Array {
  const out = new Float64Array(problem.size);
  problem.residual(u, p, out);
  return out;
}

import { Matrix, solve } from 'ml-matrix';

/** Dense Newton for small problems (tests only): returns the converged state or throws. */
export function newtonDense(problem: Problem, u0: Float64Array, p: Params, tol = 1e-11, maxIter = 30): Float64Array {
  const u = u0.slice();
  const f = new Float64Array(problem.size);
  for (let it = 0; it < maxIter; it++) {
    problem.residual(u, p, f);
    let norm = 0;
    for (let i = 0; i < f.length; i++) norm = Math.max(norm, Math.abs(f[i]));
    const J = new Matrix(denseJacobian(problem, u, p));
    const du = solve(J, Matrix.columnVector(Array.from(f))).to1DArray();
    let step = 0;
    for (let i = 0; i < u.length; i++) {
      u[i] -= du[i];
      step = Math.max(step, Math.abs(du[i]));
    }
    if (step < tol) return u;
  }
  throw new Error(`newton did not converge in ${maxIter} iterations`);
}
