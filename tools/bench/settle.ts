/**
 * Time integration to a steady state on a large grid: 2D Gray–Scott on m×m intervals (two fields),
 * the bundled gel-spots scenario (a drop in a no-flux tile growing into spots), integrated until
 * steady. The figure that matters is how rarely the iteration matrix is factorised: numeric
 * factorisations (fresh pivots and kept pivots) per accepted step over the whole run, and after
 * the transient — from the last step-size cut on, when the steps only grow or hold while the state
 * settles. The Newton polish of steady states (and the eigenvalues that tell an unstable one,
 * passed on the way, from the final one) is counted apart.
 *
 * Runs in its own process (worker.ts) so that peak resident memory belongs to it.
 */
import { performance } from 'node:perf_hooks';
import { initialStateBuilder, models } from '../../discretisations/index.js';
import { TimeIntegration } from '../../src/dynamics/integrator.js';
import { defaultTimeSettings, outcomeText } from '../../src/dynamics/types.js';
import { resolveParameters } from '../../src/problem/problem.js';
import { table } from './stats.js';

export interface SettleBenchRow {
  case: string;
  unknowns: number;
  outcome: string;
  steps: number;
  rejected: number;
  factorisations: number;
  factorisationsPerStep: number;
  /** Steps after the last step-size cut, and the factorisations per step over them. */
  settlingSteps: number;
  settlingFactorisationsPerStep: number;
  newtonIterationsPerStep: number;
  secondsPerStep: number;
  seconds: number;
  polishFactorisations: number;
  peakRssMiB: number;
}

export function benchSettle(m: number): SettleBenchRow {
  const L = 0.3;
  const problem = models['gray-scott'].factory({ grid: { intervals: [m, m], length: [L, L] }, boundary: 'neumann' });
  const p = resolveParameters(problem, { F: 0.04, k: 0.064 });
  const bump = `exp(-((x-${L / 2})^2 + (y-${L / 2})^2)/0.0025)`;
  const u0 = initialStateBuilder(problem, { values: { u: `1 - 0.5*${bump}`, v: `0.25*${bump}` }, noise: { amplitude: 1e-3, seed: 1 } }).build(p);
  // with eigenvalues, steady states passed on the way that are unstable (a spot about to split) do not end the run
  const ti = new TimeIntegration(problem, p, { ...defaultTimeSettings, end: 50_000, snapshots: 'none', stability: { eigenvalues: 4 } }, { start: u0 });
  const sizes: number[] = [];
  const numeric: number[] = [];
  let outcome = '';
  const t0 = performance.now();
  for (const e of ti.events()) {
    if (e.type === 'step') {
      sizes.push(e.record.stepSize);
      const c = ti.counters;
      numeric.push(c.factorisations + c.refactorisations);
    } else if (e.type === 'end') outcome = `${outcomeText(e.outcome)}; max v = ${e.monitors['max:v'].toFixed(4)}, L2 norm of v = ${e.monitors['l2-norm:v'].toFixed(4)}`;
  }
  const seconds = (performance.now() - t0) / 1000;
  const c = ti.counters;
  ti.dispose();
  // the transient ends at the last step that was shorter than the one before it (the last step,
  // shortened to land on the end time, aside)
  let cut = 0;
  for (let k = 1; k < sizes.length - 1; k++) if (sizes[k] < sizes[k - 1] * (1 - 1e-12)) cut = k;
  const settling = sizes.length - 1 - cut;
  const total = c.factorisations + c.refactorisations;
  return {
    case: `2D Gray–Scott ${m}x${m} (gel tile, no flux)`,
    unknowns: problem.size,
    outcome,
    steps: c.steps,
    rejected: c.rejected,
    factorisations: total,
    factorisationsPerStep: total / c.steps,
    settlingSteps: settling,
    settlingFactorisationsPerStep: settling > 0 ? (numeric[numeric.length - 1] - numeric[cut]) / settling : NaN,
    newtonIterationsPerStep: c.newtonIterations / c.steps,
    secondsPerStep: seconds / c.steps,
    seconds,
    polishFactorisations: c.polish.factorisations,
    peakRssMiB: process.resourceUsage().maxRSS / 1024,
  };
}

export function settleTable(rows: SettleBenchRow[]): string {
  return table(
    ['case', 'unknowns', 'steps (rejected)', 'factorisations/step', 'after the transient', 'Newton its/step', 's/step', 'total', 'peak RSS'],
    rows.map((r) => [
      r.case,
      r.unknowns,
      `${r.steps} (${r.rejected})`,
      r.factorisationsPerStep.toFixed(3),
      `${r.settlingFactorisationsPerStep.toFixed(3)} over ${r.settlingSteps} steps`,
      r.newtonIterationsPerStep.toFixed(2),
      r.secondsPerStep.toFixed(3),
      r.seconds.toFixed(1) + ' s',
      r.peakRssMiB.toFixed(0) + ' MiB',
    ]),
  );
}
