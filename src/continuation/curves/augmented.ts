/**
 * The contract between the curve engine (./engine.ts) and an augmented system: the equations
 * whose solutions form a curve of special points in two parameters.
 *
 * Unknowns y (length `size`): the system's own state part first, then the two parameters at
 * `parameterIndex` (the one that moves) and `freeIndex` (the one that adjusts), then any extra
 * scalars a system needs (e.g. a frequency). Equations G(y) = 0: `size − 1` of them, so the
 * solutions form a curve, followed by pseudo-arclength continuation in the weighted norm
 * ‖y‖² = Σ weights_i y_i² (quadrature weights on grid values, 1 on scalars).
 *
 * A system owns its linear algebra. `evaluate` computes G at y exactly; `solve` then solves a
 * linearisation bordered by one more row,
 *
 *     [ G_y(y) ] z = rhs,
 *     [ rowᵀ   ]
 *
 * which serves Newton corrections (row: the weighted tangent, or a unit vector fixing a
 * parameter) and tangents (rhs: the last unit vector). Between `exact` calls the linearisation
 * may be an earlier point's (chord iterations: the corrector calls `exact` when they contract
 * slowly, the engine at every converged point before its tangent). Test functions are evaluated at the last
 * evaluated point; a sign change between two accepted points marks a special point, which the
 * engine locates along the curve.
 *
 * Systems keep border vectors (approximate null vectors) fixed while a point is corrected and
 * refresh them from the converged point (`adopt`), so the test functions keep their sign
 * convention from point to point. Everything a resumed run needs (borders, scales) is plain
 * Float64Arrays (`saveState` / `restoreState`).
 */
import type { Params } from '../../problem/problem.js';
import type { StateResidual } from './state-residual.js';
import type { CurveKind, CurveSpecialKind } from './types.js';

export interface TestFunction {
  /** CSV column name, full lowercase words. */
  readonly name: string;
  /** The special point a zero of this function marks. */
  readonly kind: CurveSpecialKind;
  /**
   * `value`: a smooth function crossing zero; `determinant`: a determinant's sign, whose
   * logarithmic magnitude (with borders held fixed) makes a smooth function for location.
   */
  readonly type: 'value' | 'determinant';
  readonly description: string;
  /** The curve ends at a zero of this function (a Hopf curve at a Bogdanov–Takens point). */
  readonly ends?: boolean;
}

export interface TestValue {
  /** The function's value (`determinant`: its sign, ±1). */
  value: number;
  /** `determinant`: log |det|. */
  logAbs?: number;
}

/** Linear-algebra counts and time per phase (for the benchmark and run.json). */
export interface SystemCounters {
  factorisations: number;
  refactorisations: number;
  solves: number;
  assemblies: number;
  seconds: { residual: number; assembly: number; factorisation: number; solves: number; derivatives: number };
}

export interface AugmentedSystem {
  readonly kind: CurveKind;
  readonly size: number;
  readonly weights: Float64Array;
  readonly parameterIndex: number;
  readonly freeIndex: number;
  readonly testFunctions: readonly TestFunction[];

  /** The full state vector u of the Problem at y. */
  state(y: Float64Array): Float64Array;
  /** Parameter values at y. */
  params(y: Float64Array): Params;
  /** y from a state and parameter values (checks that the state fits the system: e.g. uniform). */
  fromState(u: Float64Array, p: Params): Float64Array;

  /** Set up borders at a first point (no earlier null vectors to start from). */
  initialise(y: Float64Array): void;
  /** Freeze the residual scaling at y (once per curve; part of the saved state). */
  setScale(y: Float64Array): void;

  /**
   * G(y) into `out` (length size − 1); returns a scaled residual norm (rows of F by frozen row
   * scales, the extra equations by theirs) that measures the corrector's progress — not its
   * convergence, which `stateResidual` and `extraResidual` decide (not finite when G is not).
   * Throws SparseLUError when a bordered matrix is singular.
   */
  evaluate(y: Float64Array, out: Float64Array): number;
  /** The true residual ‖F‖_w of the last evaluated point's state and its bound (./state-residual.ts). */
  readonly stateResidual: StateResidual;
  /** The scaled norm of the extra equations (g, h) at the last evaluated point. */
  extraResidual(): number;
  /** The rounding level of the last evaluated extra equations in the measure `extraResidual` returns (0 when negligible). */
  residualFloor?(): number;
  /**
   * Solve a linearisation bordered by `row` (weighted already): the one at the last evaluated
   * point after `exact`, otherwise possibly an earlier one (chord iterations).
   */
  solve(row: Float64Array, rhs: Float64Array, out: Float64Array): void;
  /** Make `solve` use the exact linearisation at the last evaluated point (factoring there). */
  exact(): void;
  /** G_y δ at the last evaluated point (what `solve` inverts; derivative checks compare it with differences). */
  jacobianTimes(delta: Float64Array, out: Float64Array): void;
  /**
   * Test functions at the last evaluated point (aligned with `testFunctions`). `determinant`
   * functions come from the last factorisation, which may lie a Newton step away unless `exact`
   * (then the system factors at the point): they only flag a sign change, confirmed exactly.
   */
  tests(exact?: boolean): TestValue[];
  /** The converged point is accepted: refresh borders from its null vectors. */
  adopt(): void;

  /**
   * A direction to orient the first tangent along, where the continuation parameter cannot say
   * (a Hopf curve leaving a Bogdanov–Takens point along ω); the curve then goes one way only.
   */
  startDirection?(y: Float64Array): Float64Array | undefined;

  /** The critical mode's wavenumbers at the last evaluated point, when the system knows them. */
  mode?(): number[] | undefined;
  /**
   * At a point where a second mode's eigenvalue reached zero (a located `mode-change`): switch
   * the borders to that mode; returns its wavenumbers, the direction (any orientation) of the
   * new mode's curve through y, and the rate of change of the new mode's eigenvalue along
   * `along` (positive: it becomes unstable that way). The system then follows the new mode
   * (`restoreState` undoes the switch).
   */
  switchMode?(y: Float64Array, along: Float64Array): { mode: number[] | undefined; direction: Float64Array; growth: number } | undefined;

  /** Borders and scales, for checkpoints. */
  saveState(): Float64Array[];
  restoreState(saved: readonly Float64Array[]): void;

  /** Factor with fresh pivots at the next evaluation (sync points, exact resume). */
  restart(): void;
  readonly counters: SystemCounters;
  dispose(): void;
}

export function emptyCounters(): SystemCounters {
  return { factorisations: 0, refactorisations: 0, solves: 0, assemblies: 0, seconds: { residual: 0, assembly: 0, factorisation: 0, solves: 0, derivatives: 0 } };
}

/**
 * Solve a small dense system a x = b (row-major arrays) by Gaussian elimination with partial
 * pivoting; returns null when a pivot is zero or the result is not finite.
 */
export function solveSmall(a: number[][], b: number[]): number[] | null {
  const m = b.length;
  const A = a.map((r) => r.slice());
  const x = b.slice();
  for (let k = 0; k < m; k++) {
    let p = k;
    for (let i = k + 1; i < m; i++) if (Math.abs(A[i][k]) > Math.abs(A[p][k])) p = i;
    if (!(Math.abs(A[p][k]) > 0)) return null;
    if (p !== k) {
      [A[p], A[k]] = [A[k], A[p]];
      [x[p], x[k]] = [x[k], x[p]];
    }
    for (let i = k + 1; i < m; i++) {
      const f = A[i][k] / A[k][k];
      if (f === 0) continue;
      for (let j = k; j < m; j++) A[i][j] -= f * A[k][j];
      x[i] -= f * x[k];
    }
  }
  for (let k = m - 1; k >= 0; k--) {
    let s = x[k];
    for (let j = k + 1; j < m; j++) s -= A[k][j] * x[j];
    x[k] = s / A[k][k];
  }
  return x.every(Number.isFinite) ? x : null;
}

/**
 * A fixed, smooth-free pseudo-random vector (deterministic: resumed runs repeat the same
 * numbers): entries in [−1, 1) from a linear congruential generator seeded by `seed`.
 */
export function pseudoRandomVector(n: number, seed: number): Float64Array {
  const out = new Float64Array(n);
  let s = (seed >>> 0) || 1;
  for (let i = 0; i < n; i++) {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    out[i] = s / 2147483648 - 1;
  }
  return out;
}
