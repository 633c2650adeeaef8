/**
 * Newton's method for curve points: G(y) = 0 together with one scalar condition
 * ⟨t, y − ref⟩_w = 0 (t = a unit vector fixes a parameter; t = the tangent is Keller's
 * pseudo-arclength condition). Convergence needs, at the accepted iterate y (the state that is
 * returned), the one-parameter corrector's tests (../newton.ts):
 *   residual:  the true ‖F(u, p)‖_w of y's state ≤ rtol·‖terms‖_w + 16·ε·‖rounding‖_w
 *              (src/problem/residual-size.ts: no row scaling can fake it), the extra equations'
 *              own scaled norm (g, h) ≤ rtol — raised to the system's rounding level of g
 *              where that is higher (g near a second singularity) — and |⟨t, y − ref⟩_w| ≤
 *              stol·(1 + ‖y‖_w);
 *   update:    the update that led to y is at most stol·(1 + ‖y‖_w), or the residual tests pass
 *              with a ten-thousandth of their tolerance (near singular points the update stalls
 *              at rounding level). Updates are always applied, so the predictor is never
 *              accepted as it is. Two exceptions: a start point whose residuals pass where no
 *              update can be computed (the bordering row tangent to the curve: a Hopf curve
 *              leaving a Bogdanov–Takens point with the parameter fixed), and an iterate that
 *              passed the residual tests and whose update did not lower the (scaled) residual
 *              or could not be evaluated (near singular points such an update is rounding
 *              amplified along a near-null vector): it is restored exactly, as in the
 *              one-parameter corrector.
 * The residual returned is the true ‖F‖_w of the returned y's state. The scaled residual that
 * `evaluate` returns measures progress only (contraction, stalls, divergence). Failures carry a
 * reason in words.
 *
 * The residual is exact at every iterate; the linearisation starts as the system's last one
 * (chord iterations: the last converged point's) unless `exact` is set, and is made exact at
 * the current iterate as soon as an iteration fails to quarter the residual.
 */
import { SparseLUError } from '../../linalg/lu.js';
import type { NewtonFailure } from '../newton.js';
import type { NewtonSettings } from '../types.js';
import type { AugmentedSystem } from './augmented.js';

export interface CurveNewtonResult {
  converged: boolean;
  iterations: number;
  /** The true ‖F‖_w of the final iterate's state. */
  residual: number;
  failure?: NewtonFailure;
  message?: string;
}

export interface CurveWork {
  g: Float64Array;
  rhs: Float64Array;
  delta: Float64Array;
  row: Float64Array;
  /** An iterate that passed the residual tests, kept while the update from it is tried. */
  previous: Float64Array;
}

export function curveWork(size: number): CurveWork {
  return { g: new Float64Array(size - 1), rhs: new Float64Array(size), delta: new Float64Array(size), row: new Float64Array(size), previous: new Float64Array(size) };
}

/** Weighted inner product and norm in the system's unknowns. */
export function wdot(sys: AugmentedSystem, a: ArrayLike<number>, b: ArrayLike<number>): number {
  const w = sys.weights;
  let s = 0;
  for (let i = 0; i < sys.size; i++) s += w[i] * a[i] * b[i];
  return s;
}

export function wnorm(sys: AugmentedSystem, a: ArrayLike<number>): number {
  return Math.sqrt(wdot(sys, a, a));
}

/**
 * Whether the last evaluated point passes the residual tests at tolerance rtol: the true
 * residual of its state against its bound, the extra equations against rtol (or their rounding
 * level). `scale` multiplies both tolerances (F's relative part only, not its rounding part).
 */
export function residualPasses(sys: AugmentedSystem, rtol: number, scale = 1): boolean {
  const extraTol = Math.max(rtol, sys.residualFloor?.() ?? 0);
  if (!(sys.extraResidual() <= scale * extraTol)) return false;
  const r = sys.stateResidual;
  return r.norm === 0 || r.norm <= r.bound(scale * rtol);
}

/** Correct y in place onto G = 0 ∩ {⟨t, y − ref⟩_w = 0}. */
export function correctCurve(
  sys: AugmentedSystem,
  y: Float64Array,
  t: Float64Array,
  ref: Float64Array,
  options: NewtonSettings & { maxUpdate?: number; exact?: boolean },
  work: CurveWork,
): CurveNewtonResult {
  const m = sys.size;
  const { g, rhs, delta, row, previous: before } = work;
  for (let i = 0; i < m; i++) row[i] = sys.weights[i] * t[i];
  let lastUpdate = Infinity;
  let firstResidual = NaN;
  let bestResidual = Infinity;
  let sinceBest = 0;
  let previous = Infinity;
  let exact = false;
  // the iterate before the last update, when it passed the residual tests
  let kept: { progress: number; residual: number } | undefined;
  // near a singular point an update from a point that passed can be rounding amplified along a
  // near-null vector: that point is restored exactly (and evaluated again: tests and borders
  // read the last evaluated point)
  const restore = (it: number): CurveNewtonResult => {
    y.set(before);
    sys.evaluate(y, g);
    return { converged: true, iterations: it, residual: kept!.residual };
  };
  for (let it = 0; ; it++) {
    let res: number;
    try {
      res = sys.evaluate(y, g);
    } catch (e) {
      if (e instanceof SparseLUError) {
        if (kept) return restore(it - 1);
        return { converged: false, iterations: it, residual: NaN, failure: e.kind === 'non-finite' ? 'non-finite' : 'singular', message: `the bordered matrix ${e.kind === 'singular' ? 'is singular' : 'has non-finite entries'} here` };
      }
      throw e;
    }
    if (kept && !(res < kept.progress)) return restore(it - 1);
    kept = undefined;
    const trueResidual = sys.stateResidual.norm;
    if (!Number.isFinite(res) || !Number.isFinite(trueResidual)) return { converged: false, iterations: it, residual: trueResidual, failure: 'non-finite', message: 'the residual is not finite' };
    if (it === 0) firstResidual = res;
    let c = 0;
    for (let i = 0; i < m; i++) c += row[i] * (y[i] - ref[i]);
    const stepLimit = options.stepTolerance * (1 + wnorm(sys, y));
    const residualOk = (scale = 1): boolean => Math.abs(c) <= stepLimit && residualPasses(sys, options.residualTolerance, scale);
    if (it > 0 && (lastUpdate <= stepLimit || residualOk(1e-4)) && residualOk()) {
      return { converged: true, iterations: it, residual: trueResidual };
    }
    const versus = (): string => `residual ${trueResidual.toExponential(2)} against ${sys.stateResidual.bound(options.residualTolerance).toExponential(2)}, extra equations ${sys.extraResidual().toExponential(2)}`;
    if (it >= options.maxIterations) {
      return { converged: false, iterations: it, residual: trueResidual, failure: 'max-iterations', message: `no convergence in ${it} Newton iterations (${versus()})` };
    }
    if (it > 0 && res > 1e8 * Math.max(firstResidual, options.residualTolerance)) {
      return { converged: false, iterations: it, residual: trueResidual, failure: 'diverged', message: `Newton diverged (the scaled residual grew from ${firstResidual.toExponential(2)} to ${res.toExponential(2)})` };
    }
    if (res < 0.9 * bestResidual) {
      bestResidual = res;
      sinceBest = 0;
    } else if (++sinceBest >= 4 && !residualOk()) {
      return { converged: false, iterations: it, residual: trueResidual, failure: 'stalled', message: `Newton stalled (${versus()})` };
    }
    // chord iterations while they contract well (the residual at least quartered); else the
    // exact linearisation here (full Newton from now on)
    if (!exact && (it === 0 ? options.exact === true : res > 0.25 * previous)) {
      try {
        sys.exact();
      } catch (e) {
        if (e instanceof SparseLUError) return { converged: false, iterations: it, residual: trueResidual, failure: 'singular', message: e.message };
        throw e;
      }
      exact = true;
    }
    previous = res;
    for (let i = 0; i < m - 1; i++) rhs[i] = -g[i];
    rhs[m - 1] = -c;
    try {
      sys.solve(row, rhs, delta);
    } catch (e) {
      if (e instanceof SparseLUError || e instanceof Error) {
        // a start point given on the curve where the bordering row is tangent to it (a Hopf
        // curve leaving a Bogdanov–Takens point, the parameter fixed): no update can be computed
        if (it === 0 && residualOk()) return { converged: true, iterations: 0, residual: trueResidual };
        return { converged: false, iterations: it, residual: trueResidual, failure: 'singular', message: e.message };
      }
      throw e;
    }
    let finite = true;
    for (let i = 0; i < m; i++) if (!Number.isFinite(delta[i])) finite = false;
    if (!finite) return { converged: false, iterations: it + 1, residual: trueResidual, failure: 'non-finite', message: 'the Newton update is not finite' };
    // the update is always applied (a curve point is returned one update past the update test,
    // as accurate as the curve checks need): the predictor itself is never accepted
    if (residualOk()) {
      before.set(y);
      kept = { progress: res, residual: trueResidual };
    }
    for (let i = 0; i < m; i++) y[i] += delta[i];
    lastUpdate = wnorm(sys, delta);
    if (options.maxUpdate !== undefined && lastUpdate > options.maxUpdate) {
      if (kept) return restore(it);
      return { converged: false, iterations: it + 1, residual: trueResidual, failure: 'diverged', message: `Newton update ${lastUpdate.toExponential(2)} is longer than allowed (${options.maxUpdate.toExponential(2)})` };
    }
  }
}
