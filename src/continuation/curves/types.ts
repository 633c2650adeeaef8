/**
 * Types of curve continuation: special points followed in two parameters.
 *
 * A curve run follows a special point of the steady states (a fold, or a branch point of a
 * uniform state) as one parameter (`parameter`) moves while another (`free`) adjusts to stay on
 * it. The curve engine (./engine.ts) works on any augmented system (./augmented.ts) and yields
 * the same kinds of events as the one-parameter engine: `branch-start` (a curve starts), `point`,
 * `special` (codimension-two points and ends), `branch-end` and `log`. Curve points and curve
 * special points carry the free parameter's value and the test functions besides what branch
 * points carry, so the run layer writes them with the same machinery.
 */
import type { ContinuationPoint, MonitorStop, NewtonSettings, SpecialPointBase, StepSettings, StopReason } from '../types.js';

/** What a curve follows. */
export type CurveKind = 'fold' | 'branch-point' | 'hopf';
export const curveKinds: readonly CurveKind[] = ['fold', 'branch-point', 'hopf'];

/** `fold curve`, `branch-point curve`, `Hopf curve` (words for summaries and legends). */
export function curveName(kind: string): string {
  return kind === 'hopf' ? 'Hopf curve' : `${kind} curve`;
}

/** Special points found on curves, in plain words (the trade's names where it has them). */
export type CurveSpecialKind =
  /** fold curves: the quadratic normal-form coefficient ⟨w, F_uu(v, v)⟩ vanishes */
  | 'cusp'
  /** fold curves: ⟨w, M v⟩ = 0, the zero eigenvalue becomes double (a Jordan block) */
  | 'bogdanov-takens'
  /** fold curves: a second, independent null vector — the fold curve crosses a curve of branch points */
  | 'fold-branch-point'
  /** branch-point curves: another mode's eigenvalue reaches zero, and that mode takes over */
  | 'mode-change'
  /** branch-point curves: another mode's curve crosses, its eigenvalue returning to the stable side (the followed mode stays) */
  | 'mode-crossing'
  /** Hopf curves: a real eigenvalue crosses zero while the pair ±iω stays on the imaginary axis */
  | 'zero-hopf'
  /** Hopf curves: the first Lyapunov coefficient changes sign (the Hopf bifurcation turns from super- to subcritical) */
  | 'bautin'
  /** Hopf curves: a second complex pair reaches the imaginary axis */
  | 'double-hopf';

export const curveSpecialKinds: readonly CurveSpecialKind[] = ['cusp', 'bogdanov-takens', 'fold-branch-point', 'mode-change', 'mode-crossing', 'zero-hopf', 'bautin', 'double-hopf'];

export interface CurveSettings {
  follow: CurveKind;
  /** The parameter that moves along the curve (its bounds end the curve). */
  parameter: string;
  /** The parameter that adjusts to stay on the curve. */
  free: string;
  bounds: [number, number];
  /** Bounds of the free parameter (±Infinity: none); they end the curve, and the search for the first point. */
  freeBounds: [number, number];
  /** Which way `parameter` moves from the first point (`both`: one curve each way). */
  direction: 'increase' | 'decrease' | 'both';
  /** Which way `free` moves from the start state when searching for the first fold or branch point. */
  freeDirection: 'increase' | 'decrease';
  /** Hopf curves: rightmost eigenvalues per point, for the double-Hopf test (0: no such test). */
  eigenvalues: number;
  step: StepSettings;
  maxPoints: number;
  stopWhen: MonitorStop[];
  newton: NewtonSettings;
  maxTurnDegrees: number;
  /** Detect and locate codimension-two points (cusp, Bogdanov–Takens, crossings, mode changes). */
  locate: boolean;
  /** Arclength tolerance when locating a codimension-two point (parameters move at most this much). */
  locateTolerance: number;
  /**
   * The search for the first point (when the case does not start at one): steps and point limit
   * of the one-parameter continuation in the free parameter (the branch's defaults: small steps,
   * so that no two branch points fall into one step).
   */
  search: { step: StepSettings; maxPoints: number };
}

export const defaultCurveSettings: Omit<CurveSettings, 'follow' | 'parameter' | 'free' | 'bounds'> = {
  freeBounds: [-Infinity, Infinity],
  direction: 'increase',
  freeDirection: 'increase',
  eigenvalues: 0,
  step: { initial: 0.05, min: 1e-8, max: 0.5 },
  maxPoints: 500,
  stopWhen: [],
  newton: { residualTolerance: 1e-9, stepTolerance: 1e-9, maxIterations: 10 },
  maxTurnDegrees: 30,
  locate: true,
  locateTolerance: 1e-11,
  search: { step: { initial: 0.05, min: 1e-8, max: 0.5 }, maxPoints: 2000 },
};

/**
 * Why a curve stopped: the branch reasons, plus the free parameter's bounds, a mode change, and a
 * Bogdanov–Takens point reached by a Hopf curve (its frequency is zero there: it ends on a fold curve).
 */
export type CurveStopReason = StopReason | CurveOnlyStopReason;
export type CurveOnlyStopReason = 'free-bound' | 'mode-change' | 'bogdanov-takens';

export const curveStopText: Record<CurveOnlyStopReason, string> = {
  'free-bound': 'the free parameter reached a bound',
  'mode-change': 'the critical mode changed',
  'bogdanov-takens': 'the Hopf curve reached a Bogdanov–Takens point (zero frequency) on a fold curve',
};

/** The words of a curve-only stop reason, undefined for the reasons branches share. */
export function curveOnlyStopText(reason: string): string | undefined {
  return Object.prototype.hasOwnProperty.call(curveStopText, reason) ? curveStopText[reason as CurveOnlyStopReason] : undefined;
}

/** A curve's identity and origin (the branch-start event of a curve run carries this). */
export interface CurveInfo {
  id: number;
  depth: number;
  follow: CurveKind;
  origin:
    /** `at`: a Hopf curve leaving a Bogdanov–Takens point (ω = 0), one way only. */
    | { kind: 'start'; at?: 'bogdanov-takens' }
    /** Born where the critical mode of curve `branch` changed, at `value` of the parameter. */
    | { kind: 'mode-change'; branch: number; value: number };
  /** Which way the parameter moves at the curve's start. */
  direction: 'increase' | 'decrease';
  /** The critical mode's wavenumbers per axis at the curve's start (branch-point curves). */
  mode?: number[];
}

/** One accepted point on a curve. `parameter` is the moving parameter's value. */
export interface CurvePoint extends ContinuationPoint {
  /** The free parameter's value. */
  free: number;
  /** Test functions by column name (see AugmentedSystem.tests). */
  tests: Record<string, number>;
  /** The critical mode's wavenumbers per axis (branch-point curves). */
  mode?: number[];
}

export interface CurveSpecialPoint extends SpecialPointBase {
  kind: CurveSpecialKind;
  /** The free parameter's value at the point. */
  free: number;
  /** Whether the location converged to its tolerance (else the best estimate). */
  located: boolean;
  /** Test functions at the point. */
  tests: Record<string, number>;
  /** mode-change: the mode before and after; branch-point curves: the critical mode. */
  mode?: number[];
  newMode?: number[];
  /** mode-change: the curve that goes on with the new mode. */
  newBranches?: number[];
  note?: string;
}

export interface CurveEndPoint extends SpecialPointBase {
  kind: 'end';
  free: number;
  reason: CurveStopReason;
}

export type CurveSpecial = CurveSpecialPoint | CurveEndPoint;

export type CurveEvent =
  | { type: 'branch-start'; branch: CurveInfo }
  | { type: 'point'; point: CurvePoint }
  | { type: 'special'; point: CurveSpecial }
  | { type: 'branch-end'; branch: number; reason: CurveStopReason; message: string }
  | { type: 'log'; level: 'info' | 'warning'; message: string };
