/**
 * The bordered null-vector system of a (nearly) singular Jacobian, shared by the fold and
 * branch-point curve systems (Govaerts, *Numerical Methods for Bifurcations of Dynamical
 * Equilibria*, SIAM 2000; Griewank & Reddien 1984):
 *
 *     M = [ J   b ]      M [v; g] = [0; 1],      Mᵀ [w; g] = [0; 1].
 *         [ cᵀ  d ]
 *
 * M stays regular where J has a simple zero eigenvalue as long as b is not in the range of J
 * and c is not orthogonal to its kernel; g = det J / det M vanishes exactly where J is singular,
 * and then v and w are its right and left null vectors. The corner d does not change that (nor
 * the derivatives below); it is set to max|b_i| so that the sparse LU's threshold pivoting keeps
 * the border last (with d = 0 it pivots the border column early and the factors fill in five
 * times more). Derivatives (the adjoint formula):
 *
 *     g_u δ = −wᵀ F_uu[v, δ],      g_p = −wᵀ F_up v,
 *
 * so the gradient g_u = −(J'_v)ᵀ w with J'_v = d/dε J(u + εv) (Jacobian values differenced
 * along v: they share J's pattern). The borders are refreshed from the null vectors of an
 * accepted point: c = W v / ‖v‖_w and b = W⁻¹ w / ‖W⁻¹ w‖_w (W the quadrature weights), so
 * cᵀv > 0 and bᵀw > 0 keep the orientation of v and w from point to point.
 *
 * The sparse LU of M (size n + 1) serves as a reference for nearby points: `update(J)` gets v
 * and g at a new Jacobian by iterative refinement with the reference factorisation (residuals
 * with the new M, corrections with the old LU: each refinement step one sparse product and one
 * solve, converging at the rate ‖M_ref⁻¹(M − M_ref)‖), and factors afresh only when that
 * contracts slowly. So g is exact at every Newton iterate while a step costs about one
 * factorisation (`ensureFactored`, at the converged point, where the tangent and the
 * determinant need it). `solveM` solves with the reference factorisation, for the curve systems'
 * block elimination (no factorisation of J itself, which is singular there).
 */
import { performance } from 'node:perf_hooks';
import { BorderedMatrix } from '../../linalg/bordered.js';
import { SparseLU, type LUOptions } from '../../linalg/lu.js';
import { matTVec } from '../../linalg/sparse.js';
import { infNorm } from '../../linalg/vector.js';
import { type DerivativeEvaluator, derivativeEvaluator, directionalJacobian } from '../../problem/derivatives.js';
import type { Params, Problem } from '../../problem/problem.js';
import { type SystemCounters, emptyCounters, pseudoRandomVector } from './augmented.js';
import { type RefinementOperator, refineSolution } from './refinement.js';

/**
 * Real borders from right and left vector approximations x and y (first n entries of each, n the
 * length of the weights): c = W x / ‖x‖_w and b = W⁻¹ y / ‖W⁻¹ᐟ²y‖ (W the quadrature weights), so
 * cᵀx > 0 and bᵀy > 0; returns ‖x‖_w, ‖W⁻¹ᐟ²y‖ and the corner d = max|b_i|, which keeps the sparse
 * LU's threshold pivoting from taking the border early. `what` names the vectors in the error
 * thrown when one of them vanishes.
 */
export function weightedBorders(x: ArrayLike<number>, y: ArrayLike<number>, wt: ArrayLike<number>, b: Float64Array, c: Float64Array, what: string): { sx: number; sy: number; corner: number } {
  const n = wt.length;
  let sx = 0;
  let sy = 0;
  for (let i = 0; i < n; i++) {
    sx += wt[i] * x[i] * x[i];
    sy += (y[i] * y[i]) / wt[i];
  }
  sx = Math.sqrt(sx);
  sy = Math.sqrt(sy);
  if (!(sx > 0 && sy > 0 && Number.isFinite(sx) && Number.isFinite(sy))) throw new Error(`the ${what} vanished (the bordered system is degenerate)`);
  let bmax = 0;
  for (let i = 0; i < n; i++) {
    c[i] = (wt[i] * x[i]) / sx;
    b[i] = y[i] / wt[i] / sy;
    bmax = Math.max(bmax, Math.abs(b[i]));
  }
  return { sx, sy, corner: bmax };
}

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
  /** The corner d of M (see setBorders). */
  corner = 0;
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
  /** Factor at the next update: the borders moved to a new point (a step away: refinement would contract slowly). */
  private factorNext = false;
  /** The Jacobian values of the last update (the caller's array, read when refining). */
  private J: Float64Array | undefined;
  /** Whether the LU is a factorisation at the last update's Jacobian and the current borders. */
  private factoredCurrent = false;
  /** Increases with every factorisation (callers tie their own linearisations to it). */
  stamp = 0;
  private readonly z: Float64Array;
  private readonly r: Float64Array;
  private readonly d: Float64Array;
  /** e_{n+1}, the right-hand side of the refined systems. */
  private readonly e: Float64Array;
  /** M and Mᵀ with the reference LU, for the refinement. */
  private readonly operator: RefinementOperator = {
    apply: (z, out) => this.time('solves', () => this.applyM(z, out, false)),
    correct: (r, d) => this.correct(r, d, false),
  };
  private readonly transposedOperator: RefinementOperator = {
    apply: (z, out) => this.time('solves', () => this.applyM(z, out, true)),
    correct: (r, d) => this.correct(r, d, true),
  };

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
    this.z = new Float64Array(n + 1);
    this.r = new Float64Array(n + 1);
    this.d = new Float64Array(n + 1);
    this.e = new Float64Array(n + 1);
    this.e[n] = 1;
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
    this.J = jacobianValues;
    this.time('assembly', () => {
      this.bordered.setInner(jacobianValues);
      this.bordered.setColumn(0, this.b);
      this.bordered.setRow(0, this.c);
      this.bordered.setCorner(0, 0, this.corner);
    });
    const done = this.time('factorisation', () => this.solver().update(this.bordered.values, this.freshPending));
    this.freshPending = false;
    this.factorNext = false;
    this.stamp++;
    this.factoredCurrent = true;
    if (done === 'factor') this.counters.factorisations++;
    else this.counters.refactorisations++;
    this.rhs.fill(0);
    this.rhs[n] = 1;
    this.solveM(this.rhs, this.sol);
    this.v.set(this.sol.subarray(0, n));
    this.g = this.sol[n];
    this.haveLeft = false;
  }

  /**
   * v and g at a new Jacobian: iterative refinement with the reference factorisation from the
   * last v, g; a fresh factorisation when there is none yet, after `restart`, or when the
   * refinement contracts slowly.
   */
  update(jacobianValues: Float64Array): void {
    this.J = jacobianValues;
    this.haveLeft = false;
    if (!this.lu || !this.lu.isFactored || this.freshPending || this.factorNext || !(this.g === this.g)) {
      this.factor(jacobianValues);
      return;
    }
    const n = this.n;
    this.startFrom(this.v, this.c);
    if (this.refine(false)) {
      this.v.set(this.z.subarray(0, n));
      this.g = this.z[n];
      this.factoredCurrent = false;
    } else {
      this.factor(jacobianValues);
    }
  }

  /** A factorisation at the last update's Jacobian (for determinants and exact linearisations). */
  ensureFactored(): void {
    if (!this.factoredCurrent) this.factor(this.J!);
  }

  /** Whether the LU is at the last update's point. */
  get isCurrent(): boolean {
    return this.factoredCurrent;
  }

  /**
   * out = M z (transposed: Mᵀ z) with the last update's Jacobian and the current borders;
   * returns the largest row sum of the terms' magnitudes, Σ_j |M_ij z_j| (the scale of rounding
   * errors in out).
   */
  private applyM(z: Float64Array, out: Float64Array, transpose: boolean): number {
    const n = this.n;
    const pat = this.problem.pattern();
    const J = this.J!;
    const zn = z[n];
    let last = this.corner * zn;
    let lastMag = Math.abs(last);
    let mag = 0;
    if (!transpose) {
      const m = this.scratch;
      for (let i = 0; i < n; i++) {
        out[i] = this.b[i] * zn;
        m[i] = Math.abs(out[i]);
      }
      for (let j = 0; j < n; j++) {
        const zj = z[j];
        if (zj === 0) continue;
        for (let k = pat.colPtr[j]; k < pat.colPtr[j + 1]; k++) {
          const t = J[k] * zj;
          out[pat.rowIdx[k]] += t;
          m[pat.rowIdx[k]] += Math.abs(t);
        }
        last += this.c[j] * zj;
        lastMag += Math.abs(this.c[j] * zj);
      }
      for (let i = 0; i < n; i++) if (m[i] > mag) mag = m[i];
    } else {
      for (let j = 0; j < n; j++) {
        let s = this.c[j] * zn;
        let a = Math.abs(s);
        for (let k = pat.colPtr[j]; k < pat.colPtr[j + 1]; k++) {
          const t = J[k] * z[pat.rowIdx[k]];
          s += t;
          a += Math.abs(t);
        }
        out[j] = s;
        if (a > mag) mag = a;
        last += this.b[j] * z[j];
        lastMag += Math.abs(this.b[j] * z[j]);
      }
    }
    out[n] = last;
    return Math.max(mag, lastMag, 1);
  }

  /**
   * The refinement's start: the last null vector x, scaled to satisfy the border equation
   * (border)ᵀx + d g = 1 of the current borders, and the last g.
   */
  private startFrom(x: Float64Array, border: Float64Array): void {
    const n = this.n;
    let s = 0;
    for (let i = 0; i < n; i++) s += border[i] * x[i];
    const g = this.g;
    const scale = s !== 0 && Number.isFinite(s) ? (1 - this.corner * g) / s : 1;
    for (let i = 0; i < n; i++) this.z[i] = x[i] * scale;
    this.z[n] = g;
  }

  /**
   * Refine this.z towards the solution of M z = e_{n+1} (or Mᵀ z = e_{n+1}) with the reference
   * LU; false when it contracts slowly (then a factorisation is cheaper).
   */
  private refine(transpose: boolean): boolean {
    return refineSolution(this.z, this.e, transpose ? this.transposedOperator : this.operator, this.r, this.d);
  }

  /** One correction with the reference LU. */
  private correct(r: Float64Array, d: Float64Array, transpose: boolean): void {
    this.counters.solves++;
    this.time('solves', () => (transpose ? this.solver().solveTranspose(r, d) : this.solver().solve(r, d)));
  }

  /** w from the transposed system (once per update: exact when factored here, refined otherwise). */
  left(): Float64Array {
    if (!this.haveLeft) {
      const n = this.n;
      let done = false;
      if (!this.factoredCurrent) {
        // start from the last left vector (borders and Jacobian moved only a little)
        this.startFrom(this.w, this.b);
        if (this.refine(true)) {
          this.w.set(this.z.subarray(0, n));
          done = true;
        } else {
          this.factor(this.J!);
        }
      }
      if (!done) {
        this.rhs.fill(0);
        this.rhs[n] = 1;
        this.counters.solves++;
        this.time('solves', () => this.solver().solveTranspose(this.rhs, this.sol));
        this.w.set(this.sol.subarray(0, this.n));
      }
      this.haveLeft = true;
    }
    return this.w;
  }

  /** Solve M x = rhs (length n + 1) with the current factorisation. */
  solveM(rhs: Float64Array, out: Float64Array): Float64Array {
    this.counters.solves++;
    return this.time('solves', () => this.solver().solve(rhs, out));
  }

  /**
   * The rounding level of g at the last update: g is the coefficient of b in J v + b g = 0, so
   * its error is about ε·max_i Σ_j |J_ij v_j| / max_i |b_i| (times a safety factor 64). Near a
   * second singularity (mode changes, where M is nearly singular) the computed g cannot be
   * smaller than this.
   */
  gRoundingLevel(): number {
    const pat = this.problem.pattern();
    const J = this.J!;
    const v = this.v;
    const m = this.scratch;
    m.fill(0);
    let bmax = 0;
    for (let i = 0; i < this.n; i++) bmax = Math.max(bmax, Math.abs(this.b[i]));
    for (let j = 0; j < this.n; j++) {
      const vj = Math.abs(v[j]);
      if (vj === 0) continue;
      for (let k = pat.colPtr[j]; k < pat.colPtr[j + 1]; k++) m[pat.rowIdx[k]] += Math.abs(J[k]) * vj;
    }
    let mag = 0;
    for (let i = 0; i < this.n; i++) mag = Math.max(mag, m[i]);
    return (64 * Number.EPSILON * mag) / Math.max(bmax, 1e-300);
  }

  /**
   * Sign and log |det M| of the reference factorisation: at the last update's point when
   * `exact` (factoring there when needed), otherwise wherever the LU was made (within a step of
   * the point: a sign change is then confirmed exactly before it is located).
   */
  determinant(exact = false): { sign: number; logAbs: number } {
    if (exact) this.ensureFactored();
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

  /** New borders from the current null vectors (see the header); the next update factors. */
  adopt(): void {
    this.setBorders(this.v, this.left());
    this.factorNext = true;
  }

  /** Borders from right and left vector approximations x (right) and y (left); returns ‖x‖_w and ‖W⁻¹ᐟ²y‖. */
  setBorders(x: Float64Array, y: Float64Array): { sx: number; sy: number } {
    const r = weightedBorders(x, y, this.weights, this.b, this.c, 'null vectors');
    this.corner = r.corner;
    return r;
  }

  /** Borders as saved (checkpoints). */
  restoreBorders(b: Float64Array, c: Float64Array): void {
    this.b.set(b);
    this.c.set(c);
    this.corner = infNorm(b);
  }

  /**
   * Borders at a first point, with no null vectors known yet: start from fixed pseudo-random
   * borders (M is regular for almost every choice), then refresh twice from the null vectors
   * they give (near a simple singular point those are accurate).
   */
  initialise(jacobianValues: Float64Array): void {
    this.w.fill(0);
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
    // the new null vectors, normalised as a factorisation with these borders would give them
    // (cᵀv = 1, bᵀw = 1); g = 0 at the point
    const { sx, sy } = this.setBorders(x, y);
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
