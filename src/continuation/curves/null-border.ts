/**
 * The bordered null-vector system of a (nearly) singular Jacobian, shared by the fold and
 * branch-point curve systems (Govaerts, *Numerical Methods for Bifurcations of Dynamical
 * Equilibria*, SIAM 2000; Griewank & Reddien 1984):
 *
 *     M = [ J   b ]      M [v; g] = [0; 1],      Mᵀ [w; g] = [0; 1].
 *         [ cᵀ  0 ]
 *
 * M stays regular where J has a simple zero eigenvalue as long as b is not in the range of J
 * and c is not orthogonal to its kernel; g vanishes exactly where J is singular, and then v and
 * w are its right and left null vectors. Derivatives (the adjoint formula):
 *
 *     g_u δ = −wᵀ F_uu[v, δ],      g_p = −wᵀ F_up v,
 *
 * so the gradient g_u = −(J'_v)ᵀ w with J'_v = d/dε J(u + εv) (Jacobian values differenced
 * along v: they share J's pattern). The borders are refreshed from the null vectors of an
 * accepted point: c = W v / ‖v‖_w and b = W⁻¹ w / ‖W⁻¹ w‖_w (W the quadrature weights), so
 * cᵀv > 0 and bᵀw > 0 keep the orientation of v and w from point to point.
 *
 * One sparse LU of M (size n + 1) per evaluation; `solveM` reuses it for block elimination of
 * the curve systems' Newton matrices (no factorisation of J itself, which is singular there).
 */
import { performance } from 'node:perf_hooks';
import { BorderedMatrix } from '../../linalg/bordered.js';
import { SparseLU, type LUOptions } from '../../linalg/lu.js';
import { matTVec } from '../../linalg/sparse.js';
import { type DerivativeEvaluator, derivativeEvaluator, directionalJacobian } from '../../problem/derivatives.js';
import type { Params, Problem } from '../../problem/problem.js';
import { type SystemCounters, emptyCounters, pseudoRandomVector } from './augmented.js';

export class NullVectorBorder {
  readonly n: number;
  /** Column border b and row border c (length n). */
  readonly b: Float64Array;
  readonly c: Float64Array;
  /** Right and left null-vector approximations at the last factorisation (cᵀv = 1, bᵀw = 1). */
  readonly v: Float64Array;
  readonly w: Float64Array;
  /** g at the last factorisation. */
  g = NaN;
  readonly counters: SystemCounters = emptyCounters();
  private readonly weights: Float64Array;
  private readonly bordered: BorderedMatrix;
  private lu: SparseLU | undefined;
  private readonly luOptions: LUOptions;
  private readonly derivatives: DerivativeEvaluator;
  private readonly rhs: Float64Array;
  private readonly sol: Float64Array;
  private readonly jPlus: Float64Array;
  private readonly jMinus: Float64Array;
  private readonly shifted: Float64Array;
  private readonly scratch: Float64Array;
  private haveLeft = false;
  private freshPending = true;

  constructor(
    readonly problem: Problem,
    luOptions: LUOptions = {},
  ) {
    this.n = problem.size;
    const n = this.n;
    this.weights = problem.weights;
    this.b = new Float64Array(n);
    this.c = new Float64Array(n);
    this.v = new Float64Array(n);
    this.w = new Float64Array(n);
    this.bordered = new BorderedMatrix(problem.pattern(), 1);
    this.luOptions = luOptions;
    this.derivatives = derivativeEvaluator(problem);
    this.rhs = new Float64Array(n + 1);
    this.sol = new Float64Array(n + 1);
    const nz = problem.pattern().colPtr[n];
    this.jPlus = new Float64Array(nz);
    this.jMinus = new Float64Array(nz);
    this.shifted = new Float64Array(n);
    this.scratch = new Float64Array(n);
  }

  /** Whether the model's exact second derivatives are used (else directional differences). */
  get exactSecond(): boolean {
    return this.derivatives.exactSecond;
  }

  private solver(): SparseLU {
    if (!this.lu) this.lu = new SparseLU(this.bordered.pattern, this.luOptions);
    return this.lu;
  }

  private time<T>(phase: keyof SystemCounters['seconds'], f: () => T): T {
    const t0 = performance.now();
    try {
      return f();
    } finally {
      this.counters.seconds[phase] += (performance.now() - t0) / 1000;
    }
  }

  /** Factor M with J's values and the current borders; then v and g (w on demand). */
  factor(jacobianValues: Float64Array): void {
    const n = this.n;
    this.time('assembly', () => {
      this.bordered.setInner(jacobianValues);
      this.bordered.setColumn(0, this.b);
      this.bordered.setRow(0, this.c);
      this.bordered.setCorner(0, 0, 0);
    });
    const done = this.time('factorisation', () => this.solver().update(this.bordered.values, this.freshPending));
    this.freshPending = false;
    if (done === 'factor') this.counters.factorisations++;
    else this.counters.refactorisations++;
    this.rhs.fill(0);
    this.rhs[n] = 1;
    this.solveM(this.rhs, this.sol);
    this.v.set(this.sol.subarray(0, n));
    this.g = this.sol[n];
    this.haveLeft = false;
  }

  /** w from the transposed system (computed once per factorisation). */
  left(): Float64Array {
    if (!this.haveLeft) {
      const n = this.n;
      this.rhs.fill(0);
      this.rhs[n] = 1;
      this.counters.solves++;
      this.time('solves', () => this.solver().solveTranspose(this.rhs, this.sol));
      this.w.set(this.sol.subarray(0, this.n));
      this.haveLeft = true;
    }
    return this.w;
  }

  /** Solve M x = rhs (length n + 1) with the current factorisation. */
  solveM(rhs: Float64Array, out: Float64Array): Float64Array {
    this.counters.solves++;
    return this.time('solves', () => this.solver().solve(rhs, out));
  }

  /** Sign and log |det M| of the current factorisation. */
  determinant(): { sign: number; logAbs: number } {
    return this.solver().logDeterminant();
  }

  /** The gradient g_u = −(J'_v)ᵀ w into out (length n). */
  gradient(u: Float64Array, p: Params, out: Float64Array): void {
    const w = this.left();
    this.time('derivatives', () => {
      if (directionalJacobian(this.problem, u, p, this.v, this.jPlus, this.jMinus, this.shifted)) {
        matTVec({ ...this.problem.pattern(), values: this.jPlus }, w, out);
        for (let i = 0; i < out.length; i++) out[i] = -out[i];
      } else {
        out.fill(0);
      }
    });
    this.counters.assemblies += 2;
  }

  /** g_p = −wᵀ F_up v for parameter `name`. */
  parameterDerivative(u: Float64Array, p: Params, name: string): number {
    const w = this.left();
    return this.time('derivatives', () => {
      this.derivatives.mixedDerivative(u, p, name, this.v, this.scratch);
      let s = 0;
      for (let i = 0; i < this.n; i++) s -= w[i] * this.scratch[i];
      return s;
    });
  }

  /** −wᵀ F_uu[v, δ] (exact second derivatives where the model has them). */
  directional(u: Float64Array, p: Params, delta: Float64Array): number {
    const w = this.left();
    return this.time('derivatives', () => {
      this.derivatives.secondDerivative(u, p, this.v, delta, this.scratch);
      let s = 0;
      for (let i = 0; i < this.n; i++) s -= w[i] * this.scratch[i];
      return s;
    });
  }

  /** ‖v‖_w and ‖W⁻¹ᐟ² w‖₂: the norms that make the test functions scale-free. */
  private norms(): { nv: number; nw: number } {
    const wt = this.weights;
    const w = this.left();
    let sv = 0;
    let sw = 0;
    for (let i = 0; i < this.n; i++) {
      sv += wt[i] * this.v[i] * this.v[i];
      sw += (w[i] * w[i]) / wt[i];
    }
    return { nv: Math.sqrt(sv), nw: Math.sqrt(sw) };
  }

  /**
   * The quadratic normal-form coefficient ⟨ŵ, F_uu(v̂, v̂)⟩ with v̂ = v/‖v‖_w and
   * ŵ = w/‖W⁻¹ᐟ²w‖: it vanishes at a cusp.
   */
  quadraticCoefficient(u: Float64Array, p: Params): number {
    const w = this.left();
    const { nv, nw } = this.norms();
    return this.time('derivatives', () => {
      this.derivatives.secondDerivative(u, p, this.v, this.v, this.scratch);
      let s = 0;
      for (let i = 0; i < this.n; i++) s += w[i] * this.scratch[i];
      return s / (nv * nv * nw);
    });
  }

  /** ⟨ŵ, M v̂⟩ (M the mass matrix): it vanishes where the zero eigenvalue becomes double. */
  massProduct(): number {
    const w = this.left();
    const m = this.problem.massDiagonal;
    const { nv, nw } = this.norms();
    let s = 0;
    for (let i = 0; i < this.n; i++) s += w[i] * (m ? m[i] : 1) * this.v[i];
    return s / (nv * nw);
  }

  /** New borders from the current null vectors (see the header). */
  adopt(): void {
    this.setBorders(this.v, this.left());
  }

  /** Borders from right and left vector approximations x (right) and y (left). */
  setBorders(x: Float64Array, y: Float64Array): void {
    const wt = this.weights;
    const n = this.n;
    let sx = 0;
    let sy = 0;
    for (let i = 0; i < n; i++) {
      sx += wt[i] * x[i] * x[i];
      sy += (y[i] * y[i]) / wt[i];
    }
    sx = Math.sqrt(sx);
    sy = Math.sqrt(sy);
    if (!(sx > 0 && sy > 0 && Number.isFinite(sx) && Number.isFinite(sy))) throw new Error('the null vectors vanished (the bordered system is degenerate)');
    for (let i = 0; i < n; i++) {
      this.c[i] = (wt[i] * x[i]) / sx;
      this.b[i] = y[i] / wt[i] / sy;
    }
  }

  /**
   * Borders at a first point, with no null vectors known yet: start from fixed pseudo-random
   * borders (M is regular for almost every choice), then refresh twice from the null vectors
   * they give (near a simple singular point those are accurate).
   */
  initialise(jacobianValues: Float64Array): void {
    const r = pseudoRandomVector(this.n, 12345);
    const s = pseudoRandomVector(this.n, 67890);
    const wt = this.weights;
    for (let i = 0; i < this.n; i++) s[i] *= wt[i];
    this.setBorders(r, s);
    for (let pass = 0; pass < 2; pass++) {
      this.factor(jacobianValues);
      this.adopt();
    }
  }

  /**
   * At a point where J has a second null vector (M nearly singular): one step of inverse
   * iteration on M and Mᵀ from pseudo-random vectors gives M's near-null vectors, whose first n
   * entries are J's other right and left null vectors. The borders switch to them.
   */
  switchToSecondNullVector(jacobianValues: Float64Array): void {
    const n = this.n;
    this.factor(jacobianValues);
    const rhs = new Float64Array(n + 1);
    rhs.set(pseudoRandomVector(n, 2024));
    const x = this.solveM(rhs, new Float64Array(n + 1)).slice(0, n);
    rhs.set(pseudoRandomVector(n, 4048));
    this.counters.solves++;
    const y = this.time('solves', () => this.solver().solveTranspose(rhs, new Float64Array(n + 1))).slice(0, n);
    this.setBorders(x, y);
    // the new null vectors, normalised as a factorisation with these borders would give them
    // (cᵀv = 1, bᵀw = 1); g = 0 at the point
    const wt = this.weights;
    let sx = 0;
    let sy = 0;
    for (let i = 0; i < n; i++) {
      sx += wt[i] * x[i] * x[i];
      sy += (y[i] * y[i]) / wt[i];
    }
    sx = Math.sqrt(sx);
    sy = Math.sqrt(sy);
    for (let i = 0; i < n; i++) {
      this.v[i] = x[i] / sx;
      this.w[i] = y[i] / sy;
    }
    this.g = 0;
    this.haveLeft = true;
  }

  /** Fresh pivots at the next factorisation. */
  restart(): void {
    this.freshPending = true;
  }

  dispose(): void {
    this.lu?.dispose();
    this.lu = undefined;
  }
}
