/**
 * Deflated Newton's method (Farrell, Birkisson & Funke 2015): Newton's method on the deflated
 * residual G(u) = η(u) F(u) of ./deflation.ts, at fixed parameters.
 *
 * The step. G'(u) = η J + F ∇ηᵀ is the Jacobian plus a rank-one term, so by the
 * Sherman–Morrison formula the deflated Newton update is the undeflated one scaled:
 *
 *     J d = −F,      δ = τ d,      τ = 1 / (1 − ∇(log η)ᵀ d),
 *
 * which needs only the sparse LU of the undeflated Jacobian (never a dense matrix). J is shifted
 * by a tiny multiple of the mass matrix, J − σM with σ = 10⁻⁸ on the scale of the Jacobian's
 * entries (as in the Newton polish of time integration): a pattern on a periodic domain can be
 * shifted, so its Jacobian is (nearly) singular, while the fixed point is still F = 0.
 *
 * Damping: the step is backtracked (halved up to 12 times) until log η + log ‖D⁻¹F‖_w — the
 * logarithm of the deflated residual's norm, for which δ is a descent direction — falls below
 * the largest of its values at the last `memory` iterates (a non-monotone line search, Grippo,
 * Lampariello & Lucidi 1986, with Armijo's constant 10⁻⁴). A monotone search stops at the many
 * local minima of the deflated residual; on the bundled Allen–Cahn strip the non-monotone one
 * (memory 10) finds every state from far more sets of guesses. An update longer than `maxStep`
 * times (1 + the state's norm) is cut to that length first (near τ's pole the deflated step is
 * unbounded).
 *
 * Convergence is judged on the undeflated residual, as for the continuation's and the polish's
 * Newton: the scaled residual ‖D⁻¹F‖_w (D: each row's largest Jacobian entry at the start, at
 * least 1) below the tolerance and the last update below tolerance·(1 + ‖u‖_w), or the residual
 * four orders below the tolerance. No I/O.
 */
import { SparseLUError } from '../linalg/lu.js';
import { IterationMatrix } from '../dynamics/iteration-matrix.js';
import { polishShift } from '../dynamics/polish.js';
import { type Params, type Problem, weightedNorm } from '../problem/problem.js';
import type { Deflation } from './deflation.js';

export interface DeflatedNewtonSettings {
  /** Scaled residual tolerance (and update tolerance relative to 1 + ‖u‖_w). */
  tolerance: number;
  maxIterations: number;
  /** Largest update, relative to 1 + ‖u‖_w (longer ones are cut to this length). */
  maxStep: number;
  /** A solve is abandoned when max |u| passes this. */
  blowUp: number;
  /** The line search accepts a decrease below the largest log ‖G‖ of this many recent iterates (1: monotone). */
  memory: number;
}

export const defaultDeflatedNewton: DeflatedNewtonSettings = { tolerance: 1e-9, maxIterations: 100, maxStep: 10, blowUp: 1e8, memory: 10 };

export type SolveFailure = 'max-iterations' | 'singular' | 'non-finite' | 'blown-up' | 'stalled';

export interface SolveResult {
  converged: boolean;
  iterations: number;
  /** Scaled residual ‖D⁻¹F‖_w at the final iterate. */
  residual: number;
  failure?: SolveFailure;
  message?: string;
}

export interface SolveCounters {
  iterations: number;
  residuals: number;
  factorisations: number;
}

/**
 * The factor τ of the deflated update τ d (Sherman–Morrison; 1 with nothing deflated), cut so
 * that |τ| is at most `limit` (the longest update over the length of d).
 */
export function stepScale(gradLogFactor: Float64Array, d: Float64Array, deflating: boolean, limit: number): number {
  let beta = 0;
  for (let i = 0; i < d.length; i++) beta += gradLogFactor[i] * d[i];
  const tau = deflating ? 1 / (1 - beta) : 1;
  if (!Number.isFinite(tau)) return limit;
  return Math.abs(tau) <= limit ? tau : Math.sign(tau) * limit;
}

/** Backtracking: halve at most this many times. */
const maxHalvings = 12;
/** Armijo's constant. */
const armijo = 1e-4;

export class DeflatedNewton {
  private readonly n: number;
  private readonly matrix: IterationMatrix;
  private readonly f: Float64Array;
  private readonly rhs: Float64Array;
  private readonly d: Float64Array;
  private readonly g: Float64Array;
  private readonly trial: Float64Array;
  private readonly rowScale: Float64Array;
  readonly counters: SolveCounters = { iterations: 0, residuals: 0, factorisations: 0 };

  constructor(
    readonly problem: Problem,
    readonly params: Params,
    readonly deflation: Deflation,
    readonly settings: DeflatedNewtonSettings,
  ) {
    this.n = problem.size;
    this.matrix = new IterationMatrix(problem);
    this.f = new Float64Array(this.n);
    this.rhs = new Float64Array(this.n);
    this.d = new Float64Array(this.n);
    this.g = new Float64Array(this.n);
    this.trial = new Float64Array(this.n);
    this.rowScale = new Float64Array(this.n).fill(1);
  }

  /** ‖D⁻¹f‖_w with the current row scaling. */
  private scaled(f: Float64Array): number {
    const w = this.problem.weights;
    const s = this.rowScale;
    let sum = 0;
    for (let i = 0; i < this.n; i++) {
      const v = f[i] * s[i];
      sum += w[i] * v * v;
    }
    return Math.sqrt(sum);
  }

  private residual(u: Float64Array): number {
    this.problem.residual(u, this.params, this.f);
    this.counters.residuals++;
    return this.scaled(this.f);
  }

  /** Row scaling 1 / max(1, max_j |J_ij|) and the shift's scale, from the Jacobian just evaluated. */
  private scaleFromJacobian(): number {
    const J = this.matrix.jacobian;
    const pat = this.problem.pattern();
    const rowMax = new Float64Array(this.n);
    let scale = 1;
    for (let j = 0; j < this.n; j++) {
      for (let q = pat.colPtr[j]; q < pat.colPtr[j + 1]; q++) {
        const a = Math.abs(J[q]);
        const i = pat.rowIdx[q];
        if (a > rowMax[i]) rowMax[i] = a;
        if (a > scale) scale = a;
      }
    }
    for (let i = 0; i < this.n; i++) this.rowScale[i] = 1 / Math.max(1, rowMax[i]);
    return scale;
  }

  /**
   * Solve from `u` (overwritten with the last iterate). Returns whether it converged; the
   * deflated states are those of `deflation` at the call.
   */
  solve(u: Float64Array): SolveResult {
    const { n, problem, params, settings, matrix, f, rhs, d, g, trial } = this;
    const w = problem.weights;
    for (let i = 0; i < n; i++) if (!Number.isFinite(u[i])) return { converged: false, iterations: 0, residual: NaN, failure: 'non-finite', message: 'the initial guess is not finite' };
    // every solve takes fresh pivots, as on a new matrix: a solve does not depend on the ones
    // before it, so a search resumed from a snapshot repeats the uninterrupted one bit for bit
    matrix.forget();
    matrix.evaluateJacobian(u, params);
    const c = 1 / (polishShift * this.scaleFromJacobian());
    let res = this.residual(u);
    let defl = this.deflation.evaluate(u, g);
    let lastUpdate = Infinity;
    // log ‖G‖ of the last `memory` iterates (the non-monotone line search's reference is their largest)
    const history: number[] = [];
    for (let it = 0; ; it++) {
      if (!Number.isFinite(res)) return { converged: false, iterations: it, residual: res, failure: 'non-finite', message: 'the residual is not finite' };
      const uNorm = weightedNorm(w, u);
      if (res <= settings.tolerance && (lastUpdate <= settings.tolerance * (1 + uNorm) || res <= 1e-4 * settings.tolerance)) {
        return { converged: true, iterations: it, residual: res };
      }
      if (it >= settings.maxIterations) {
        return { converged: false, iterations: it, residual: res, failure: 'max-iterations', message: `no convergence in ${it} deflated Newton iterations (residual ${res.toExponential(2)})` };
      }
      if (it > 0) matrix.evaluateJacobian(u, params);
      try {
        matrix.factor(c);
        this.counters.factorisations++;
        // (M − cJ) d = c F  ⇔  (J − σM) d = −F
        for (let i = 0; i < n; i++) rhs[i] = c * f[i];
        matrix.solve(rhs, d);
      } catch (e) {
        if (e instanceof SparseLUError) return { converged: false, iterations: it, residual: res, failure: 'singular', message: `the Jacobian is singular at the iterate (${e.message})` };
        throw e;
      }
      this.counters.iterations++;
      // Sherman–Morrison: the deflated update is τ d with τ = 1 / (1 − ∇(log η)·d)
      const scale = stepScale(g, d, defl.nearest >= 0, settings.maxStep * (1 + uNorm) / weightedNorm(w, d));
      // backtracking on log ‖G‖ = log η + log ‖D⁻¹F‖_w against the largest of the recent values
      history.push(defl.logFactor + Math.log(res));
      if (history.length > settings.memory) history.shift();
      const reference = Math.max(...history);
      let lambda = 1;
      let accepted = false;
      for (let k = 0; k <= maxHalvings && !accepted; k++, lambda /= 2) {
        for (let i = 0; i < n; i++) trial[i] = u[i] + lambda * scale * d[i];
        const r = this.residual(trial);
        const logFactor = this.deflation.evaluate(trial).logFactor;
        const phi = logFactor + Math.log(r);
        accepted = (Number.isFinite(phi) && phi <= reference + Math.log1p(-armijo * lambda)) || (r === 0 && Number.isFinite(logFactor));
        if (accepted) {
          u.set(trial);
          res = r;
          lastUpdate = lambda * Math.abs(scale) * weightedNorm(w, d);
        }
      }
      if (!accepted) {
        return { converged: false, iterations: it + 1, residual: res, failure: 'stalled', message: `the deflated residual did not decrease along the Newton direction (residual ${res.toExponential(2)})` };
      }
      // this.f holds F at the accepted iterate (the last trial)
      defl = this.deflation.evaluate(u, g);
      let big = 0;
      for (let i = 0; i < n; i++) big = Math.max(big, Math.abs(u[i]));
      if (!(big <= settings.blowUp)) return { converged: false, iterations: it + 1, residual: res, failure: 'blown-up', message: `the iterate grew past ${settings.blowUp.toExponential(1)} (max |u| = ${big.toExponential(2)})` };
    }
  }

  dispose(): void {
    this.matrix.dispose();
  }
}
