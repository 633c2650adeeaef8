/**
 * The bordered continuation system of a Problem in one continuation parameter λ:
 *
 *     [ J(u,λ)   F_λ(u,λ) ] [δu]     [ F(u,λ) ]
 *     [ r_uᵀ     r_λ      ] [δλ] = − [   g    ]
 *
 * with a border row r (the weighted tangent for pseudo-arclength, e_λ for a fixed parameter, or a
 * minimally augmented row when locating folds). The (n+1) pattern is analysed once per branch;
 * every Newton iteration refills the values and refactors through the LU's refactor policy.
 *
 * All norms are weighted (discrete L2): ‖x‖² = Σ w_i u_i² + λ². Residual norms are the true
 * ‖F‖_w (no scaling); `residualBound` gives what they are tested against (residual-size.ts).
 */
import { performance } from 'node:perf_hooks';
import { BorderedMatrix } from '../linalg/bordered.js';
import { type BackendDecision, SparseLU, SparseLUError, type LUOptions } from '../linalg/lu.js';
import type { Params, Problem } from '../problem/problem.js';
import { ResidualSizes } from '../problem/residual-size.js';
import type { FactoredShift } from '../linalg/eigen.js';

export class ContinuationSystem {
  readonly n: number;
  readonly weights: Float64Array;
  /** Jacobian values of the last `assemble`. */
  readonly jacobian: Float64Array;
  /** F(u, λ) of the last `residual` call. */
  readonly f: Float64Array;
  /** F_λ(u, λ) of the last `assemble`. */
  readonly fParameter: Float64Array;
  readonly bordered: BorderedMatrix;
  private readonly sizes: ResidualSizes;
  private lu: SparseLU | undefined;
  /** Options of the bordered matrix's LU (the eigenvalue solver's LU takes the same backend request). */
  readonly luOptions: LUOptions;
  private readonly rowBuffer: Float64Array;
  factorisations = 0;
  refactorisations = 0;
  /** Increases with every factorisation: callers record it to know whose matrix is factored. */
  stamp = 0;
  /** Seconds spent per phase (for the benchmark's cost shares). */
  readonly seconds = { residual: 0, assembly: 0, factorisation: 0, solves: 0 };
  solves = 0;
  assemblies = 0;

  constructor(
    readonly problem: Problem,
    readonly base: Params,
    readonly parameter: string,
    luOptions: LUOptions = {},
  ) {
    if (!(parameter in base)) {
      throw new Error(`unknown continuation parameter '${parameter}' (known: ${Object.keys(base).join(', ')})`);
    }
    this.n = problem.size;
    this.weights = problem.weights;
    const pattern = problem.pattern();
    this.jacobian = new Float64Array(pattern.colPtr[pattern.cols]);
    this.f = new Float64Array(this.n);
    this.fParameter = new Float64Array(this.n);
    this.bordered = new BorderedMatrix(pattern, 1);
    this.sizes = new ResidualSizes(problem);
    this.rowBuffer = new Float64Array(this.n);
    this.luOptions = luOptions;
  }

  params(lambda: number): Params {
    return { ...this.base, [this.parameter]: lambda };
  }

  /** this.f = F(u, λ); returns the weighted residual norm ‖F‖_w. */
  residual(u: Float64Array, lambda: number): number {
    this.timed('residual', () => this.problem.residual(u, this.params(lambda), this.f));
    return this.normU(this.f);
  }

  /**
   * What ‖F(u, λ)‖_w is tested against: rtol·‖terms‖_w + 16·ε·‖rounding‖_w (residual-size.ts).
   * Call right after `residual(u, λ)` at the same point (the rule of thumb for models without
   * term sizes reads this.f). Given the residual `norm`, the rounding part is computed only when
   * the terms part alone does not already pass it (the returned bound is then that part: the
   * decision is the same, at about half the cost), and not for a norm far above both parts (then
   * the bound returned is an estimate that the norm exceeds: a failing test either way, or at
   * worst one more Newton iteration).
   */
  residualBound(u: Float64Array, lambda: number, rtol: number, norm = Infinity): number {
    const p = this.params(lambda);
    return this.timed('residual', () => {
      this.sizes.evaluate(u, p, this.f, false);
      const partial = this.sizes.bound(rtol);
      if (norm <= partial || this.sizes.withRounding) return partial;
      // a residual far above the terms part plus twice the last rounding part computed fails
      // anyway (the rounding part changes little from one iterate to the next): skip computing it
      if (Number.isFinite(norm) && norm > partial + 2 * this.roundingHint) return partial + 2 * this.roundingHint;
      this.sizes.evaluate(u, p, this.f);
      const full = this.sizes.bound(rtol);
      this.roundingHint = full - partial;
      return full;
    });
  }

  /** The rounding part of the last full residual bound (Infinity: none since the last restart). */
  private roundingHint = Infinity;

  /** Fill J and F_λ at (u, λ) and put them into the bordered matrix. */
  assemble(u: Float64Array, lambda: number): void {
    this.timed('assembly', () => {
      const p = this.params(lambda);
      this.problem.jacobian(u, p, this.jacobian);
      this.problem.parameterDerivative(u, p, this.parameter, this.fParameter);
      this.bordered.setInner(this.jacobian);
      this.bordered.setColumn(0, this.fParameter);
    });
    this.assemblies++;
  }

  /** Border row: (w ∘ τ_u, τ_λ) — the weighted tangent. */
  setTangentRow(tangent: Float64Array): void {
    const w = this.weights;
    const row = this.rowBuffer;
    for (let i = 0; i < this.n; i++) row[i] = w[i] * tangent[i];
    this.bordered.setRow(0, row);
    this.bordered.setCorner(0, 0, tangent[this.n]);
  }

  /** Border row e_λ (fixes the parameter). */
  setParameterRow(): void {
    this.rowBuffer.fill(0);
    this.bordered.setRow(0, this.rowBuffer);
    this.bordered.setCorner(0, 0, 1);
  }

  /** Arbitrary border row (first n entries) and corner. */
  setRow(row: ArrayLike<number>, corner: number): void {
    this.bordered.setRow(0, row);
    this.bordered.setCorner(0, 0, corner);
  }

  /** Arbitrary border column (first n entries); assemble() puts F_λ there. */
  setColumn(column: ArrayLike<number>): void {
    this.bordered.setColumn(0, column);
  }

  /** Which sparse LU factors the bordered matrix and why (undefined before the first factorisation). */
  get luDecision(): BackendDecision | undefined {
    return this.lu?.decision;
  }

  private solver(): SparseLU {
    if (!this.lu) this.lu = new SparseLU(this.bordered.pattern, this.luOptions);
    return this.lu;
  }

  /**
   * Factor the bordered matrix: refactor with kept pivots while they stay healthy, fresh pivots
   * when `fresh` (near folds and branch points) or when the policy rejects the refactor.
   */
  factor(fresh: boolean): void {
    this.stamp++;
    const done = this.timed('factorisation', () => this.solver().update(this.bordered.values, fresh || this.freshPending));
    this.freshPending = false;
    if (done === 'factor') this.factorisations++;
    else this.refactorisations++;
  }

  /** Solve with the current factorisation (length n+1, in place into out). */
  solve(rhs: Float64Array, out?: Float64Array): Float64Array {
    this.solves++;
    return this.timed('solves', () => this.solver().solve(rhs, out));
  }

  solveTranspose(rhs: Float64Array, out?: Float64Array): Float64Array {
    this.solves++;
    return this.timed('solves', () => this.solver().solveTranspose(rhs, out));
  }

  /** Run `f`, adding its time to the phase `phase` (also when it throws). */
  private timed<T>(phase: keyof ContinuationSystem['seconds'], f: () => T): T {
    const t0 = performance.now();
    try {
      return f();
    } finally {
      this.seconds[phase] += (performance.now() - t0) / 1000;
    }
  }

  private unitSolution: { stamp: number; z: Float64Array } | undefined;

  /**
   * z = A⁻¹e_{n+1} for the current factors of the bordered matrix A (one solve, once per
   * factorisation): the unnormalised tangent when the border row is the previous tangent, and the
   * second solution the bordering lemma needs (`jacobianSolver`). Do not modify it.
   */
  lastColumnSolution(): Float64Array {
    if (this.unitSolution?.stamp !== this.stamp) {
      const e = new Float64Array(this.n + 1);
      e[this.n] = 1;
      this.unitSolution = { stamp: this.stamp, z: this.solve(e, new Float64Array(this.n + 1)) };
    }
    return this.unitSolution.z;
  }

  /**
   * Solves with the Jacobian J inside the current factors of the bordered matrix A = [J b; cᵀ d],
   * without a factorisation of J (the bordering lemma): with A[z; ζ] = e_{n+1} and
   * A[x₁; y₁] = [r; 0], J(x₁ − (y₁/ζ)z) = r, since Jz + bζ = 0 and Jx₁ + by₁ = r. One solve with
   * A per solve with J. The eigenvalue solver uses it as its shift-invert operator at shift 0, so
   * that a point whose bordered matrix was factored at the point itself needs no factorisation of
   * J for the eigenvalues (when shift 0 suits the search). Undefined when ζ is negligible against
   * z (J singular to working precision: a fold or branch point); valid until the next
   * factorisation (a solve after it throws).
   */
  jacobianSolver(): FactoredShift | undefined {
    const n = this.n;
    const z = this.lastColumnSolution();
    const zeta = z[n];
    let zMax = 0;
    for (let i = 0; i < n; i++) zMax = Math.max(zMax, Math.abs(z[i]));
    if (!(Math.abs(zeta) > 1e-10 * zMax)) return undefined;
    const stamp = this.stamp;
    const lu = this.solver();
    const rhs = new Float64Array(n + 1);
    const x1 = new Float64Array(n + 1);
    return {
      shift: 0,
      lu: {
        solve: (b: Float64Array, out?: Float64Array): Float64Array => {
          if (this.stamp !== stamp) throw new Error('jacobianSolver: the bordered matrix was factored again since this solver was made');
          rhs.set(b.subarray(0, n));
          rhs[n] = 0;
          lu.solve(rhs, x1);
          const x = out ?? new Float64Array(n);
          const c = x1[n] / zeta;
          for (let i = 0; i < n; i++) x[i] = x1[i] - c * z[i];
          return x;
        },
      },
    };
  }

  /** Sign and log|det| of the factored bordered matrix. */
  determinant(): { sign: number; logAbs: number } {
    return this.solver().logDeterminant();
  }

  /** Weighted norm of an (n+1) vector (u part weighted, λ part plain). */
  norm(x: Float64Array): number {
    return Math.sqrt(this.dot(x, x));
  }

  /** Weighted inner product of two (n+1) vectors. */
  dot(a: Float64Array, b: Float64Array): number {
    const w = this.weights;
    let s = a[this.n] * b[this.n];
    for (let i = 0; i < this.n; i++) s += w[i] * a[i] * b[i];
    return s;
  }

  /** Weighted norm of the u part of an (n+1) or n vector. */
  normU(x: Float64Array): number {
    const w = this.weights;
    let s = 0;
    for (let i = 0; i < this.n; i++) s += w[i] * x[i] * x[i];
    return Math.sqrt(s);
  }

  /**
   * Forget the kept pivot order: the next factorisation takes fresh pivots, exactly as a new
   * system's first one would (the symbolic analysis is deterministic and is kept).
   */
  restart(): void {
    this.freshPending = true;
    this.stamp++;
    this.roundingHint = Infinity;
  }

  private freshPending = false;

  dispose(): void {
    this.lu?.dispose();
    this.lu = undefined;
  }
}

export { SparseLUError };

/** Whether every entry is finite. */
export function allFinite(x: Float64Array): boolean {
  for (let i = 0; i < x.length; i++) if (!Number.isFinite(x[i])) return false;
  return true;
}
