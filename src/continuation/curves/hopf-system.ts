/**
 * Hopf points followed in two parameters: unknowns y = (u, parameter, free, ω) — n + 3 of them —
 * and equations
 *
 *     F(u, p) = 0,      Re g(u, p, ω) = 0,      h(u, p, ω) = Im g / ω = 0,
 *
 * with g from the complex bordered system of J − iωM (../hopf/complex-border.ts): g vanishes
 * where iω is an eigenvalue of the pencil. h is Im g divided by ω, evaluated without the division
 * (h = Re(wᵀMv̄)); dividing out ω removes the trivial solutions ω = 0 (the fold curve, where
 * Im g vanishes identically), so the system stays regular at a Bogdanov–Takens point, where the
 * Hopf curve meets the fold curve with ω = 0 and leaves it tangentially (the curve in y is
 * symmetric in ω there: the parameters move like ω²). A Hopf curve can therefore start at a
 * Bogdanov–Takens point of a fold curve, and ends where it reaches one.
 *
 * Derivatives (adjoint formula, x = (v, g) and y = (w, s) the right and left solutions): with
 * V = Im v/ω and W = Im w/ω from ComplexNullBorder.imaginaryParts (no division either),
 * v = v_r + iωV, w = w_r + iωW, and J′_a = d/dε J(u + εa) (Jacobian values differenced along a),
 *
 *     Re g_u = −(J′_{v_r}ᵀ w_r − ω² J′_Vᵀ W),            h_u = −(J′_{v_r}ᵀ W + J′_Vᵀ w_r),
 *     Re g_p = −(w_rᵀ F_up v_r − ω² Wᵀ F_up V),           h_p = −(Wᵀ F_up v_r + w_rᵀ F_up V),
 *     Re g_ω = −ω (w_rᵀ M V + Wᵀ M v_r),                  h_ω = −2ω Wᵀ M V.
 *
 * The Newton matrix [G_y; sᵀ] is real, size n + 3: J bordered by the two parameter columns and a
 * zero ω column, and by the rows Re g_u, h_u and a row s (the first row `solve` is called with
 * after a linearisation, normally the tangent). One sparse factorisation per linearisation;
 * other rows r are handled by a rank-one correction, z = z₀ + α K⁻¹e_last. The complex bordered
 * matrix is factored once per step (refinement with it at the Newton iterates).
 *
 * Test functions, evaluated at every accepted point:
 *  - `frequency` ω: zero at a Bogdanov–Takens point (the curve ends there);
 *  - `jacobian-determinant-sign`: the sign of det J changes where a real eigenvalue crosses zero
 *    while the pair stays on the axis (zero-Hopf);
 *  - `first-lyapunov-coefficient` l₁ (../hopf/lyapunov.ts): zero at a Bautin point;
 *  - `next-pair-real-part`: the real part of the other complex pair nearest the imaginary axis,
 *    signed by the parity of the other unstable pairs (from the rightmost eigenvalues, when the
 *    case asks for them): zero where a second pair reaches the axis (double Hopf).
 */
import { performance } from 'node:perf_hooks';
import { BorderedMatrix } from '../../linalg/bordered.js';
import { EigenTracker, rightmostEigenvalues } from '../../linalg/eigen.js';
import { type LUOptions, SparseLU } from '../../linalg/lu.js';
import { matTVec, matVec } from '../../linalg/sparse.js';
import { type DerivativeEvaluator, derivativeEvaluator, directionalJacobian } from '../../problem/derivatives.js';
import type { Params, Problem } from '../../problem/problem.js';
import { ComplexNullBorder } from '../hopf/complex-border.js';
import { FirstLyapunovCoefficient } from '../hopf/lyapunov.js';
import type { AugmentedSystem, SystemCounters, TestFunction, TestValue } from './augmented.js';
import { frozenRowScale, scaledNorm } from './scale.js';
import { StateResidual } from './state-residual.js';

export const hopfTestFunctions: readonly TestFunction[] = [
  { name: 'frequency', kind: 'bogdanov-takens', type: 'value', ends: true, description: 'the frequency ω of the critical pair ±iω; zero at a Bogdanov–Takens point, where the Hopf curve ends on a fold curve' },
  { name: 'jacobian-determinant-sign', kind: 'zero-hopf', type: 'determinant', description: 'sign of det J; it changes where a real eigenvalue crosses zero while the pair stays on the imaginary axis' },
  { name: 'first-lyapunov-coefficient', kind: 'bautin', type: 'value', description: 'first Lyapunov coefficient l₁ (critical eigenvector normalised in the weighted inner product); zero at a Bautin point' },
  { name: 'next-pair-real-part', kind: 'double-hopf', type: 'value', description: 'real part of the other complex pair nearest the imaginary axis, signed by the parity of the other unstable pairs; zero where a second pair reaches the axis' },
];

/** Imaginary parts below this fraction of the spectrum's scale count as real (as for branch stability). */
const REAL_TOLERANCE = 1e-8;

export class HopfSystem implements AugmentedSystem {
  readonly kind = 'hopf' as const;
  readonly n: number;
  readonly size: number;
  readonly weights: Float64Array;
  readonly parameterIndex: number;
  readonly freeIndex: number;
  readonly frequencyIndex: number;
  readonly testFunctions = hopfTestFunctions;
  readonly border: ComplexNullBorder;
  /** 1 / max(1, row max of |J|) per row of F (the corrector's progress measure), and the scales of Re g and h (frozen per curve). */
  rowScale: Float64Array;
  gScale = 1;
  hScale = 1;
  readonly stateResidual: StateResidual;
  /** ‖(Re g / gScale, h / hScale)‖ at the last evaluated point. */
  private extra = NaN;
  private readonly lyapunov: FirstLyapunovCoefficient;
  private readonly tracker: EigenTracker | undefined;
  private readonly derivatives: DerivativeEvaluator;
  private readonly mass: Float64Array;
  private readonly jac: Float64Array;
  private readonly f: Float64Array;
  private readonly y: Float64Array;
  private evaluations = 0;
  // the linearisation (at the point where the complex border was last factored)
  private linStamp = -1;
  private readonly linJac: Float64Array;
  private readonly fPar: Float64Array;
  private readonly fFree: Float64Array;
  private readonly gU: Float64Array;
  private readonly hU: Float64Array;
  private gPar = 0;
  private gFree = 0;
  private gOmega = 0;
  private hPar = 0;
  private hFree = 0;
  private hOmega = 0;
  // the Newton matrix K = [G_y; sᵀ] and its LU
  private readonly K: BorderedMatrix;
  private kLU: SparseLU | undefined;
  private kPending = true;
  private kFresh = true;
  private readonly kRow: Float64Array;
  private readonly z1: Float64Array;
  private readonly kRhs: Float64Array;
  private readonly kSol: Float64Array;
  private testsCache: { at: number; values: TestValue[] } | undefined;
  private readonly jPlus: Float64Array;
  private readonly jMinus: Float64Array;
  private readonly scratch: Float64Array;

  constructor(
    readonly problem: Problem,
    readonly base: Params,
    readonly parameter: string,
    readonly free: string,
    /** The start frequency (0 at a Bogdanov–Takens point; undefined: from the eigenvalues at the start). */
    private readonly startFrequency: number | undefined,
    /** Rightmost eigenvalues per point for the double-Hopf test (0: no such test). */
    eigenvalues: number,
    luOptions: LUOptions = {},
  ) {
    for (const name of [parameter, free]) {
      if (!(name in base)) throw new Error(`unknown parameter '${name}' (known: ${Object.keys(base).join(', ')})`);
    }
    if (parameter === free) throw new Error(`the free parameter must differ from the continuation parameter (both are '${parameter}')`);
    const n = problem.size;
    this.n = n;
    this.size = n + 3;
    this.parameterIndex = n;
    this.freeIndex = n + 1;
    this.frequencyIndex = n + 2;
    this.weights = new Float64Array(n + 3);
    this.weights.set(problem.weights);
    this.weights.fill(1, n);
    this.border = new ComplexNullBorder(problem, luOptions);
    this.lyapunov = new FirstLyapunovCoefficient(problem, luOptions);
    this.tracker = eigenvalues > 0 ? new EigenTracker(problem.pattern(), { count: eigenvalues, mass: problem.massDiagonal, ...(luOptions ? { lu: luOptions } : {}) }) : undefined;
    this.derivatives = derivativeEvaluator(problem);
    this.mass = problem.massDiagonal ?? new Float64Array(n).fill(1);
    const nz = problem.pattern().colPtr[n];
    this.jac = new Float64Array(nz);
    this.linJac = new Float64Array(nz);
    this.jPlus = new Float64Array(nz);
    this.jMinus = new Float64Array(nz);
    this.f = new Float64Array(n);
    this.y = new Float64Array(n + 3);
    this.rowScale = new Float64Array(n).fill(1);
    this.stateResidual = new StateResidual(problem);
    this.fPar = new Float64Array(n);
    this.fFree = new Float64Array(n);
    this.gU = new Float64Array(n);
    this.hU = new Float64Array(n);
    this.scratch = new Float64Array(n);
    this.K = new BorderedMatrix(problem.pattern(), 3);
    this.kRow = new Float64Array(n + 3);
    this.z1 = new Float64Array(n + 3);
    this.kRhs = new Float64Array(n + 3);
    this.kSol = new Float64Array(n + 3);
  }

  /** The border's and the Newton matrix's counts, with l₁'s factorisations of J and 2iωM − J (its time is its own). */
  get counters(): SystemCounters {
    const c = this.border.counters;
    return { ...c, factorisations: c.factorisations + this.lyapunov.factorisations, seconds: { ...c.seconds } };
  }

  params(y: Float64Array): Params {
    return { ...this.base, [this.parameter]: y[this.parameterIndex], [this.free]: y[this.freeIndex] };
  }

  state(y: Float64Array): Float64Array {
    return y.slice(0, this.n);
  }

  fromState(u: Float64Array, p: Params): Float64Array {
    if (u.length !== this.n) throw new Error(`the start state has ${u.length} values, the problem has ${this.n} unknowns`);
    const y = new Float64Array(this.n + 3);
    y.set(u);
    y[this.parameterIndex] = p[this.parameter];
    y[this.freeIndex] = p[this.free];
    y[this.frequencyIndex] = this.startFrequency ?? NaN;
    return y;
  }

  private time(phase: keyof SystemCounters['seconds'], t0: number): void {
    this.border.counters.seconds[phase] += (performance.now() - t0) / 1000;
  }

  private assemble(y: Float64Array): void {
    const t0 = performance.now();
    this.problem.jacobian(y.subarray(0, this.n), this.params(y), this.jac);
    this.time('assembly', t0);
    this.border.counters.assemblies++;
  }

  /**
   * Borders at the first point: from the eigenvectors of the pencil's eigenvalue nearest to
   * i·(start frequency) — refined by Newton's method, which sets y's ω — or, at ω = 0 (a
   * Bogdanov–Takens point), from J's null vectors. Without a start frequency, the complex pair
   * nearest the imaginary axis among the rightmost eigenvalues (none: ω = 1, borders only —
   * the first Newton iteration then says whether the state is near a Hopf point).
   */
  initialise(y: Float64Array): void {
    this.assemble(y);
    let omega = y[this.frequencyIndex];
    if (!Number.isFinite(omega)) {
      const r = rightmostEigenvalues({ ...this.problem.pattern(), values: this.jac }, { count: 6, mass: this.problem.massDiagonal });
      let best: { re: number; im: number } | undefined;
      for (const v of r.values) if (v.im > 0 && (!best || Math.abs(v.re) < Math.abs(best.re))) best = v;
      omega = best ? best.im : 1;
    }
    omega = Math.abs(omega);
    y[this.frequencyIndex] = omega;
    this.border.initialise(this.jac, { re: 0, im: omega });
    if (omega === 0) return;
    const mu = this.border.eigenvalueNear(this.jac, { re: 0, im: omega });
    if (mu && mu.im > 0) {
      y[this.frequencyIndex] = mu.im;
      this.border.adopt();
    } else {
      // no complex eigenvalue there: borders at iω as they are
      this.border.initialise(this.jac, { re: 0, im: omega });
    }
  }

  setScale(y: Float64Array): void {
    this.assemble(y);
    this.rowScale = frozenRowScale(this.problem, this.jac);
    this.evaluate(y, new Float64Array(this.size - 1));
    this.exact();
    this.gScale = Math.max(1, Math.hypot(this.gPar, this.gFree));
    this.hScale = Math.max(1, Math.hypot(this.hPar, this.hFree));
  }

  /** At ω = 0 (a start at a Bogdanov–Takens point) the curve leaves along ω. */
  startDirection(y: Float64Array): Float64Array | undefined {
    if (y[this.frequencyIndex] !== 0) return undefined;
    const d = new Float64Array(this.size);
    d[this.frequencyIndex] = 1;
    return d;
  }

  evaluate(y: Float64Array, out: Float64Array): number {
    const n = this.n;
    this.y.set(y);
    const u = this.y.subarray(0, n);
    const p = this.params(this.y);
    const t0 = performance.now();
    this.problem.residual(u, p, this.f);
    this.time('residual', t0);
    this.assemble(this.y);
    this.border.update(this.jac, { re: 0, im: this.y[this.frequencyIndex] });
    this.evaluations++;
    const g = this.border.g.re;
    const h = this.border.oddPart();
    out.set(this.f);
    out[n] = g;
    out[n + 1] = h;
    this.stateResidual.record(u, p, this.f);
    const fn = scaledNorm(this.f, this.rowScale, this.problem.weights);
    const gn = g / this.gScale;
    const hn = h / this.hScale;
    this.extra = Math.hypot(gn, hn);
    return Math.sqrt(fn * fn + gn * gn + hn * hn);
  }

  extraResidual(): number {
    return this.extra;
  }

  exact(): void {
    this.border.ensureFactored();
    if (this.linStamp !== this.border.stamp) this.linearise();
  }

  /** Derivatives at the last evaluated point, where the complex border is factored. */
  private linearise(): void {
    this.border.ensureFactored();
    const n = this.n;
    const u = this.y.subarray(0, n);
    const p = this.params(this.y);
    const omega = this.y[this.frequencyIndex];
    const x = this.border.x;
    const yl = this.border.y;
    const vr = new Float64Array(n);
    const wr = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      vr[i] = x[2 * i];
      wr[i] = yl[2 * i];
    }
    const V = new Float64Array(n);
    const W = new Float64Array(n);
    this.border.imaginaryParts(V, W);
    const c = this.border.counters;
    let t0 = performance.now();
    this.problem.parameterDerivative(u, p, this.parameter, this.fPar);
    this.problem.parameterDerivative(u, p, this.free, this.fFree);
    // gradients: Re g_u = −(J′_vrᵀ w_r − ω² J′_Vᵀ W), h_u = −(J′_vrᵀ W + J′_Vᵀ w_r)
    const pat = this.problem.pattern();
    const a = new Float64Array(n);
    const b = new Float64Array(n);
    this.gU.fill(0);
    this.hU.fill(0);
    if (directionalJacobian(this.problem, u, p, vr, this.jPlus, this.jMinus, this.scratch)) {
      matTVec({ ...pat, values: this.jPlus }, wr, a);
      matTVec({ ...pat, values: this.jPlus }, W, b);
      for (let i = 0; i < n; i++) {
        this.gU[i] -= a[i];
        this.hU[i] -= b[i];
      }
    }
    if (directionalJacobian(this.problem, u, p, V, this.jPlus, this.jMinus, this.scratch)) {
      matTVec({ ...pat, values: this.jPlus }, W, a);
      matTVec({ ...pat, values: this.jPlus }, wr, b);
      for (let i = 0; i < n; i++) {
        this.gU[i] += omega * omega * a[i];
        this.hU[i] -= b[i];
      }
    }
    c.assemblies += 4;
    // parameters: Re g_p = −(w_rᵀ F_up v_r − ω² Wᵀ F_up V), h_p = −(Wᵀ F_up v_r + w_rᵀ F_up V)
    const m1 = new Float64Array(n);
    const m2 = new Float64Array(n);
    const dot = (s: Float64Array, t: Float64Array): number => {
      let r = 0;
      for (let i = 0; i < n; i++) r += s[i] * t[i];
      return r;
    };
    const mixed = (name: string): [number, number] => {
      this.derivatives.mixedDerivative(u, p, name, vr, m1);
      this.derivatives.mixedDerivative(u, p, name, V, m2);
      return [-(dot(wr, m1) - omega * omega * dot(W, m2)), -(dot(W, m1) + dot(wr, m2))];
    };
    [this.gPar, this.hPar] = mixed(this.parameter);
    [this.gFree, this.hFree] = mixed(this.free);
    let wMV = 0;
    let WMv = 0;
    let WMV = 0;
    for (let i = 0; i < n; i++) {
      wMV += wr[i] * this.mass[i] * V[i];
      WMv += W[i] * this.mass[i] * vr[i];
      WMV += W[i] * this.mass[i] * V[i];
    }
    this.gOmega = -omega * (wMV + WMv);
    this.hOmega = -2 * omega * WMV;
    this.time('derivatives', t0);
    t0 = performance.now();
    this.linJac.set(this.jac);
    this.linStamp = this.border.stamp;
    this.kPending = true;
  }

  /** Factor K = [G_y; rowᵀ] at the linearisation; z₁ = K⁻¹ e_last. */
  private factorK(row: Float64Array): void {
    const n = this.n;
    const K = this.K;
    const c = this.border.counters;
    let t0 = performance.now();
    K.setInner(this.linJac);
    K.setColumn(0, this.fPar);
    K.setColumn(1, this.fFree);
    K.setColumn(2, new Float64Array(n));
    K.setRow(0, this.gU);
    K.setRow(1, this.hU);
    K.setRow(2, row.subarray(0, n));
    const corner = [
      [this.gPar, this.gFree, this.gOmega],
      [this.hPar, this.hFree, this.hOmega],
      [row[n], row[n + 1], row[n + 2]],
    ];
    for (let r = 0; r < 3; r++) for (let k = 0; k < 3; k++) K.setCorner(r, k, corner[r][k]);
    this.time('assembly', t0);
    t0 = performance.now();
    this.kLU ??= new SparseLU(K.pattern);
    const done = this.kLU.update(K.values, this.kFresh);
    this.kFresh = false;
    if (done === 'factor') c.factorisations++;
    else c.refactorisations++;
    this.time('factorisation', t0);
    this.kRow.set(row);
    this.kRhs.fill(0);
    this.kRhs[n + 2] = 1;
    this.solveK(this.kRhs, this.z1);
    this.kPending = false;
  }

  private solveK(rhs: Float64Array, out: Float64Array): void {
    const t0 = performance.now();
    this.kLU!.solve(rhs, out);
    this.border.counters.solves++;
    this.time('solves', t0);
  }

  solve(row: Float64Array, rhs: Float64Array, out: Float64Array): void {
    if (this.linStamp !== this.border.stamp) this.linearise();
    if (this.kPending) this.factorK(row);
    const m = this.size;
    this.kRhs.set(rhs);
    this.kRhs[m - 1] = 0;
    this.solveK(this.kRhs, this.kSol);
    let r0 = 0;
    let r1 = 0;
    let nr = 0;
    let nz = 0;
    for (let i = 0; i < m; i++) {
      r0 += row[i] * this.kSol[i];
      r1 += row[i] * this.z1[i];
      nr += row[i] * row[i];
      nz += this.z1[i] * this.z1[i];
    }
    if (!(Math.abs(r1) > 1e-12 * Math.sqrt(nr * nz))) throw new Error('the Hopf system bordered by this row is singular (the row is orthogonal to the curve)');
    const alpha = (rhs[m - 1] - r0) / r1;
    for (let i = 0; i < m; i++) out[i] = this.kSol[i] + alpha * this.z1[i];
  }

  jacobianTimes(delta: Float64Array, out: Float64Array): void {
    this.exact();
    const n = this.n;
    matVec({ ...this.problem.pattern(), values: this.linJac }, delta, out);
    const [dp, dq, dw] = [delta[n], delta[n + 1], delta[n + 2]];
    let g = this.gPar * dp + this.gFree * dq + this.gOmega * dw;
    let h = this.hPar * dp + this.hFree * dq + this.hOmega * dw;
    for (let i = 0; i < n; i++) {
      out[i] += this.fPar[i] * dp + this.fFree[i] * dq;
      g += this.gU[i] * delta[i];
      h += this.hU[i] * delta[i];
    }
    out[n] = g;
    out[n + 1] = h;
  }

  tests(): TestValue[] {
    if (this.testsCache && this.testsCache.at === this.evaluations) return this.testsCache.values;
    const n = this.n;
    const u = this.y.subarray(0, n);
    const p = this.params(this.y);
    const omega = this.y[this.frequencyIndex];
    const l1 = this.lyapunov.compute(u, p, omega, this.border.x, this.border.y, this.jac);
    // at ω = 0 (a Bogdanov–Takens start) J is singular: its determinant's sign is rounding
    const det: TestValue = omega === 0 ? { value: 0 } : { value: l1.determinant.sign, logAbs: l1.determinant.logAbs };
    const values: TestValue[] = [{ value: omega }, det, { value: l1.value }, { value: this.nextPair(omega) }];
    this.testsCache = { at: this.evaluations, values };
    return values;
  }

  /** The real part of the other complex pair nearest the axis, signed by the parity of the other unstable pairs. */
  private nextPair(omega: number): number {
    if (!this.tracker) return NaN;
    const t0 = performance.now();
    let values: { re: number; im: number }[];
    try {
      // J's factorisation from l₁ serves as the shift-0 operator (none where J is singular)
      const factored = this.lyapunov.jacobianSolver();
      values = this.tracker.compute(this.jac, factored ? { factored } : {}).values;
    } catch {
      return NaN;
    } finally {
      this.border.counters.seconds.solves += (performance.now() - t0) / 1000;
    }
    let scale = 1;
    for (const v of values) scale = Math.max(scale, Math.hypot(v.re, v.im));
    const upper = values.filter((v) => v.im > REAL_TOLERANCE * scale);
    // the followed pair: the one nearest to iω
    let critical = -1;
    upper.forEach((v, i) => {
      if (critical < 0 || Math.hypot(v.re, v.im - omega) < Math.hypot(upper[critical].re, upper[critical].im - omega)) critical = i;
    });
    const others = upper.filter((_, i) => i !== critical);
    if (others.length === 0) return NaN;
    let unstable = 0;
    let nearest = Infinity;
    for (const v of others) {
      if (v.re > 0) unstable++;
      nearest = Math.min(nearest, Math.abs(v.re));
    }
    return unstable % 2 === 0 ? nearest : -nearest;
  }

  adopt(): void {
    this.border.adopt();
  }

  saveState(): Float64Array[] {
    return [this.border.b.slice(), this.border.c.slice(), this.rowScale.slice(), Float64Array.of(this.gScale, this.hScale)];
  }

  restoreState(saved: readonly Float64Array[]): void {
    if (saved.length !== 4 || saved[0].length !== this.n || saved[1].length !== this.n || saved[2].length !== this.n || saved[3].length !== 2) {
      throw new Error(`the saved hopf-curve state does not fit this problem (${this.n} unknowns)`);
    }
    this.border.restoreBorders(saved[0], saved[1]);
    this.rowScale = saved[2].slice();
    this.gScale = saved[3][0];
    this.hScale = saved[3][1];
    this.linStamp = -1;
    this.testsCache = undefined;
  }

  restart(): void {
    this.border.restart();
    this.kFresh = true;
    this.lyapunov.restart();
    this.tracker?.restart();
    this.testsCache = undefined;
  }

  dispose(): void {
    this.border.dispose();
    this.lyapunov.dispose();
    this.kLU?.dispose();
    this.tracker?.dispose();
  }
}
