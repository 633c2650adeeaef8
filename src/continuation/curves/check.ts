/**
 * Derivative check of an augmented curve system: its linearisation G_y δ (what the curve
 * corrector inverts) against central differences of G in random directions δ, at one point
 * and with the borders held fixed; and its bordered solve against the linearisation
 * ([G_y; rowᵀ] z = rhs). `branchline check` runs it for curve cases, the tests for every system.
 *
 * Differences: central, with steps h and h/2 combined by Richardson extrapolation (fourth order:
 * g is a ratio of determinants and varies fast away from the curve, near its poles), with
 * h = 10⁻⁴·(1 + ‖y‖∞)/‖δ‖∞ — smaller than the usual ε_mach^(1/5) balance, which the size of
 * g's higher derivatives there upsets; G is exact to rounding, so the rounding part stays near
 * 1e-12 (and h/16 too: the better of the two counts, a wrong derivative disagrees at both).
 * Error per direction: ‖G_y δ − d‖∞ / max(‖G_y δ‖∞, ‖d‖∞, ‖G(y)‖∞).
 * The solve is measured by its backward error ‖A z − b‖∞ / (‖A‖∞‖z‖∞ + ‖b‖∞), ‖A‖∞ estimated
 * from products with random sign vectors.
 */
import type { Params, Problem } from '../../problem/problem.js';
import { type AugmentedSystem, pseudoRandomVector } from './augmented.js';
import { curveSystem } from './engine.js';
import type { CurveSettings } from './types.js';

export interface AugmentedCheck {
  /** Largest relative error of G_y δ against central differences over the directions tried. */
  jacobianError: number;
  /** Largest relative residual of the bordered solve, ‖[G_y; rowᵀ] z − rhs‖ / ‖rhs‖. */
  solveError: number;
  directions: number;
  passed: boolean;
}

function infNorm(x: ArrayLike<number>): number {
  let m = 0;
  for (let i = 0; i < x.length; i++) m = Math.max(m, Math.abs(x[i]));
  return m;
}

/**
 * Check the system at y (the system must have been initialised there or nearby: its borders are
 * used as they are). `tolerance` applies to both errors (default 1e-6).
 */
export function checkAugmentedSystem(sys: AugmentedSystem, y: Float64Array, options: { directions?: number; tolerance?: number; seed?: number } = {}): AugmentedCheck {
  const m = sys.size;
  const count = options.directions ?? 4;
  const tolerance = options.tolerance ?? 1e-6;
  const g0 = new Float64Array(m - 1);
  const gp = new Float64Array(m - 1);
  const gm = new Float64Array(m - 1);
  const jd = new Float64Array(m - 1);
  const yy = new Float64Array(m);
  let jacobianError = 0;
  let solveError = 0;
  for (let k = 0; k < count; k++) {
    const d = pseudoRandomVector(m, (options.seed ?? 7) + 101 * k);
    sys.evaluate(y, g0);
    sys.exact();
    sys.jacobianTimes(d, jd);
    // the bordered solve against the linearisation: row = the weighted direction, a random right-hand side
    const row = new Float64Array(m);
    for (let i = 0; i < m; i++) row[i] = sys.weights[i] * d[i];
    const rhs = pseudoRandomVector(m, (options.seed ?? 7) + 7 + 101 * k);
    const z = new Float64Array(m);
    sys.solve(row, rhs, z);
    const back = new Float64Array(m - 1);
    sys.jacobianTimes(z, back);
    let r = 0;
    for (let i = 0; i < m - 1; i++) r = Math.max(r, Math.abs(back[i] - rhs[i]));
    let last = 0;
    for (let i = 0; i < m; i++) last += row[i] * z[i];
    r = Math.max(r, Math.abs(last - rhs[m - 1]));
    // ‖A‖∞ from a few products with sign vectors (the row's part included)
    let normA = infNorm(row) * m;
    for (let s = 0; s < 3; s++) {
      const e = pseudoRandomVector(m, 991 + s).map((x) => (x < 0 ? -1 : 1));
      sys.jacobianTimes(e, back);
      normA = Math.max(normA, infNorm(back));
    }
    solveError = Math.max(solveError, r / (normA * infNorm(z) + infNorm(rhs)));
    // central differences of G along d, borders fixed, Richardson-extrapolated
    const h = (1e-4 * (1 + infNorm(y))) / infNorm(d);
    const central = (step: number, out: Float64Array): void => {
      for (let i = 0; i < m; i++) yy[i] = y[i] + step * d[i];
      sys.evaluate(yy, gp);
      for (let i = 0; i < m; i++) yy[i] = y[i] - step * d[i];
      sys.evaluate(yy, gm);
      for (let i = 0; i < m - 1; i++) out[i] = (gp[i] - gm[i]) / (2 * step);
    };
    const d1 = new Float64Array(m - 1);
    const d2 = new Float64Array(m - 1);
    // the better of two step sizes: a wrong derivative disagrees at both
    let best = Infinity;
    for (const step of [h, h / 16]) {
      central(step, d1);
      central(step / 2, d2);
      let err = 0;
      let size = 0;
      for (let i = 0; i < m - 1; i++) {
        const fd = (4 * d2[i] - d1[i]) / 3;
        err = Math.max(err, Math.abs(fd - jd[i]));
        size = Math.max(size, Math.abs(fd), Math.abs(jd[i]));
      }
      best = Math.min(best, err / Math.max(size, infNorm(g0), 1e-300));
    }
    jacobianError = Math.max(jacobianError, best);
  }
  // leave the system evaluated at y
  sys.evaluate(y, g0);
  return { jacobianError, solveError, directions: count, passed: jacobianError <= tolerance && solveError <= tolerance };
}

/**
 * The check of a curve case's system at its start state `u` (default: the model's initial guess)
 * and parameters, with borders set up there; `{error}` when the system cannot be built or set up
 * there (e.g. a branch-point curve from a state that is not uniform).
 */
export function checkCurveCase(problem: Problem, params: Params, settings: CurveSettings, u?: Float64Array): AugmentedCheck | { error: string } {
  const state = u ?? problem.initialGuess(params);
  let sys: AugmentedSystem;
  try {
    sys = curveSystem(problem, params, settings, state);
  } catch (e) {
    return { error: (e as Error).message };
  }
  try {
    const y = sys.fromState(state, params);
    sys.initialise(y);
    return checkAugmentedSystem(sys, y);
  } catch (e) {
    return { error: (e as Error).message };
  } finally {
    sys.dispose();
  }
}
