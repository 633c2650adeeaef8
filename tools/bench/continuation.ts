/**
 * Continuation cost on large grids: seconds per pseudo-arclength step (with and without the
 * rightmost eigenvalues), factorisations and solves per step, peak memory, and where the time
 * goes (residuals and Jacobian assembly, factorisation, solves, eigenvalues).
 *
 * Each case runs in its own process (worker.ts) so that peak resident memory belongs to it.
 */
import { performance } from 'node:perf_hooks';
import { models } from '../../discretisations/index.js';
import { Continuation, type EngineCounters } from '../../src/continuation/engine.js';
import { defaultSettings, type ContinuationSettings } from '../../src/continuation/types.js';
import { resolveParameters } from '../../src/problem/problem.js';
import { median, seconds, table, takePoints } from './stats.js';

export interface StepCase {
  name: string;
  model: string;
  options: Record<string, unknown>;
  parameters: Record<string, number>;
  settings: Partial<ContinuationSettings> & Pick<ContinuationSettings, 'parameter' | 'bounds'>;
  /** Steps timed per repetition (after the start point). */
  steps: number;
}

export interface StepBenchRow {
  case: string;
  eigenvalues: number;
  unknowns: number;
  secondsPerStep: number;
  /** CPU seconds of this process (user + system) per step, median of the repeats: stable where wall times stretch with other work. */
  cpuSecondsPerStep?: number;
  factorisationsPerStep: number;
  solvesPerStep: number;
  eigenSolvesPerStep: number;
  /** Factorisations of J − σM by the eigenvalue solver (shift 0 may come from the bordered factors instead). */
  eigenFactorisationsPerStep: number;
  peakRssMiB: number;
  /** Share of the step's time per phase (fractions summing to 1 with `other`). */
  shares: { assembly: number; factorisation: number; solves: number; eigen: number; other: number };
}

function diff(a: EngineCounters, b: EngineCounters, steps: number) {
  return {
    factorisations: (b.factorisations + b.refactorisations - a.factorisations - a.refactorisations) / steps,
    solves: (b.solves - a.solves) / steps,
    eigenSolves: (b.eigenSolves - a.eigenSolves) / steps,
    eigenFactorisations: (b.eigenFactorisations - a.eigenFactorisations) / steps,
    assembly: b.seconds.assembly + b.seconds.residual - a.seconds.assembly - a.seconds.residual,
    factorisation: b.seconds.factorisation - a.seconds.factorisation,
    solvesSeconds: b.seconds.solves - a.seconds.solves,
    eigen: b.seconds.eigen - a.seconds.eigen,
  };
}

/** Time `c.steps` continuation steps after the start point; one warm-up repetition, then `repeats`. */
export function benchSteps(c: StepCase, eigenvalues: number, repeats: number): StepBenchRow {
  const problem = models[c.model].factory(c.options as never);
  const params = resolveParameters(problem, c.parameters);
  const per: number[] = [];
  const cpu: number[] = [];
  let last: ReturnType<typeof diff> | undefined;
  let lastTime = 0;
  for (let rep = 0; rep < repeats + 1; rep++) {
    const engine = new Continuation(problem, params, { ...defaultSettings, maxPoints: 100_000, ...c.settings, stability: { eigenvalues } });
    const events = engine.events();
    // the start point (Newton, analysis, cold eigen start) is not part of the per-step figure
    takePoints(events, 1);
    const before = engine.counters;
    const t0 = performance.now();
    const c0 = process.cpuUsage();
    const done = takePoints(events, c.steps);
    const dt = (performance.now() - t0) / 1000;
    const dc = process.cpuUsage(c0);
    const after = engine.counters;
    engine.dispose();
    if (rep === 0 || done === 0) continue; // warm-up
    per.push(dt / done);
    cpu.push((dc.user + dc.system) / 1e6 / done);
    last = diff(before, after, done);
    lastTime = dt;
  }
  const d = last!;
  const share = (x: number) => x / lastTime;
  const known = share(d.assembly) + share(d.factorisation) + share(d.solvesSeconds) + share(d.eigen);
  return {
    case: c.name,
    eigenvalues,
    unknowns: problem.size,
    secondsPerStep: median(per),
    cpuSecondsPerStep: median(cpu),
    factorisationsPerStep: d.factorisations,
    solvesPerStep: d.solves,
    eigenSolvesPerStep: d.eigenSolves,
    eigenFactorisationsPerStep: d.eigenFactorisations,
    peakRssMiB: process.resourceUsage().maxRSS / 1024,
    shares: { assembly: share(d.assembly), factorisation: share(d.factorisation), solves: share(d.solvesSeconds), eigen: share(d.eigen), other: Math.max(0, 1 - known) },
  };
}

/** Points per second over a whole branch (start to end), stability included. */
export function benchBranch(c: StepCase, eigenvalues: number): { case: string; unknowns: number; points: number; pointsPerSecond: number; seconds: number } {
  const problem = models[c.model].factory(c.options as never);
  const params = resolveParameters(problem, c.parameters);
  const runOnce = () => {
    const engine = new Continuation(problem, params, { ...defaultSettings, ...c.settings, stability: { eigenvalues } });
    const t0 = performance.now();
    let points = 0;
    for (const e of engine.events()) if (e.type === 'point') points++;
    const dt = (performance.now() - t0) / 1000;
    engine.dispose();
    return { points, dt };
  };
  runOnce(); // warm-up
  const runs = [runOnce(), runOnce(), runOnce()];
  const dt = median(runs.map((r) => r.dt));
  return { case: c.name, unknowns: problem.size, points: runs[0].points, pointsPerSecond: runs[0].points / dt, seconds: dt };
}

export function stepTable(rows: StepBenchRow[]): string {
  return table(
    ['case', 'unknowns', 'eigenvalues', 's/step', 'CPU s/step', 'factorisations/step', 'solves/step', 'eigen solves/step', 'eigen factorisations/step', 'peak RSS'],
    rows.map((r) => [r.case, r.unknowns, r.eigenvalues, seconds(r.secondsPerStep), r.cpuSecondsPerStep === undefined ? '—' : seconds(r.cpuSecondsPerStep), r.factorisationsPerStep.toFixed(2), r.solvesPerStep.toFixed(2), r.eigenSolvesPerStep.toFixed(1), r.eigenFactorisationsPerStep.toFixed(2), r.peakRssMiB.toFixed(0) + ' MiB']),
  );
}

export function shareTable(rows: StepBenchRow[]): string {
  const pct = (x: number) => (100 * x).toFixed(0) + ' %';
  return table(
    ['case', 'eigenvalues', 'assembly', 'factorisation', 'solves', 'eigen', 'other'],
    rows.map((r) => [r.case, r.eigenvalues, pct(r.shares.assembly), pct(r.shares.factorisation), pct(r.shares.solves), pct(r.shares.eigen), pct(r.shares.other)]),
  );
}

/** 2D Bratu with m×m interior unknowns (intervals m + 1 per axis), on the lower branch. */
export function bratu2d(m: number, steps: number): StepCase {
  return {
    name: `2D Bratu ${m}x${m}`,
    model: 'bratu',
    options: { grid: { intervals: [m + 1, m + 1] } },
    parameters: { lambda: 1 },
    settings: { parameter: 'lambda', bounds: [0, 10], step: { initial: 0.25, min: 1e-8, max: 0.25 } },
    steps,
  };
}

/** 3D Bratu with `intervals` intervals per axis ((intervals − 1)³ unknowns), on the lower branch. */
export function bratu3d(intervals: number, steps: number): StepCase {
  return {
    name: `3D Bratu ${intervals}^3 intervals`,
    model: 'bratu',
    options: { grid: { intervals: [intervals, intervals, intervals] } },
    parameters: { lambda: 1 },
    settings: { parameter: 'lambda', bounds: [0, 20], step: { initial: 0.25, min: 1e-8, max: 0.25 } },
    steps,
  };
}

/** 2D Gray–Scott (two fields) on a periodic square, from a spot. */
export function grayScott2d(m: number, steps: number): StepCase {
  return {
    name: `2D Gray–Scott ${m}x${m}`,
    model: 'gray-scott',
    options: { grid: { intervals: [m, m], length: [1, 1] }, boundary: 'periodic', initial: 'uniform' },
    parameters: { F: 0.04, k: 0.06 },
    settings: { parameter: 'F', bounds: [0, 0.2], step: { initial: 0.002, min: 1e-10, max: 0.002 } },
    steps,
  };
}

/** 1D Bratu with n interior unknowns, the whole branch from λ = 0.1 past the fold to max u = 8. */
export function bratu1d(n: number): StepCase {
  return {
    name: `1D Bratu ${n}`,
    model: 'bratu',
    options: { grid: { intervals: [n + 1] } },
    parameters: { lambda: 0.1 },
    settings: { parameter: 'lambda', bounds: [0, 10], step: { initial: 0.1, min: 1e-8, max: 0.5 }, stopWhen: [{ monitor: 'max', above: 8 }] },
    steps: 0,
  };
}
