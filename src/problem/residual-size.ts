/**
 * When is a state a solution? The residual test of Newton's method, in a form that no row
 * scaling can fake:
 *
 *     ‖F(u)‖_w  ≤  rtol·‖terms(u)‖_w  +  16·ε·‖rounding(u)‖_w
 *
 * (weighted discrete L2 norms, ε = 2⁻⁵² the double-precision unit). `terms` are the sizes of the
 * separate contributions to each row (diffusion, reaction, load: see Problem.residualMagnitudes),
 * so the first part says "F is small compared with what cancels in it"; `rounding` is the size
 * of the rounding errors of evaluating F at a state of at least unit size, so the second part is
 * what any double-precision state can reach (stencils of fourth-order operators on fine grids
 * cancel many digits) and the absolute tolerance at zero states. The factor 16 covers the few
 * roundings of a stencil sum and of the stored unknowns (common practice for such bounds).
 *
 * A model that does not describe its terms gets a rule of thumb from its Jacobian J = F_u(u, p):
 * the linear part J u as one term and the remainder F − J u as another,
 *     terms_i    = |(J u)_i| + |F_i − (J u)_i|,
 *     rounding_i = Σ_j |J_ij|·max(|u_j|, 1) + |F_i − (J u)_i|,
 * which costs one Jacobian evaluation per test.
 *
 * The same function serves the engine and anyone re-checking a saved state: both get the same
 * numbers from the same (u, p).
 */
import type { Params, Problem } from './problem.js';

/** Multiple of ε·‖rounding‖_w allowed for rounding errors. */
export const roundingFactor = 16;

/** Workspace for residual sizes of one problem (allocate once, reuse). */
export class ResidualSizes {
  readonly terms: Float64Array;
  readonly rounding: Float64Array;
  private readonly jacobianValues?: Float64Array;
  private readonly product?: Float64Array;

  constructor(readonly problem: Problem) {
    const n = problem.size;
    this.terms = new Float64Array(n);
    this.rounding = new Float64Array(n);
    if (typeof problem.residualMagnitudes !== 'function') {
      const pattern = problem.pattern();
      this.jacobianValues = new Float64Array(pattern.colPtr[pattern.cols]);
      this.product = new Float64Array(n);
    }
  }

  /** Whether the model describes its terms (else the Jacobian rule of thumb is used). */
  get exact(): boolean {
    return this.jacobianValues === undefined;
  }

  /** Whether the last `evaluate` filled `rounding` too. */
  withRounding = false;

  /**
   * Fill `terms` and (unless `withRounding` is false) `rounding` at (u, p); `f` = F(u, p) (needed
   * by the rule of thumb only, which always fills both).
   */
  evaluate(u: Float64Array, p: Params, f: Float64Array, withRounding = true): void {
    const problem = this.problem;
    if (typeof problem.residualMagnitudes === 'function') {
      problem.residualMagnitudes(u, p, this.terms, withRounding ? this.rounding : undefined);
      this.withRounding = withRounding;
      return;
    }
    this.withRounding = true;
    const values = this.jacobianValues!;
    const ju = this.product!;
    problem.jacobian(u, p, values);
    const { colPtr, rowIdx } = problem.pattern();
    const n = problem.size;
    ju.fill(0);
    this.rounding.fill(0);
    for (let j = 0; j < n; j++) {
      const uj = u[j];
      const aj = Math.max(Math.abs(uj), 1);
      for (let k = colPtr[j]; k < colPtr[j + 1]; k++) {
        const i = rowIdx[k];
        ju[i] += values[k] * uj;
        this.rounding[i] += Math.abs(values[k]) * aj;
      }
    }
    for (let i = 0; i < n; i++) {
      const rest = Math.abs(f[i] - ju[i]);
      this.terms[i] = Math.abs(ju[i]) + rest;
      this.rounding[i] += rest;
    }
  }

  /** rtol·‖terms‖_w + 16·ε·‖rounding‖_w for the last `evaluate` (without its rounding part: rtol·‖terms‖_w). */
  bound(rtol: number): number {
    const w = this.problem.weights;
    let t = 0;
    let r = 0;
    for (let i = 0; i < w.length; i++) {
      t += w[i] * this.terms[i] * this.terms[i];
      if (this.withRounding) r += w[i] * this.rounding[i] * this.rounding[i];
    }
    return rtol * Math.sqrt(t) + roundingFactor * Number.EPSILON * Math.sqrt(r);
  }
}

/** The residual test at one state, computed from scratch (for re-checking saved states). */
export function residualTest(problem: Problem, u: Float64Array, p: Params, rtol: number): { norm: number; bound: number; passed: boolean } {
  const f = new Float64Array(problem.size);
  problem.residual(u, p, f);
  const sizes = new ResidualSizes(problem);
  sizes.evaluate(u, p, f);
  const w = problem.weights;
  let s = 0;
  for (let i = 0; i < f.length; i++) s += w[i] * f[i] * f[i];
  const norm = Math.sqrt(s);
  const bound = sizes.bound(rtol);
  return { norm, bound, passed: norm <= bound };
}
