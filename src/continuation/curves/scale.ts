/**
 * Residual scaling of curve systems: each equation row of F is divided by max(1, its largest
 * Jacobian entry), frozen at a curve's first point, and the scaled residual is measured in the
 * weighted (discrete L2) norm. It measures the corrector's progress (contraction, stalls) only:
 * row scaling can make a wrong state look converged (rows of fourth-order operators have
 * max |J| ≈ 6·EI/h⁴), so convergence is decided on the true residual (./state-residual.ts).
 */
import type { Problem } from '../../problem/problem.js';

/** 1 / max(1, max_j |J_ij|) per row, from Jacobian values on the problem's pattern. */
export function frozenRowScale(problem: Problem, jacobianValues: Float64Array): Float64Array {
  const pat = problem.pattern();
  const n = problem.size;
  const rowMax = new Float64Array(n);
  for (let j = 0; j < n; j++) {
    for (let k = pat.colPtr[j]; k < pat.colPtr[j + 1]; k++) {
      const a = Math.abs(jacobianValues[k]);
      const i = pat.rowIdx[k];
      if (a > rowMax[i]) rowMax[i] = a;
    }
  }
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) out[i] = 1 / Math.max(1, rowMax[i]);
  return out;
}

/** ‖D F‖_w with D the row scale and w the quadrature weights. */
export function scaledNorm(f: Float64Array, scale: Float64Array, weights: Float64Array): number {
  let s = 0;
  for (let i = 0; i < f.length; i++) {
    const v = f[i] * scale[i];
    s += weights[i] * v * v;
  }
  return Math.sqrt(s);
}
