/**
 * The complex bordered null-vector system of the pencil J − λM (λ complex, M the diagonal mass):
 *
 *     A(λ) = [ J − λM   b ]      A [v; g] = [0; 1],      Aᵀ [w; s] = [0; 1]   (plain transpose).
 *            [ cᵀ       d ]
 *
 * A stays regular where λ is a simple eigenvalue of the pencil as long as cᵀv ≠ 0 and wᵀb ≠ 0;
 * g(λ) = det(J − λM)/det A vanishes exactly at eigenvalues, and then v and w are the right and
 * left eigenvectors (wᵀ(J − λM) = 0). The borders b, c and the corner d are REAL, so A(λ̄) is the
 * conjugate of A(λ): g(λ̄) = conj g(λ), and on the imaginary axis Re g(iω) is even in ω and
 * Im g(iω) odd. Hopf curves use Re g = 0 and h = Im g(iω)/ω = 0; h is evaluated without dividing
 * by ω through the resolvent identity
 *
 *     x(iω) − x(−iω) = 2iω A(iω)⁻¹ N x(−iω),     N = diag(M, 0),  x(−iω) = conj x(iω),
 *
 * so Im x / ω = Re(A⁻¹ N x̄) and h = Re(yᵀ N x̄) = Re(wᵀ M v̄) (y = (w, s)), smooth through ω = 0
 * (where h = g′(0): the condition of a double zero eigenvalue, a Bogdanov–Takens point).
 * `imaginaryParts` gives V = Im x/ω and W = Im y/ω the same way, for the curve system's exact
 * derivatives. (Griewank & Reddien 1984; Govaerts, *Numerical Methods for Bifurcations of
 * Dynamical Equilibria*, SIAM 2000, for bordered systems of this kind.)
 *
 * One complex sparse LU (KLU's complex variant, size n + 1) serves nearby matrices: `update`
 * gets x and y at a new Jacobian or λ by iterative refinement with it (residuals with the new A,
 * corrections with the reference LU) and factors afresh only when that contracts slowly, as the
 * real null-vector border of fold curves does (../curves/null-border.ts). Borders are refreshed
 * from the current eigenvectors (`adopt`): c ∝ W·Re(e^{iθ}v) and b ∝ W⁻¹·Re(e^{iφ}w) with the
 * phases that maximise those real parts, so |cᵀv| ≥ ‖v‖/√2 in the weighted norm.
 *
 * Vectors are complex, interleaved (re, im), as ComplexSparseLU takes them.
 */
import { performance } from 'node:perf_hooks';
import { BorderedMatrix } from '../../linalg/bordered.js';
import { ComplexSparseLU, type LUOptions } from '../../linalg/lu.js';
import { type CscPattern, embedPattern, entryIndex, patternUnion } from '../../linalg/sparse.js';
import { infNorm } from '../../linalg/vector.js';
import type { Problem } from '../../problem/problem.js';
import { type SystemCounters, emptyCounters, pseudoRandomVector } from '../curves/augmented.js';
import { weightedBorders } from '../curves/null-border.js';
import { type RefinementOperator, refineSolution } from '../curves/refinement.js';

export interface ComplexNumber {
  re: number;
  im: number;
}

/** J's pattern with the full diagonal added (where −λM lives). */
export function shiftedPattern(pattern: CscPattern): CscPattern {
  const n = pattern.rows;
  const diag: CscPattern = { rows: n, cols: n, colPtr: Int32Array.from({ length: n + 1 }, (_, i) => i), rowIdx: Int32Array.from({ length: n }, (_, i) => i) };
  return patternUnion(pattern, diag);
}

export class ComplexNullBorder {
  readonly n: number;
  /** Real column border b and row border c (length n), and the corner d. */
  readonly b: Float64Array;
  readonly c: Float64Array;
  corner = 0;
  /** x = A⁻¹e = (v, g) and y = A⁻ᵀe = (w, s), complex interleaved (length 2(n + 1)), at the last update. */
  readonly x: Float64Array;
  readonly y: Float64Array;
  /** λ at the last update. */
  lambda: ComplexNumber = { re: 0, im: 0 };
  readonly counters: SystemCounters = emptyCounters();
  /** Increases with every factorisation. */
  stamp = 0;
  private readonly mass: Float64Array;
  private readonly weights: Float64Array;
  private readonly pattern: CscPattern;
  private readonly shifted: CscPattern;
  private readonly embed: Int32Array;
  private readonly shiftedDiag: Int32Array;
  private readonly bordered: BorderedMatrix;
  /** Positions of the diagonal entries i < n in the bordered values. */
  private readonly borderedDiag: Int32Array;
  private readonly shiftedValues: Float64Array;
  private readonly values: Float64Array;
  private lu: ComplexSparseLU | undefined;
  private readonly luOptions: LUOptions;
  private J: Float64Array | undefined;
  private freshPending = true;
  private factorNext = false;
  private factoredCurrent = false;
  private readonly r: Float64Array;
  private readonly d: Float64Array;
  private readonly mags: Float64Array;
  private readonly e: Float64Array;
  /** The residual levels of direct solves with the current factorisation (x and y), relative to the products' magnitude. */
  private floorX = 64 * Number.EPSILON;
  private floorY = 64 * Number.EPSILON;
  /** A and Aᵀ with the reference LU, for the refinement. */
  private readonly operator: RefinementOperator = {
    apply: (z, out) => this.time('solves', () => this.apply(z, out, false)),
    correct: (r, d) => void this.solve(r, d),
  };
  private readonly transposedOperator: RefinementOperator = {
    apply: (z, out) => this.time('solves', () => this.apply(z, out, true)),
    correct: (r, d) => void this.solveTranspose(r, d),
  };

  constructor(
    readonly problem: Problem,
    luOptions: LUOptions = {},
  ) {
    const n = problem.size;
    this.n = n;
    this.mass = problem.massDiagonal ?? new Float64Array(n).fill(1);
    this.weights = problem.weights;
    this.pattern = problem.pattern();
    this.shifted = shiftedPattern(this.pattern);
    this.embed = embedPattern(this.pattern, this.shifted);
    this.shiftedDiag = new Int32Array(n);
    for (let i = 0; i < n; i++) this.shiftedDiag[i] = entryIndex(this.shifted, i, i);
    this.bordered = new BorderedMatrix(this.shifted, 1);
    this.borderedDiag = new Int32Array(n);
    for (let i = 0; i < n; i++) this.borderedDiag[i] = entryIndex(this.bordered.pattern, i, i);
    this.shiftedValues = new Float64Array(this.shifted.colPtr[n]);
    this.values = new Float64Array(2 * this.bordered.values.length);
    this.b = new Float64Array(n);
    this.c = new Float64Array(n);
    this.x = new Float64Array(2 * (n + 1));
    this.y = new Float64Array(2 * (n + 1));
    this.r = new Float64Array(2 * (n + 1));
    this.d = new Float64Array(2 * (n + 1));
    this.mags = new Float64Array(2 * n);
    this.e = new Float64Array(2 * (n + 1));
    this.e[2 * n] = 1;
    this.luOptions = luOptions;
  }

  private time<T>(phase: keyof SystemCounters['seconds'], f: () => T): T {
    const t0 = performance.now();
    try {
      return f();
    } finally {
      this.counters.seconds[phase] += (performance.now() - t0) / 1000;
    }
  }

  private solver(): ComplexSparseLU {
    if (!this.lu) this.lu = new ComplexSparseLU(this.bordered.pattern, this.luOptions);
    return this.lu;
  }

  /** g = x[n] (complex). */
  get g(): ComplexNumber {
    return { re: this.x[2 * this.n], im: this.x[2 * this.n + 1] };
  }

  /** Whether the LU is a factorisation at the last update's Jacobian, λ and borders. */
  get isCurrent(): boolean {
    return this.factoredCurrent;
  }

  /** Factor A with J's values, λ and the current borders; then x and y. */
  factor(jacobianValues: Float64Array, lambda: ComplexNumber): void {
    const n = this.n;
    this.J = jacobianValues;
    this.lambda = { ...lambda };
    this.time('assembly', () => {
      const sv = this.shiftedValues;
      sv.fill(0);
      for (let k = 0; k < this.embed.length; k++) sv[this.embed[k]] = jacobianValues[k];
      for (let i = 0; i < n; i++) sv[this.shiftedDiag[i]] -= lambda.re * this.mass[i];
      this.bordered.setInner(sv);
      this.bordered.setColumn(0, this.b);
      this.bordered.setRow(0, this.c);
      this.bordered.setCorner(0, 0, this.corner);
      const rv = this.bordered.values;
      const cv = this.values;
      for (let k = 0; k < rv.length; k++) {
        cv[2 * k] = rv[k];
        cv[2 * k + 1] = 0;
      }
      for (let i = 0; i < n; i++) cv[2 * this.borderedDiag[i] + 1] = -lambda.im * this.mass[i];
    });
    const done = this.time('factorisation', () => this.solver().update(this.values, this.freshPending));
    this.freshPending = false;
    this.factorNext = false;
    this.factoredCurrent = true;
    this.stamp++;
    if (done === 'factor') this.counters.factorisations++;
    else this.counters.refactorisations++;
    this.solve(this.e, this.x);
    this.solveTranspose(this.e, this.y);
    this.time('solves', () => {
      this.floorX = this.directFloor(this.x, false);
      this.floorY = this.directFloor(this.y, true);
    });
  }

  /**
   * x and y at a new Jacobian or λ: iterative refinement with the reference factorisation from
   * the last x, y; a fresh factorisation when there is none, after `restart` or `adopt`, or when
   * the refinement contracts slowly.
   */
  update(jacobianValues: Float64Array, lambda: ComplexNumber): void {
    if (!this.lu || !this.lu.isFactored || this.freshPending || this.factorNext || !this.x.every(Number.isFinite)) {
      this.factor(jacobianValues, lambda);
      return;
    }
    this.J = jacobianValues;
    this.lambda = { ...lambda };
    this.factoredCurrent = false;
    const x0 = this.x.slice();
    const y0 = this.y.slice();
    if (this.refine(this.x, false) && this.refine(this.y, true)) return;
    this.x.set(x0);
    this.y.set(y0);
    this.factor(jacobianValues, lambda);
  }

  /** A factorisation at the last update's Jacobian and λ (for exact linearisations). */
  ensureFactored(): void {
    if (!this.factoredCurrent) this.factor(this.J!, this.lambda);
  }

  /** Solve A z = rhs (complex, length 2(n + 1)) with the current factorisation. */
  solve(rhs: Float64Array, out: Float64Array): Float64Array {
    this.counters.solves++;
    return this.time('solves', () => this.solver().solve(rhs, out));
  }

  /** Solve Aᵀ z = rhs (plain transpose). */
  solveTranspose(rhs: Float64Array, out: Float64Array): Float64Array {
    this.counters.solves++;
    return this.time('solves', () => this.solver().solveTranspose(rhs, out));
  }

  /**
   * out = A z (transposed: Aᵀ z) with the last update's Jacobian, λ and the current borders;
   * returns the largest row sum of the terms' magnitudes (the scale of rounding errors in out).
   */
  private apply(z: Float64Array, out: Float64Array, transpose: boolean): number {
    const n = this.n;
    const pat = this.pattern;
    const J = this.J!;
    const { re: lr, im: li } = this.lambda;
    const zr = z[2 * n];
    const zi = z[2 * n + 1];
    const left = transpose ? this.c : this.b;
    const bottom = transpose ? this.b : this.c;
    let mag = 0;
    let lastRe = this.corner * zr;
    let lastIm = this.corner * zi;
    let lastMag = Math.abs(lastRe) + Math.abs(lastIm);
    if (!transpose) {
      for (let i = 0; i < n; i++) {
        const m = this.mass[i];
        const ar = z[2 * i];
        const ai = z[2 * i + 1];
        out[2 * i] = left[i] * zr - m * (lr * ar - li * ai);
        out[2 * i + 1] = left[i] * zi - m * (lr * ai + li * ar);
        this.mags[2 * i] = Math.abs(out[2 * i]);
        this.mags[2 * i + 1] = Math.abs(out[2 * i + 1]);
      }
      for (let j = 0; j < n; j++) {
        const ar = z[2 * j];
        const ai = z[2 * j + 1];
        if (ar !== 0 || ai !== 0) {
          for (let k = pat.colPtr[j]; k < pat.colPtr[j + 1]; k++) {
            const i = pat.rowIdx[k];
            out[2 * i] += J[k] * ar;
            out[2 * i + 1] += J[k] * ai;
            this.mags[2 * i] += Math.abs(J[k] * ar);
            this.mags[2 * i + 1] += Math.abs(J[k] * ai);
          }
        }
        lastRe += bottom[j] * ar;
        lastIm += bottom[j] * ai;
        lastMag += Math.abs(bottom[j] * ar) + Math.abs(bottom[j] * ai);
      }
      for (let i = 0; i < 2 * n; i++) mag = Math.max(mag, this.mags[i]);
    } else {
      for (let j = 0; j < n; j++) {
        const m = this.mass[j];
        const ar = z[2 * j];
        const ai = z[2 * j + 1];
        let sr = left[j] * zr - m * (lr * ar - li * ai);
        let si = left[j] * zi - m * (lr * ai + li * ar);
        let a = Math.abs(sr) + Math.abs(si);
        for (let k = pat.colPtr[j]; k < pat.colPtr[j + 1]; k++) {
          const i = pat.rowIdx[k];
          sr += J[k] * z[2 * i];
          si += J[k] * z[2 * i + 1];
          a += Math.abs(J[k] * z[2 * i]) + Math.abs(J[k] * z[2 * i + 1]);
        }
        out[2 * j] = sr;
        out[2 * j + 1] = si;
        mag = Math.max(mag, a);
        lastRe += bottom[j] * ar;
        lastIm += bottom[j] * ai;
        lastMag += Math.abs(bottom[j] * ar) + Math.abs(bottom[j] * ai);
      }
    }
    out[2 * n] = lastRe;
    out[2 * n + 1] = lastIm;
    return Math.max(mag, lastMag, 1);
  }

  /**
   * Refine z towards the solution of A z = e (or Aᵀ z = e) with the reference LU; false when it
   * contracts slowly (then a factorisation is cheaper).
   */
  private refine(z: Float64Array, transpose: boolean): boolean {
    return refineSolution(z, this.e, transpose ? this.transposedOperator : this.operator, this.r, this.d, transpose ? this.floorY : this.floorX);
  }

  /**
   * The residual of a direct solve with the factorisation just made, relative to the products'
   * magnitude, times 16 (at least 64ε): the level the refinement accepts (../curves/refinement.ts).
   * With the weighted borders (c of the size of the quadrature weights, b of order one, J of
   * order 1/h²) A is badly scaled on fine grids (condition about 10⁹ at 100×100 intervals): a
   * direct solve's residual then lies well above 64ε·Σ|A_ij z_j|, the refined one stalls within
   * a small factor of it, and that factor varies from solve to solve.
   */
  private directFloor(z: Float64Array, transpose: boolean): number {
    const mag = this.apply(z, this.r, transpose);
    let rn = 0;
    for (let i = 0; i < this.r.length; i++) rn = Math.max(rn, Math.abs(this.e[i] - this.r[i]));
    const level = (16 * rn) / mag;
    return Number.isFinite(level) ? Math.max(64 * Number.EPSILON, level) : 64 * Number.EPSILON;
  }

  /**
   * V = Im x / ω and W = Im y / ω (first n entries, real) without dividing by ω:
   * V = Re(A⁻¹ N x̄), W = Re(A⁻ᵀ N ȳ) at the current point (factored there). At λ = iω only.
   */
  imaginaryParts(V: Float64Array, W: Float64Array): void {
    this.ensureFactored();
    const n = this.n;
    const rhs = new Float64Array(2 * (n + 1));
    const out = new Float64Array(2 * (n + 1));
    for (let i = 0; i < n; i++) {
      rhs[2 * i] = this.mass[i] * this.x[2 * i];
      rhs[2 * i + 1] = -this.mass[i] * this.x[2 * i + 1];
    }
    this.solve(rhs, out);
    for (let i = 0; i < n; i++) V[i] = out[2 * i];
    for (let i = 0; i < n; i++) {
      rhs[2 * i] = this.mass[i] * this.y[2 * i];
      rhs[2 * i + 1] = -this.mass[i] * this.y[2 * i + 1];
    }
    this.solveTranspose(rhs, out);
    for (let i = 0; i < n; i++) W[i] = out[2 * i];
  }

  /** wᵀ M v (complex): g′(λ), the derivative of g in λ. */
  massProduct(): ComplexNumber {
    let re = 0;
    let im = 0;
    for (let i = 0; i < this.n; i++) {
      const m = this.mass[i];
      const vr = this.x[2 * i];
      const vi = this.x[2 * i + 1];
      const wr = this.y[2 * i];
      const wi = this.y[2 * i + 1];
      re += m * (wr * vr - wi * vi);
      im += m * (wr * vi + wi * vr);
    }
    return { re, im };
  }

  /** h = Re(wᵀ M v̄) = Im g(iω)/ω (see the header). */
  oddPart(): number {
    let s = 0;
    for (let i = 0; i < this.n; i++) s += this.mass[i] * (this.y[2 * i] * this.x[2 * i] + this.y[2 * i + 1] * this.x[2 * i + 1]);
    return s;
  }

  /** New borders from the current eigenvectors (see the header); the next update factors. */
  adopt(): void {
    this.setBorders(this.x, this.y);
    this.factorNext = true;
  }

  /**
   * Real borders from complex right and left vector approximations (interleaved, first n
   * entries): the real part of each, turned by the phase that makes it largest.
   */
  setBorders(right: Float64Array, left: Float64Array): void {
    const n = this.n;
    const wt = this.weights;
    const re = realPart(right, n, wt);
    const inv = new Float64Array(n);
    for (let i = 0; i < n; i++) inv[i] = 1 / wt[i];
    const le = realPart(left, n, inv);
    this.corner = weightedBorders(re, le, wt, this.b, this.c, 'eigenvectors').corner;
  }

  /** Borders as saved (checkpoints). */
  restoreBorders(b: Float64Array, c: Float64Array): void {
    this.b.set(b);
    this.c.set(c);
    this.corner = infNorm(b);
    this.factorNext = true;
  }

  /**
   * Borders at a first point with no eigenvectors known: fixed pseudo-random borders (A is
   * regular for almost every choice), then refreshed twice from the vectors they give (near a
   * simple eigenvalue those are accurate).
   */
  initialise(jacobianValues: Float64Array, lambda: ComplexNumber): void {
    const n = this.n;
    const r = pseudoRandomVector(2 * (n + 1), 12345);
    const s = pseudoRandomVector(2 * (n + 1), 67890);
    for (let i = 0; i < n; i++) {
      s[2 * i] *= this.weights[i];
      s[2 * i + 1] *= this.weights[i];
    }
    this.setBorders(r, s);
    for (let pass = 0; pass < 2; pass++) {
      this.factor(jacobianValues, lambda);
      this.adopt();
    }
    this.factor(jacobianValues, lambda);
  }

  /**
   * The eigenvalue of the pencil nearest to `guess` (Newton's method on g(μ) = 0, g′ = wᵀMv),
   * with J's values fixed; x and y are its eigenvectors on return. Null when Newton fails.
   */
  eigenvalueNear(jacobianValues: Float64Array, guess: ComplexNumber, tolerance = 1e-13, maxIterations = 30): ComplexNumber | null {
    let mu = { ...guess };
    let previous = Infinity;
    for (let it = 0; it < maxIterations; it++) {
      this.factor(jacobianValues, mu);
      const g = this.g;
      const dg = this.massProduct();
      const den = dg.re * dg.re + dg.im * dg.im;
      if (!(den > 0)) return null;
      // δ = g / g′
      const dr = (g.re * dg.re + g.im * dg.im) / den;
      const di = (g.im * dg.re - g.re * dg.im) / den;
      mu = { re: mu.re - dr, im: mu.im - di };
      if (!Number.isFinite(mu.re) || !Number.isFinite(mu.im)) return null;
      const step = Math.hypot(dr, di) / Math.max(1, Math.hypot(mu.re, mu.im));
      process.env.DEBUG_HOPF && console.log('eig', it, mu, step);
      // converged, or at the rounding level (the step no longer shrinks once below 1e-9)
      if (step <= tolerance || (step < 1e-9 && step >= 0.5 * previous)) {
        this.factor(jacobianValues, mu);
        return mu;
      }
      previous = step;
      // refresh the borders from the improved vectors every step (the eigenvalue moves)
      this.adopt();
    }
    return null;
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

/**
 * Re(e^{iθ} z) for the phase θ that maximises its norm with weights `wt`
 * (z interleaved complex, first n entries).
 */
function realPart(z: Float64Array, n: number, wt: ArrayLike<number>): Float64Array {
  let P = 0;
  let Q = 0;
  let R = 0;
  for (let i = 0; i < n; i++) {
    const a = z[2 * i];
    const b = z[2 * i + 1];
    P += wt[i] * a * a;
    Q += wt[i] * b * b;
    R += wt[i] * a * b;
  }
  // ‖a cos θ − b sin θ‖² = (P + Q)/2 + (P − Q)/2 cos 2θ − R sin 2θ
  const t2 = Math.atan2(-R, (P - Q) / 2);
  const ct = Math.cos(t2 / 2);
  const st = Math.sin(t2 / 2);
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) out[i] = z[2 * i] * ct - z[2 * i + 1] * st;
  return out;
}
