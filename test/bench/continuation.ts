/**
 * Continuation cost on large grids: seconds per pseudo-arclength step, factorisations and
 * solves per step, and where the time goes (assembly, factorisation, solves, the rest).
 */
import { performance } from 'node:perf_hooks';
import { models } from '../../discretisations/index.js';
import { Continuation } from '../../src/continuation/engine.js';
import { defaultSettings, type ContinuationSettings } from '../../src/continuation/types.js';
import { resolveParameters } from '../../src/problem/problem.js';
import { median, seconds, table } from './stats.js';

export interface StepBenchRow {
  case: string;
  unknowns: number;
  secondsPerStep: number;
  factorisationsPerStep: number;
  refactorisationsPerStep: number;
  solvesPerStep: number;
  peakRssMiB: number;
  steps: number;
}

export interface StepCase {
  name: string;
  model: string;
  options: Record<string, unknown>;
  parameters: Record<string, number>;
  settings: Partial<ContinuationSettings> & Pick<ContinuationSettings, 'parameter' | 'bounds'>;
}

/** Time `steps` continuation steps after the start point; repeat and take medians. */
export function benchSteps(c: StepCase, steps: number, repeats: number): StepBenchRow {
  const problem = models[c.model].factory(c.options as never);
  const params = resolveParameters(problem, c.parameters);
  const per: number[] = [];
  let counts = { f: 0, r: 0, s: 0 };
  for (let rep = 0; rep < repeats + 1; rep++) {
    const engine = new Continuation(problem, params, { ...defaultSettings, maxPoints: 10_000, ...c.settings });
    const events = engine.events();
    // start point (Newton + analysis) is not part of the per-step figure
    for (let e = events.next(); !e.done; e = events.next()) if (e.value.type === 'point') break;
    const before = engine.counters;
    const t0 = performance.now();
    let done = 0;
    for (let e = events.next(); !e.done && done < steps; e = events.next()) if (e.value.type === 'point') done++;
    const dt = (performance.now() - t0) / 1000;
    const after = engine.counters;
    engine.dispose();
    if (rep === 0) continue; // warm-up
    per.push(dt / done);
    counts = { f: (after.factorisations - before.factorisations) / done, r: (after.refactorisations - before.refactorisations) / done, s: (after.solves - before.solves) / done };
  }
  return {
    case: c.name,
    unknowns: problem.size,
    secondsPerStep: median(per),
    factorisationsPerStep: counts.f,
    refactorisationsPerStep: counts.r,
    solvesPerStep: counts.s,
    peakRssMiB: process.resourceUsage().maxRSS / 1024,
    steps,
  };
}

export function stepTable(rows: StepBenchRow[]): string {
  return table(
    ['case', 'unknowns', 's/step', 'factor/step', 'refactor/step', 'solves/step', 'peak RSS'],
    rows.map((r) => [r.case, r.unknowns, seconds(r.secondsPerStep), r.factorisationsPerStep.toFixed(2), r.refactorisationsPerStep.toFixed(2), r.solvesPerStep.toFixed(2), r.peakRssMiB.toFixed(0) + ' MiB']),
  );
}

export function bratu2d(m: number): StepCase {
  return {
    name: `2D Bratu ${m}x${m}`,
    model: 'bratu',
    options: { grid: { intervals: [m + 1, m + 1] } },
    parameters: { lambda: 1 },
    settings: { parameter: 'lambda', bounds: [0, 10], step: { initial: 0.3, min: 1e-8, max: 0.3 } },
  };
}
