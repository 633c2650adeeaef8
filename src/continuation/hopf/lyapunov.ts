/**
 * The first Lyapunov coefficient l₁ at a Hopf point of M u_t = F(u, p): whether the periodic
 * orbits born there are stable and surround the unstable side (l₁ < 0, supercritical: the
 * oscillation grows gently from zero amplitude) or are unstable and surround the stable side
 * (l₁ > 0, subcritical: the state jumps to a distant attractor).
 *
 * The formula for n-dimensional systems (Kuznetsov, *Elements of Applied Bifurcation Theory*,
 * 3rd ed., Springer 2004, §3.5 formula (3.20) and its use for large systems in §10.2; from
 * memory), written for the pencil (J, M) so that no M⁻¹ appears:
 *
 *     l₁ = Re[ ψᴴ C(q, q, q̄) − 2 ψᴴ B(q, J⁻¹ B(q, q̄)) + ψᴴ B(q̄, (2iωM − J)⁻¹ B(q, q)) ] / (2ω),
 *
 * with J q = iω M q, ψᴴ J = iω ψᴴ M, ψᴴ M q = 1, and B, C the second and third derivatives of F
 * (F(u + x) = F(u) + Jx + B(x, x)/2 + C(x, x, x)/6 + …). The critical eigenvector is normalised to
 * ⟨q, q⟩ = qᴴ W q = 1 in the tool's weighted inner product (W the quadrature weights, so ⟨q, q⟩
 * is the discrete ∫|q|²): the value of l₁ depends on that choice (scaling q by s scales l₁ by |s|²),
 * its sign does not. With it, l₁ is the coefficient of the normal form ż = iωz + c₁ z|z|² in the
 * form Kuznetsov uses (l₁ = Re c₁ / ω), for amplitudes measured in the discrete L2 norm.
 *
 * Linear algebra: one real sparse LU of J (its determinant's sign and size come along, for the
 * zero-Hopf test of Hopf curves) and one complex sparse LU of 2iωM − J. Second derivatives
 * B(x, y) are the model's exact ones where it has them, otherwise directional differences of the
 * Jacobian; third derivatives are central differences of the exact B along Re q and Im q, or
 * second differences of the Jacobian (step ε_mach^(1/4), balancing truncation and rounding).
 * Complex arguments are split by multilinearity: with q = a + ib,
 *
 *     B(q, q̄) = B(a, a) + B(b, b),   B(q, q) = B(a, a) − B(b, b) + 2i B(a, b),
 *     C(q, q, q̄) = D_a S + i D_b S,  S(u) = B_u(a, a) + B_u(b, b)  (D_a: derivative along a).
 */
import { performance } from 'node:perf_hooks';
import type { FactoredShift } from '../../linalg/eigen.js';
import { ComplexSparseLU, type LUOptions, SparseLU } from '../../linalg/lu.js';
import { type CscPattern, embedPattern, entryIndex, matVec } from '../../linalg/sparse.js';
import { infNorm } from '../../linalg/vector.js';
import { type DerivativeEvaluator, derivativeEvaluator, directionalJacobian, directionStep } from '../../problem/derivatives.js';
import type { Params, Problem } from '../../problem/problem.js';
import { shiftedPattern } from './complex-border.js';

export interface LyapunovResult {
  /** l₁ (NaN when it cannot be computed: ω = 0, a singular J, non-finite values). */
  value: number;
  /** Sign and log |det J| from the real factorisation (sign 0 when J is singular). */
  determinant: { sign: number; logAbs: number };
  /** Why the value is NaN, in words. */
  note?: string;
}

export type HopfCriticalityWord = 'supercritical' | 'subcritical' | 'undetermined';

/** `supercritical` for l₁ < 0, `subcritical` for l₁ > 0, `undetermined` when l₁ is zero or not finite. */
export function criticalityOf(l1: number): HopfCriticalityWord {
  if (!Number.isFinite(l1) || l1 === 0) return 'undetermined';
  return l1 < 0 ? 'supercritical' : 'subcritical';
}

/** ε_mach^(1/4): the step of second differences. */
const secondDifferenceStep = Math.sqrt(Math.sqrt(Number.EPSILON));

export class FirstLyapunovCoefficient {
  readonly n: number;
  /** Seconds spent here (factorisations, solves, derivatives). */
  seconds = 0;
  factorisations = 0;
  private readonly pattern: CscPattern;
  private readonly shifted: CscPattern;
  private readonly embed: Int32Array;
  private readonly diag: Int32Array;
  private readonly mass: Float64Array;
  private readonly derivatives: DerivativeEvaluator;
  private real: SparseLU | undefined;
  private complex: ComplexSparseLU | undefined;
  private readonly complexValues: Float64Array;
  private fresh = true;
  /** Whether `real` holds J's factorisation from the last `compute`. */
  private realCurrent = false;
  private readonly jPlus: Float64Array;
  private readonly jMinus: Float64Array;
  private readonly jA: Float64Array;
  private readonly jB: Float64Array;
  private readonly work: Float64Array;

  constructor(
    readonly problem: Problem,
    private readonly luOptions: LUOptions = {},
  ) {
    const n = problem.size;
    this.n = n;
    this.pattern = problem.pattern();
    this.shifted = shiftedPattern(this.pattern);
    this.embed = embedPattern(this.pattern, this.shifted);
    this.diag = new Int32Array(n);
    for (let i = 0; i < n; i++) this.diag[i] = entryIndex(this.shifted, i, i);
    this.mass = problem.massDiagonal ?? new Float64Array(n).fill(1);
    this.derivatives = derivativeEvaluator(problem);
    this.complexValues = new Float64Array(2 * this.shifted.colPtr[n]);
    const nz = this.pattern.colPtr[n];
    this.jPlus = new Float64Array(nz);
    this.jMinus = new Float64Array(nz);
    this.jA = new Float64Array(nz);
    this.jB = new Float64Array(nz);
    this.work = new Float64Array(n);
  }

  /**
   * Solves with J at the last `compute` (its real factorisation), for the eigenvalue solver's
   * shift-0 operator; undefined when J was singular there or not factored. Valid until the next
   * `compute`.
   */
  jacobianSolver(): FactoredShift | undefined {
    if (!this.realCurrent || !this.real) return undefined;
    const lu = this.real;
    return { shift: 0, lu: { solve: (b: Float64Array, out?: Float64Array) => lu.solve(b, out) } };
  }

  /** Fresh pivots at the next factorisations (sync points of a run). */
  restart(): void {
    this.fresh = true;
  }

  /**
   * l₁ at (u, p) with the critical pair ±iω, right eigenvector `right` (J − iωM)v = 0 and left
   * eigenvector `left` wᵀ(J − iωM) = 0, both complex interleaved (their first n entries are
   * read; any scaling). `jacobianValues`: J at (u, p) on the problem's pattern.
   */
  compute(u: Float64Array, p: Params, omega: number, right: Float64Array, left: Float64Array, jacobianValues: Float64Array): LyapunovResult {
    const t0 = performance.now();
    try {
      return this.computeTimed(u, p, omega, right, left, jacobianValues);
    } finally {
      this.seconds += (performance.now() - t0) / 1000;
    }
  }

  private computeTimed(u: Float64Array, p: Params, omega: number, right: Float64Array, left: Float64Array, J: Float64Array): LyapunovResult {
    const n = this.n;
    const wt = this.problem.weights;
    const m = this.mass;
    // J's real factorisation: the determinant for every call, J⁻¹ for l₁
    let determinant = { sign: 0, logAbs: -Infinity };
    this.real ??= new SparseLU(this.pattern, this.luOptions);
    let realOk = true;
    this.realCurrent = false;
    try {
      this.real.update(J, this.fresh);
      this.factorisations++;
      determinant = this.real.logDeterminant();
      this.realCurrent = true;
    } catch {
      realOk = false;
    }
    if (!(omega > 0)) return { value: NaN, determinant, note: 'the frequency is zero (a Bogdanov–Takens point): l₁ is not defined there' };
    if (!realOk) return { value: NaN, determinant, note: 'the Jacobian is singular here (a zero-Hopf point): l₁ is not defined there' };

    // q = v / ‖v‖_W, then ψ̃ = w / (wᵀ M q) so that ψ̃ᵀ M q = 1 (ψᴴ = ψ̃ᵀ)
    let s = 0;
    for (let i = 0; i < n; i++) s += wt[i] * (right[2 * i] ** 2 + right[2 * i + 1] ** 2);
    const scale = 1 / Math.sqrt(s);
    const a = new Float64Array(n);
    const b = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      a[i] = right[2 * i] * scale;
      b[i] = right[2 * i + 1] * scale;
    }
    let pr = 0;
    let pi = 0;
    for (let i = 0; i < n; i++) {
      pr += m[i] * (left[2 * i] * a[i] - left[2 * i + 1] * b[i]);
      pi += m[i] * (left[2 * i] * b[i] + left[2 * i + 1] * a[i]);
    }
    const den = pr * pr + pi * pi;
    if (!(den > 0)) return { value: NaN, determinant, note: 'the left and right eigenvectors are orthogonal (not a simple pair)' };
    const psiR = new Float64Array(n);
    const psiI = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      // w / (pr + i pi)
      psiR[i] = (left[2 * i] * pr + left[2 * i + 1] * pi) / den;
      psiI[i] = (left[2 * i + 1] * pr - left[2 * i] * pi) / den;
    }
    /** Re(ψ̃ᵀ (xr + i xi)). */
    const pairing = (xr: Float64Array, xi: Float64Array | null): number => {
      let t = 0;
      for (let i = 0; i < n; i++) t += psiR[i] * xr[i] - (xi ? psiI[i] * xi[i] : 0);
      return t;
    };

    // B(a, ·) and B(b, ·)
    const exact = this.derivatives.exactSecond;
    if (!exact) {
      directionalJacobian(this.problem, u, p, a, this.jA, this.jMinus, this.work);
      directionalJacobian(this.problem, u, p, b, this.jB, this.jMinus, this.work);
    }
    const bil = (first: 'a' | 'b', x: Float64Array): Float64Array => {
      const out = new Float64Array(n);
      if (exact) this.derivatives.secondDerivative(u, p, first === 'a' ? a : b, x, out);
      else matVec({ ...this.pattern, values: first === 'a' ? this.jA : this.jB }, x, out);
      return out;
    };
    const Baa = bil('a', a);
    const Bbb = bil('b', b);
    const Bab = bil('a', b);

    // r1 = J⁻¹ B(q, q̄)
    const Bqqbar = new Float64Array(n);
    for (let i = 0; i < n; i++) Bqqbar[i] = Baa[i] + Bbb[i];
    const r1 = this.real!.solve(Bqqbar, new Float64Array(n));

    // r2 = (2iωM − J)⁻¹ B(q, q)
    const cv = this.complexValues;
    cv.fill(0);
    for (let k = 0; k < this.embed.length; k++) cv[2 * this.embed[k]] = -J[k];
    for (let i = 0; i < n; i++) cv[2 * this.diag[i] + 1] = 2 * omega * m[i];
    this.complex ??= new ComplexSparseLU(this.shifted, this.luOptions);
    try {
      this.complex.update(cv, this.fresh);
      this.factorisations++;
    } catch {
      this.fresh = false;
      return { value: NaN, determinant, note: '2iωM − J is singular here (a 1:2 resonance): l₁ is not defined there' };
    }
    this.fresh = false;
    const rhs = new Float64Array(2 * n);
    for (let i = 0; i < n; i++) {
      rhs[2 * i] = Baa[i] - Bbb[i];
      rhs[2 * i + 1] = 2 * Bab[i];
    }
    const r2 = this.complex.solve(rhs, new Float64Array(2 * n));
    const sr = new Float64Array(n);
    const si = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      sr[i] = r2[2 * i];
      si[i] = r2[2 * i + 1];
    }

    // B(q, r1) = B(a, r1) + i B(b, r1)
    const Bq1r = bil('a', r1);
    const Bq1i = bil('b', r1);
    // B(q̄, r2) = B(a, sr) + B(b, si) + i (B(a, si) − B(b, sr))
    const Bas = bil('a', sr);
    const Bbs = bil('b', si);
    const Bai = bil('a', si);
    const Bbr = bil('b', sr);
    const B2r = new Float64Array(n);
    const B2i = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      B2r[i] = Bas[i] + Bbs[i];
      B2i[i] = Bai[i] - Bbr[i];
    }

    // C(q, q, q̄)
    const [Cr, Ci] = exact ? this.thirdFromExactSecond(u, p, a, b) : this.thirdFromJacobians(u, p, a, b, J);

    const value = (pairing(Cr, Ci) - 2 * pairing(Bq1r, Bq1i) + pairing(B2r, B2i)) / (2 * omega);
    return Number.isFinite(value) ? { value, determinant } : { value: NaN, determinant, note: 'non-finite values in the derivatives' };
  }

  /** C(q, q, q̄) = D_a S + i D_b S with S(u) = B_u(a, a) + B_u(b, b): central differences of the exact B. */
  private thirdFromExactSecond(u: Float64Array, p: Params, a: Float64Array, b: Float64Array): [Float64Array, Float64Array] {
    const n = this.n;
    const shifted = new Float64Array(n);
    const t1 = new Float64Array(n);
    const t2 = new Float64Array(n);
    const S = (dir: Float64Array, eps: number, out: Float64Array, sign: number): void => {
      for (let i = 0; i < n; i++) shifted[i] = u[i] + eps * dir[i];
      this.derivatives.secondDerivative(shifted, p, a, a, t1);
      this.derivatives.secondDerivative(shifted, p, b, b, t2);
      for (let i = 0; i < n; i++) out[i] += sign * (t1[i] + t2[i]);
    };
    const along = (dir: Float64Array): Float64Array => {
      const out = new Float64Array(n);
      const eps = directionStep(u, dir);
      if (eps === 0) return out;
      S(dir, eps, out, 1);
      S(dir, -eps, out, -1);
      for (let i = 0; i < n; i++) out[i] /= 2 * eps;
      return out;
    };
    return [along(a), along(b)];
  }

  /**
   * C(q, q, q̄) from second differences of the Jacobian along a and b:
   * C(x, x, ·) = (J(u + εx) − 2J(u) + J(u − εx))/ε², so Re C = (J″_a + J″_b) a, Im C = (J″_a + J″_b) b.
   */
  private thirdFromJacobians(u: Float64Array, p: Params, a: Float64Array, b: Float64Array, J: Float64Array): [Float64Array, Float64Array] {
    const n = this.n;
    const nz = J.length;
    const sum = new Float64Array(nz);
    const shifted = this.work;
    for (const dir of [a, b]) {
      const na = infNorm(dir);
      if (na === 0) continue;
      const eps = (secondDifferenceStep * Math.max(1, infNorm(u))) / na;
      for (let i = 0; i < n; i++) shifted[i] = u[i] + eps * dir[i];
      this.problem.jacobian(shifted, p, this.jPlus);
      for (let i = 0; i < n; i++) shifted[i] = u[i] - eps * dir[i];
      this.problem.jacobian(shifted, p, this.jMinus);
      const s = 1 / (eps * eps);
      for (let k = 0; k < nz; k++) sum[k] += (this.jPlus[k] - 2 * J[k] + this.jMinus[k]) * s;
    }
    const mat = { ...this.pattern, values: sum };
    return [matVec(mat, a, new Float64Array(n)), matVec(mat, b, new Float64Array(n))];
  }

  dispose(): void {
    this.real?.dispose();
    this.complex?.dispose();
    this.real = undefined;
    this.complex = undefined;
  }
}
