/**
 * Types shared by the continuation engine and its callers (the run layer, tests).
 *
 * The engine does no I/O: it takes a Problem, parameter values and settings, and yields events
 * (`branch-start`, `point`, `special`, `branch-end`, `log`). Its whole state is a plain object
 * (`EngineState`) that the run layer can checkpoint and hand back to resume.
 */

export interface StepSettings {
  /** First step (weighted arclength, or parameter increment for natural continuation). */
  initial: number;
  min: number;
  max: number;
}

export interface NewtonSettings {
  /** Converged when the weighted (discrete L2) residual norm is below this... */
  residualTolerance: number;
  /** ...and the weighted norm of the last Newton update is below this (relative to 1 + ‖x‖). */
  stepTolerance: number;
  maxIterations: number;
}

export interface MonitorStop {
  monitor: string;
  /** Stop when the monitor rises above this value. */
  above?: number;
  /** Stop when the monitor falls below this value. */
  below?: number;
}

export interface ContinuationSettings {
  /** Name of the continuation parameter. */
  parameter: string;
  /** The branch stops at these parameter values [low, high]. */
  bounds: [number, number];
  /** Which way the parameter moves at the start. */
  direction: 'increase' | 'decrease';
  /** Pseudo-arclength (passes folds) or natural-parameter continuation (stops at the first fold). */
  method: 'arclength' | 'natural';
  step: StepSettings;
  /** Point limit per branch. */
  maxPoints: number;
  stopWhen: MonitorStop[];
  /** Follow the branches that cross at branch points, recursively up to this depth (0: none). */
  branchSwitching: { depth: number };
  newton: NewtonSettings;
  /** Largest accepted angle (degrees) between successive tangents; sharper turns are retried with a smaller step. */
  maxTurnDegrees: number;
  /** Locate folds (Newton on a minimally augmented system) and branch points (bisection on the determinant). */
  locate: { folds: boolean; branchPoints: boolean };
  /** Tolerance on the parameter when locating a fold. */
  foldTolerance: number;
  /** Tolerance on the parameter when locating a branch point. */
  branchPointTolerance: number;
  /** Rightmost eigenvalues per point (0: no stability analysis). */
  stability: { eigenvalues: number };
  /** Tolerance on the parameter when locating a Hopf point. */
  hopfTolerance: number;
  /** Sparse LU for every factorisation of the run: 'auto' (default: chosen from the pattern), 'klu' or 'superlu'. */
  sparseLu?: 'auto' | 'klu' | 'superlu';
}

export const defaultSettings: Omit<ContinuationSettings, 'parameter' | 'bounds'> = {
  direction: 'increase',
  method: 'arclength',
  step: { initial: 0.05, min: 1e-6, max: 0.5 },
  maxPoints: 500,
  stopWhen: [],
  branchSwitching: { depth: 1 },
  newton: { residualTolerance: 1e-9, stepTolerance: 1e-9, maxIterations: 10 },
  maxTurnDegrees: 30,
  locate: { folds: true, branchPoints: true },
  foldTolerance: 1e-10,
  branchPointTolerance: 1e-8,
  stability: { eigenvalues: 0 },
  hopfTolerance: 1e-8,
  sparseLu: 'auto',
};

/** Stability of one point, from its rightmost eigenvalues. */
export interface PointStability {
  /** true / false when the search certifies it; null when the rightmost eigenvalue was not certified. */
  stable: boolean | null;
  /** Eigenvalues with positive real part (a lower bound when `complete` is false). */
  unstableCount: number;
  /** Of those, how many are complex (members of conjugate pairs). */
  unstableComplex: number;
  leadingReal: number;
  leadingImag: number;
  /** The eigenvalues found, rightmost first. */
  eigenvalues: { re: number; im: number; residual: number }[];
  /** Whether every eigenvalue with real part ≥ 0 is certified to be among those found. */
  complete: boolean;
  /**
   * Every eigenvalue found right of the imaginary axis (also beyond the listed ones) and the
   * first few found left of it: matched between neighbouring points to tell pairs crossing the
   * axis (crossings.ts) when more eigenvalues are unstable than are listed.
   */
  nearAxis?: { re: number; im: number }[];
  /** The search's own account of the region searched. */
  searched: string;
}

/** Why a branch stopped. */
export type StopReason =
  | 'parameter-bound'
  | 'point-limit'
  | 'monitor-bound'
  | 'minimum-step'
  | 'closed-loop'
  | 'fold-not-passed'
  | 'newton-failed'
  | 'non-finite'
  | 'stopped';

export const stopReasonText: Record<StopReason, string> = {
  'parameter-bound': 'reached a parameter bound',
  'point-limit': 'reached the point limit',
  'monitor-bound': 'a monitor crossed its stop value',
  'minimum-step': 'no convergence even at the minimum step',
  'closed-loop': 'the branch closed on itself',
  'fold-not-passed': 'natural-parameter continuation cannot pass the fold here',
  'newton-failed': 'Newton did not converge',
  'non-finite': 'non-finite values appeared',
  stopped: 'stopped on request',
};

/** One accepted point on a branch. */
export interface ContinuationPoint {
  branch: number;
  /** Point number on the branch, from 0. */
  index: number;
  arclength: number;
  /** Value of the continuation parameter. */
  parameter: number;
  /** State vector (grid unknowns then extra unknowns); owned by the receiver. */
  u: Float64Array;
  /** Monitor values by name. */
  monitors: Record<string, number>;
  /** Step used to reach this point (0 for the first point). */
  step: number;
  newtonIterations: number;
  /** Weighted residual norm at the point. */
  residual: number;
  /** Parameter component of the unit tangent (weighted norm). */
  tangentParameter: number;
  /** Sign of the determinant of the bordered continuation matrix (0 when not computed). */
  determinantSign: number;
  /** Stability from the rightmost eigenvalues (absent when stability analysis is off). */
  stability?: PointStability;
  /**
   * Set when the unstable count changed over the step that reached this point and no fold,
   * branch point or Hopf point explains it even at the minimum step, e.g. "the unstable count
   * changed from 1 to 2".
   */
  unexplained?: string;
}

export type BranchPointType = 'pitchfork' | 'transcritical' | 'unknown';
export type Criticality = 'supercritical' | 'subcritical' | 'undetermined';

export interface SpecialPointBase {
  branch: number;
  /** Continuation parameter value at the located point. */
  value: number;
  arclength: number;
  u: Float64Array;
  monitors: Record<string, number>;
  /** Weighted residual norm at the located point. */
  residual: number;
}

export interface FoldPoint extends SpecialPointBase {
  kind: 'fold';
  /** Whether the location converged to the tolerance (else `value` is the best estimate). */
  located: boolean;
  /** Which way the branch turns: the parameter reaches a maximum or a minimum at the fold. */
  turn: 'maximum' | 'minimum';
}

export interface BranchPointEvent extends SpecialPointBase {
  kind: 'branch-point';
  located: boolean;
  /** Number of real eigenvalues crossing together (1 for a simple branch point). */
  multiplicity: number;
  type: BranchPointType;
  /** For pitchforks: does the new branch leave towards the side where the old branch is unstable? */
  criticality: Criticality;
  /** Which way the parameter moves along the new branch from the point. */
  newBranchDirection?: 'increase' | 'decrease' | 'both';
  /** Ids of branches queued from this point (empty when not followed). */
  newBranches: number[];
  /** Why no branch was followed, when none was. */
  note?: string;
}

export interface HopfPoint extends SpecialPointBase {
  kind: 'hopf';
  located: boolean;
  /** Angular frequency ω of the crossing pair ±iω; the period of the oscillation born there is 2π/ω. */
  frequency: number;
  period: number;
  /** Whether the pair moves into the right half-plane (`destabilising`) along the branch direction. */
  crossing: 'destabilising' | 'stabilising';
  /**
   * The first Lyapunov coefficient l₁ (critical eigenvector normalised to ⟨q, q⟩ = 1 in the
   * weighted inner product; NaN when undetermined) and what its sign says (./hopf/lyapunov.ts).
   */
  lyapunov?: number;
  criticality?: 'supercritical' | 'subcritical' | 'undetermined';
  /** Why the criticality is undetermined, in words. */
  criticalityNote?: string;
}

export interface EndPoint extends SpecialPointBase {
  kind: 'end';
  reason: StopReason;
}

export type SpecialPoint = FoldPoint | BranchPointEvent | HopfPoint | EndPoint;

export interface BranchInfo {
  id: number;
  /** Branch switching depth: 0 for the first branch. */
  depth: number;
  /** Where the branch came from. */
  origin: { kind: 'start' } | { kind: 'branch-point'; branch: number; value: number };
}

export type EngineEvent =
  | { type: 'branch-start'; branch: BranchInfo }
  | { type: 'point'; point: ContinuationPoint }
  | { type: 'special'; point: SpecialPoint }
  | { type: 'branch-end'; branch: number; reason: StopReason; message: string }
  | { type: 'log'; level: 'info' | 'warning'; message: string };
