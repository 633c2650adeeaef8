/** Helpers for the time-integration tests: run an integration in memory and collect its events. */
import { TimeIntegration, type IntegrationOptions } from '../../src/dynamics/integrator.js';
import { type DynamicsEvent, type Outcome, type StepRecord, type TimeSettings, defaultTimeSettings } from '../../src/dynamics/types.js';
import type { Params, Problem } from '../../src/problem/problem.js';

export interface Integrated {
  steps: StepRecord[];
  snapshots: { time: number; u: Float64Array }[];
  logs: string[];
  outcome: Outcome;
  final: Float64Array;
  counters: TimeIntegration['counters'];
}

/** Integrate to the end; `onStep` may inspect every accepted step. */
export function integrate(problem: Problem, p: Params, settings: Partial<TimeSettings> & { end: number }, options: IntegrationOptions = {}, onStep?: (r: StepRecord) => void): Integrated {
  const ti = new TimeIntegration(problem, p, { ...defaultTimeSettings, snapshots: 'none', ...settings }, options);
  const steps: StepRecord[] = [];
  const snapshots: { time: number; u: Float64Array }[] = [];
  const logs: string[] = [];
  let end: Extract<DynamicsEvent, { type: 'end' }> | undefined;
  try {
    for (const e of ti.events()) {
      if (e.type === 'start' || e.type === 'step') {
        steps.push(e.record);
        onStep?.(e.record);
      } else if (e.type === 'snapshot') snapshots.push({ time: e.time, u: e.u });
      else if (e.type === 'log') logs.push(e.message);
      else if (e.type === 'end') end = e;
    }
    return { steps, snapshots, logs, outcome: end!.outcome, final: end!.u, counters: ti.counters };
  } finally {
    ti.dispose();
  }
}

/** max_i |a_i − b_i|. */
export function maxDifference(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let m = 0;
  for (let i = 0; i < a.length; i++) m = Math.max(m, Math.abs(a[i] - b[i]));
  return m;
}
