/**
 * Second-order information for locating and switching: F_uu[a, b] and F_up[a].
 *
 * When a model supplies them exactly (Problem.secondDerivative / mixedDerivative) those are
 * used; otherwise they come from central directional finite differences:
 *
 *   F_uu[a, b] ≈ (J(u + εa) − J(u − εa)) b / (2ε)           (two Jacobian evaluations)
 *   F_up[a]    ≈ (F_p(u + εa) − F_p(u − εa)) / (2ε)         (two parameter derivatives)
 *
 * with ε = δ·max(1, ‖u‖∞)/‖a‖∞, δ = ε_mach^(1/3) (the step that balances the O(ε²)
 * truncation error against rounding, common practice for central differences). Differencing
 * Jacobian values (rather than residuals twice) keeps the error at O(δ²) relative, and the
 * linear parts of the operator cancel exactly.
 *
 * `derivativeEvaluator(problem)` allocates its workspace once; its calls allocate nothing.
 */
import { matVec } from '../linalg/sparse.js';
import { infNorm } from '../linalg/vector.js';
import type { Params, Problem } from './problem.js';

/** δ = ε_mach^(1/3). */
export const centralDifferenceStep = Math.cbrt(Number.EPSILON);

export interface DerivativeEvaluator {
  /** Whether F_uu comes from the model (true) or from finite differences (false). */
  readonly exactSecond: boolean;
  /** Whether F_up comes from the model (true) or from finite differences (false). */
  readonly exactMixed: boolean;
  /** out = F_uu(u, p)[a, b]. */
  secondDerivative(u: Float64Array, p: Params, a: Float64Array, b: Float64Array, out: Float64Array): void;
  /** out = F_up(u, p)[a] for parameter `name`. */
  mixedDerivative(u: Float64Array, p: Params, name: string, a: Float64Array, out: Float64Array): void;
}

/** The central-difference step along a at u: δ·max(1, ‖u‖∞)/‖a‖∞ (0 when a = 0). */
export function directionStep(u: Float64Array, a: Float64Array): number {
  const na = infNorm(a);
  return na === 0 ? 0 : (centralDifferenceStep * Math.max(1, infNorm(u))) / na;
}

/**
 * Values of the directional derivative of the Jacobian, d/dε J(u + εa) at ε = 0, on J's pattern,
 * by central differences (two Jacobian evaluations): out = (J(u + εa) − J(u − εa)) / (2ε).
 * `work` holds n values and `minus` nnz values of scratch. Returns false (out zeroed) when a = 0.
 */
export function directionalJacobian(
  problem: Problem,
  u: Float64Array,
  p: Params,
  a: Float64Array,
  out: Float64Array,
  minus: Float64Array,
  work: Float64Array,
): boolean {
  const eps = directionStep(u, a);
  if (eps === 0) {
    out.fill(0);
    return false;
  }
  const n = u.length;
  for (let i = 0; i < n; i++) work[i] = u[i] + eps * a[i];
  problem.jacobian(work, p, out);
  for (let i = 0; i < n; i++) work[i] = u[i] - eps * a[i];
  problem.jacobian(work, p, minus);
  const s = 1 / (2 * eps);
  for (let k = 0; k < out.length; k++) out[k] = (out[k] - minus[k]) * s;
  return true;
}

/** Finite-difference second derivatives for any Problem (workspace allocated here, once). */
export function finiteDifferenceDerivatives(problem: Problem): DerivativeEvaluator {
  const n = problem.size;
  const pat = problem.pattern();
  const nz = pat.colPtr[pat.cols];
  const vp = new Float64Array(nz);
  const vm = new Float64Array(nz);
  const w = new Float64Array(n);
  const fp = new Float64Array(n);
  const fm = new Float64Array(n);

  return {
    exactSecond: false,
    exactMixed: false,
    secondDerivative(u, p, a, b, out) {
      if (!directionalJacobian(problem, u, p, a, vp, vm, w)) {
        out.fill(0);
        return;
      }
      matVec({ ...pat, values: vp }, b, out);
    },
    mixedDerivative(u, p, name, a, out) {
      const eps = directionStep(u, a);
      if (eps === 0) {
        out.fill(0);
        return;
      }
      for (let i = 0; i < n; i++) w[i] = u[i] + eps * a[i];
      problem.parameterDerivative(w, p, name, fp);
      for (let i = 0; i < n; i++) w[i] = u[i] - eps * a[i];
      problem.parameterDerivative(w, p, name, fm);
      const s = 1 / (2 * eps);
      for (let i = 0; i < n; i++) out[i] = (fp[i] - fm[i]) * s;
    },
  };
}

/** Exact derivatives where the model supplies them, finite differences otherwise. */
export function derivativeEvaluator(problem: Problem): DerivativeEvaluator {
  const fd = finiteDifferenceDerivatives(problem);
  const second = problem.secondDerivative?.bind(problem);
  const mixed = problem.mixedDerivative?.bind(problem);
  return {
    exactSecond: !!second,
    exactMixed: !!mixed,
    secondDerivative: second ?? fd.secondDerivative,
    mixedDerivative: mixed ?? fd.mixedDerivative,
  };
}
