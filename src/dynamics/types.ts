/**
 * Types of the time integration to a steady state (src/dynamics/): its settings, the events it
 * yields to the run layer, and how it ends. No I/O here or anywhere in src/dynamics/.
 */
import type { SteadyStability } from './stability.js';

/** When to hand out states for snapshot files: never, at 1, 2, 5 × 10^k time units, or every T. */
export type SnapshotSchedule = 'none' | 'auto' | { every: number };

export interface TimeSettings {
  /** Integrate at most to this time (from t = 0). */
  end: number;
  /** At most this many accepted steps. */
  maxSteps: number;
  /** Local error tolerances per step: |e_i| ≤ absolute + relative·|u_i| in the weighted RMS norm. */
  relativeTolerance: number;
  absoluteTolerance: number;
  /** First step (default: from the size of F at the start). */
  initialStep?: number;
  /** Largest step (default: no limit but the time left). */
  maxStep?: number;
  /**
   * Steady when the scaled residual ‖D⁻¹F‖_w (D: the Jacobian's largest entry per row, at least
   * 1, at the start) falls below this; the state is then polished by Newton's method.
   */
  steadyTolerance: number;
  /** Newton polish of the steady state: scaled residual tolerance and iteration limit. */
  newton: { tolerance: number; maxIterations: number };
  /** Blown up when max |u| exceeds this. */
  blowUp: number;
  snapshots: SnapshotSchedule;
  /** Tests: constant steps of this size, no error control (order studies). */
  fixedStep?: number;
  /**
   * Rightmost eigenvalues of a steady state (0 or absent: none). With them, a steady state found
   * unstable is passed by (the integration goes on until the state leaves it).
   */
  stability?: { eigenvalues: number };
}

export const defaultTimeSettings: Omit<TimeSettings, 'end'> = {
  maxSteps: 100_000,
  relativeTolerance: 1e-4,
  absoluteTolerance: 1e-6,
  steadyTolerance: 1e-6,
  newton: { tolerance: 1e-9, maxIterations: 10 },
  blowUp: 1e8,
  snapshots: 'auto',
};

/** How an integration ended. */
export type Outcome =
  | {
      kind: 'steady';
      time: number;
      /** Scaled residual of the integrated state when it was judged steady, and after the polish. */
      integratedResidual: number;
      residual: number;
      /** Newton iterations of the polish. */
      newtonIterations: number;
      /** Weighted RMS distance between the integrated and the polished state, in tolerance units. */
      distance: number;
      /** Its stability, when eigenvalues were asked for (unstable only when the state never left it). */
      stability?: SteadyStability;
    }
  | {
      kind: 'oscillating';
      time: number;
      period: number;
      /** Amplitude (max − min over a period) per oscillating monitor. */
      amplitudes: Record<string, number>;
      monitor: string;
      residual: number;
    }
  | {
      kind: 'drifting';
      time: number;
      /** Why the integration stopped: the time limit or the step limit. */
      limit: 'time' | 'steps';
      residual: number;
      /** The time the residual needs to fall (or rise) tenfold, at the recent rate. */
      timePerDecade?: number;
      falling?: boolean;
      /** A damped or growing oscillation seen at the end. */
      oscillation?: { period: number; amplitudeRatio: number; monitor: string };
    }
  | {
      kind: 'blown-up';
      time: number;
      max: number;
      limit: number;
      /** The step size collapsed while the state grew (a blow-up in finite time) before max |u| reached the limit. */
      collapsed?: boolean;
    }
  | { kind: 'failed'; time: number; message: string };

export type OutcomeKind = Outcome['kind'];

/** What an accepted step reports. */
export interface StepRecord {
  step: number;
  time: number;
  /** The step just taken (0 for the start). */
  stepSize: number;
  u: Float64Array;
  monitors: Record<string, number>;
  /** Scaled residual ‖D⁻¹F(u)‖_w. */
  residual: number;
  newtonIterations: number;
  /** Whether the iteration matrix was factorised for this step. */
  factorised: boolean;
}

export type DynamicsEvent =
  | { type: 'start'; record: StepRecord }
  | { type: 'step'; record: StepRecord }
  | { type: 'snapshot'; time: number; u: Float64Array }
  | { type: 'log'; level: 'info' | 'warning'; message: string }
  | { type: 'end'; outcome: Outcome; time: number; u: Float64Array; monitors: Record<string, number> };

/** Counts and times since the integration was created. */
export interface DynamicsCounters {
  steps: number;
  rejected: number;
  newtonIterations: number;
  newtonFailures: number;
  residuals: number;
  jacobians: number;
  /** Fresh factorisations and refactorisations (kept pivots) of the iteration matrix. */
  factorisations: number;
  refactorisations: number;
  solves: number;
  /** The Newton polish of steady states (its factorisations are not in the counts above). */
  polish: { attempts: number; iterations: number; factorisations: number };
}

/** An outcome in one sentence. */
export function outcomeText(o: Outcome): string {
  const t = (x: number) => Number(x.toPrecision(6)).toString();
  switch (o.kind) {
    case 'steady':
      return (
        `steady state reached at t = ${t(o.time)} (residual ${o.integratedResidual.toExponential(2)}, polished by Newton to ${o.residual.toExponential(2)})` +
        (o.stability?.stable === false ? ': an unstable one, which the state did not leave by the limit (a symmetric state cannot; noise on the initial state lets it)' : '')
      );
    case 'oscillating':
      return `oscillating with period ${t(o.period)} (read from ${o.monitor}; amplitude ${t(o.amplitudes[o.monitor] ?? NaN)}) at t = ${t(o.time)}: no steady state reached`;
    case 'drifting': {
      const why = o.limit === 'time' ? `at the time limit t = ${t(o.time)}` : `at the step limit (t = ${t(o.time)})`;
      let more = '';
      if (o.oscillation) {
        const r = o.oscillation.amplitudeRatio;
        more = `; oscillating with period ${t(o.oscillation.period)}, amplitude ${r < 1 ? 'shrinking' : 'growing'} by ${t(Math.abs(1 - r) * 100)}% per period`;
      } else if (o.timePerDecade !== undefined) {
        more = `; the residual ${o.falling ? 'falls' : 'rises'} tenfold every ${t(o.timePerDecade)} time units`;
      }
      return `still changing ${why} (residual ${o.residual.toExponential(2)}${more})`;
    }
    case 'blown-up':
      return o.collapsed
        ? `blown up at t = ${t(o.time)}: the state grows without bound (max |u| = ${o.max.toExponential(3)}, and the step size collapsed)`
        : `blown up at t = ${t(o.time)}: max |u| = ${o.max.toExponential(3)} passed ${o.limit.toExponential(1)}`;
    case 'failed':
      return `failed at t = ${t(o.time)}: ${o.message}`;
  }
}
