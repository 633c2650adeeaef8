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

function infNorm(a: Float64Array): number {
  let m = 0;
  for (let i = 0; i < a.length; i++) {
    const v = Math.abs(a[i]);
    if (v > m) m = v;
  }
  return m;
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

  const stepFor = (u: Float64Array, a: Float64Array): number => {
    const na = infNorm(a);
    if (na === 0) return 0;
    return (centralDifferenceStep * Math.max(1, infNorm(u))) / na;
  };

  return {
    exactSecond: false,
    exactMixed: false,
    secondDerivative(u, p, a, b, out) {
      const eps = stepFor(u, a);
      out.fill(0);
      if (eps === 0) return;
      for (let i = 0; i < n; i++) w[i] = u[i] + eps * a[i];
      problem.jacobian(w, p, vp);
      for (let i = 0; i < n; i++) w[i] = u[i] - eps * a[i];
      problem.jacobian(w, p, vm);
      const s = 1 / (2 * eps);
      const { colPtr, rowIdx } = pat;
      for (let j = 0; j < n; j++) {
        const bj = b[j];
        if (bj === 0) continue;
        for (let k = colPtr[j]; k < colPtr[j + 1]; k++) out[rowIdx[k]] += (vp[k] - vm[k]) * s * bj;
      }
    },
    mixedDerivative(u, p, name, a, out) {
      const eps = stepFor(u, a);
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
