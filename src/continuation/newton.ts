/**
 * Newton's method on the bordered system: F(u, λ) = 0 together with one scalar condition
 *   g(x) = ⟨t, x − x_ref⟩_w = 0,
 * where t is a direction in (u, λ) space. With t = e_λ this fixes the parameter (plain Newton at
 * fixed λ, to converge a start point); with t the unit tangent it is Keller's pseudo-arclength
 * condition (the corrector moves in the hyperplane through the predicted point orthogonal to t).
 *
 * Convergence needs both tests at the accepted iterate x, the state that is returned:
 *   residual:  ‖F(x)‖_w ≤ rtol·‖terms‖_w + 16·ε·‖rounding‖_w   (src/problem/residual-size.ts:
 *              no row scaling, so a large stencil cannot make a wrong state look converged),
 *              and |g(x)| ≤ stol·(1 + ‖x‖);
 *   update:    the estimated error of x is at most stol·(1 + ‖x‖) (weighted norm): the
 *              update δ_k that led to x, times ρ/(1 − ρ) once the iteration contracts with
 *              ρ = ‖δ_k‖/‖δ_{k−1}‖ ≤ ½ (the usual a-posteriori bound for a contraction; chord
 *              steps contract linearly, Newton steps faster) — or the update computed at x
 *              itself is that small (then it is not applied: at the predictor, a start guess).
 *              Near singular points, where updates stop shrinking at the rounding level, the
 *              residual test alone accepts x once neither the update computed there nor the
 *              residual is shrinking any more (the update is then not applied either), or when
 *              the update from x, which passed the residual test, did not lower the residual (x
 *              is restored exactly).
 * The residual returned is ‖F‖_w of the returned x. Failures carry a reason.
 */
import { SparseLUError } from '../linalg/lu.js';
import { type ContinuationSystem, allFinite } from './system.js';
import type { NewtonSettings } from './types.js';

export type NewtonFailure = 'diverged' | 'stalled' | 'non-finite' | 'max-iterations' | 'singular';

export interface NewtonResult {
  converged: boolean;
  /** Newton updates applied (0: the predictor itself passed both tests). */
  iterations: number;
  /** ‖F‖_w at the final iterate (the returned x). */
  residual: number;
  /** What the residual was tested against at the final iterate (see ContinuationSystem.residualBound; 0 for a residual of exactly 0). */
  residualBound: number;
  /** Whether the final bordered factorisation is at the final iterate's previous Newton iterate (usable for tangents). */
  factored: boolean;
  failure?: NewtonFailure;
  message?: string;
}

export interface CorrectOptions extends NewtonSettings {
  /** Factor with fresh pivots at the first iteration (near folds and branch points). */
  fresh: boolean;
  /**
   * Chord iterations: start with the factorisation the system already holds (a nearby point's
   * bordered matrix) and switch to full Newton when an iteration reduces the residual by less
   * than a factor of four.
   */
  chord?: boolean;
  /** Give up when an update is longer than this (weighted norm): the corrector is leaving the branch. */
  maxUpdate?: number;
}

/**
 * Correct x (length n+1: u then λ) in place onto F = 0 ∩ {⟨t, x − ref⟩_w = 0}.
 */
export function correct(
  sys: ContinuationSystem,
  x: Float64Array,
  t: Float64Array,
  ref: Float64Array,
  options: CorrectOptions,
  work: NewtonWork,
): NewtonResult {
  const n = sys.n;
  const u = x.subarray(0, n);
  const { rhs, delta } = work;
  let lastUpdate = Infinity;
  let previousUpdate = Infinity;
  let factored = false;
  let firstResidual = NaN;
  let bestResidual = Infinity;
  let sinceBest = 0;
  let chord = options.chord === true;
  let chordSteps = 0;
  let previousResidual = Infinity;
  let freshUsed = false;
  // a late iterate, kept (in work.previous) while the update from it is tried
  const previous = work.previous ?? (work.previous = new Float64Array(n + 1));
  let kept: { residual: number; constraintOk: boolean } | undefined;
  for (let it = 0; ; it++) {
    let res = sys.residual(u, x[n]);
    if (kept && !(res < kept.residual)) {
      // the update made the residual no smaller: if the state before it passes the residual
      // test, the update was rounding amplified along a near-null vector (near a singular
      // point), and that state is as converged as double precision allows
      const before = previous.subarray(0, n);
      const r0 = sys.residual(before, previous[n]);
      const bound0 = kept.constraintOk ? sys.residualBound(before, previous[n], options.residualTolerance, r0) : -Infinity;
      if (r0 <= bound0) {
        x.set(previous);
        return { converged: true, iterations: it - 1, residual: r0, residualBound: bound0, factored };
      }
      res = sys.residual(u, x[n]);
    }
    kept = undefined;
    if (!Number.isFinite(res)) {
      return { converged: false, iterations: it, residual: res, residualBound: NaN, factored, failure: 'non-finite', message: `the residual is not finite at ${sys.parameter} = ${x[n]}` };
    }
    // the bound costs about a residual evaluation: computed only where a test needs it
    let bound = NaN;
    const boundNow = (): number => (Number.isNaN(bound) ? (bound = sys.residualBound(u, x[n], options.residualTolerance, res)) : bound);
    if (it === 0) firstResidual = res;
    const g = constraint(sys, x, t, ref);
    const stepLimit = options.stepTolerance * (1 + sys.norm(x));
    const residualOk = (): boolean => Math.abs(g) <= stepLimit && res <= boundNow();
    // the contraction rate needs two updates; after one, the update itself is the estimate
    const rho = Number.isFinite(previousUpdate) ? lastUpdate / previousUpdate : 1;
    const errorEstimate = rho <= 0.5 ? (rho / (1 - rho)) * lastUpdate : lastUpdate;
    if (it > 0 && errorEstimate <= stepLimit && residualOk()) {
      return { converged: true, iterations: it, residual: res, residualBound: bound, factored };
    }
    // an exact solution (F = 0 and g = 0 to the last bit, e.g. a trivial branch): its Newton
    // update is exactly zero, no solve needed
    if (res === 0 && g === 0) return { converged: true, iterations: it, residual: 0, residualBound: 0, factored };
    const fail = (failure: NewtonFailure, message: string): NewtonResult => ({ converged: false, iterations: it, residual: res, residualBound: boundNow(), factored, failure, message });
    const versus = (): string => `residual ${res.toExponential(2)} against ${boundNow().toExponential(2)}`;
    if (it >= options.maxIterations) return fail('max-iterations', `no convergence in ${it} Newton iterations (${versus()})`);
    if (it > 0 && res > 1e8 * firstResidual && res > 1e8 * boundNow()) {
      return fail('diverged', `Newton diverged (residual grew from ${firstResidual.toExponential(2)} to ${res.toExponential(2)})`);
    }
    // stalled: no 10% progress in four iterations (near singular points Newton converges only
    // linearly, typically halving the residual, which still counts as progress)
    if (res < 0.9 * bestResidual) {
      bestResidual = res;
      sinceBest = 0;
    } else if (++sinceBest >= 4 && res > boundNow()) {
      return fail('stalled', `Newton stalled (${versus()})`);
    }
    // chord while it contracts well (residual at least quartered per iteration); else full Newton
    if (chord && (chordSteps >= 8 || (chordSteps > 0 && res > 0.25 * previousResidual))) chord = false;
    const residualBefore = previousResidual;
    previousResidual = res;
    let solved = false;
    if (chord) {
      chordSteps++;
      solved = solveUpdate(sys, rhs, delta, g);
      if (!solved || (options.maxUpdate !== undefined && sys.norm(delta) > options.maxUpdate)) solved = false;
      chord = solved;
    }
    if (!solved) {
      sys.assemble(u, x[n]);
      sys.setTangentRow(t);
      try {
        sys.factor(options.fresh && !freshUsed);
        freshUsed = true;
      } catch (e) {
        if (e instanceof SparseLUError) {
          const failure: NewtonFailure = e.kind === 'non-finite' ? 'non-finite' : 'singular';
          return { ...fail(failure, `bordered matrix ${e.kind === 'singular' ? 'is singular' : 'has non-finite entries'} at ${sys.parameter} = ${x[n]}`), factored: false };
        }
        throw e;
      }
      factored = true;
      try {
        solveUpdate(sys, rhs, delta, g, true);
      } catch (e) {
        if (e instanceof SparseLUError) return { ...fail('singular', e.message), factored: false };
        throw e;
      }
      if (!allFinite(delta)) return { ...fail('non-finite', 'the Newton update is not finite'), iterations: it + 1 };
    }
    const update = sys.norm(delta);
    // x itself passes: its own Newton update is negligible (the predictor, or a start guess), or,
    // near a singular point, no smaller than the last one while the residual is already at its
    // attainable level (the update is rounding amplified along the near-null vector: taking it
    // would only move the state off its branch)
    const stagnant = it > 0 && update >= 0.9 * lastUpdate && res >= 0.1 * residualBefore;
    if ((update <= stepLimit || stagnant) && residualOk()) {
      return { converged: true, iterations: it, residual: res, residualBound: boundNow(), factored };
    }
    if (it === 0 || res < 1e-3 * firstResidual) {
      previous.set(x);
      kept = { residual: res, constraintOk: Math.abs(g) <= stepLimit };
    }
    for (let i = 0; i <= n; i++) x[i] += delta[i];
    previousUpdate = lastUpdate;
    lastUpdate = update;
    if (options.maxUpdate !== undefined && lastUpdate > options.maxUpdate) {
      return { ...fail('diverged', `Newton update ${lastUpdate.toExponential(2)} is longer than allowed (${options.maxUpdate.toExponential(2)})`), iterations: it + 1 };
    }
  }
}

/** g(x) = ⟨t, x − ref⟩_w. */
function constraint(sys: ContinuationSystem, x: Float64Array, t: Float64Array, ref: Float64Array): number {
  const n = sys.n;
  const w = sys.weights;
  let g = 0;
  for (let i = 0; i < n; i++) g += w[i] * t[i] * (x[i] - ref[i]);
  return g + t[n] * (x[n] - ref[n]);
}

/**
 * delta = −B⁻¹(F, g) with the bordered matrix B the system holds. Returns false when a chord
 * solve fails (non-finite or singular); with `strict` errors are thrown instead.
 */
function solveUpdate(sys: ContinuationSystem, rhs: Float64Array, delta: Float64Array, g: number, strict = false): boolean {
  const n = sys.n;
  for (let i = 0; i < n; i++) rhs[i] = -sys.f[i];
  rhs[n] = -g;
  if (strict) {
    sys.solve(rhs, delta);
    return true;
  }
  try {
    sys.solve(rhs, delta);
  } catch {
    return false;
  }
  return allFinite(delta);
}

/** Workspace for `correct` (allocate once per branch). */
export function correctWork(n: number): NewtonWork {
  return { rhs: new Float64Array(n + 1), delta: new Float64Array(n + 1), previous: new Float64Array(n + 1) };
}

/** Workspace of `correct`: right-hand side, update, and a kept iterate. */
export interface NewtonWork {
  rhs: Float64Array;
  delta: Float64Array;
  previous?: Float64Array;
}
