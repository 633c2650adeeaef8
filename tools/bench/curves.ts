/**
 * Cost of a fold-curve step against a one-parameter step on the same grid: 2D Bratu with
 * convective walls (every node an unknown, m×m of them), the ignition fold followed in
 * (biot, lambda) from the first fold met at biot = 10, and plain pseudo-arclength steps in
 * lambda on the lower branch at biot = 10 — the same step length, no eigenvalues. The figure is
 * the ratio of seconds per step (the target: at most 3). benchHopfCurveSteps: the same for a
 * Hopf curve against a one-parameter step with eigenvalues (the target: at most 4).
 */
import { performance } from 'node:perf_hooks';
import { models } from '../../discretisations/index.js';
import { Continuation } from '../../src/continuation/engine.js';
import { CurveContinuation } from '../../src/continuation/curves/engine.js';
import { defaultCurveSettings } from '../../src/continuation/curves/types.js';
import { defaultSettings } from '../../src/continuation/types.js';
import { type Params, type Problem, resolveParameters } from '../../src/problem/problem.js';
import { median, seconds, table, takePoints } from './stats.js';

export interface CurveBenchRow {
  case: string;
  unknowns: number;
  curveSecondsPerStep: number;
  branchSecondsPerStep: number;
  ratio: number;
  curve: { factorisationsPerStep: number; solvesPerStep: number; newtonPerStep: number };
  branch: { factorisationsPerStep: number; solvesPerStep: number };
  /** Share of a curve step per phase. */
  shares: Record<string, number>;
}

const step = { initial: 0.25, min: 1e-8, max: 0.25 };

export function benchCurveSteps(m: number, steps: number, repeats: number): CurveBenchRow {
  const problem = models.bratu.factory({ grid: { intervals: [m - 1, m - 1] }, boundary: 'robin' } as never);
  const params = resolveParameters(problem, { lambda: 1, biot: 10 });
  // the fold to start from (found once, outside the timing)
  const search = new Continuation(problem, params, { ...defaultSettings, parameter: 'lambda', bounds: [0, 20], step: { initial: 0.25, min: 1e-8, max: 0.5 }, maxPoints: 1000 });
  let fold: { u: Float64Array; lambda: number } | undefined;
  for (const e of search.events()) {
    if (e.type === 'special' && e.point.kind === 'fold') {
      fold = { u: e.point.u.slice(), lambda: e.point.value };
      break;
    }
  }
  search.dispose();
  if (!fold) throw new Error('no fold found for the curve benchmark');
  const curve = timeSteps(() => new CurveContinuation(problem, { ...params, lambda: fold!.lambda }, { ...defaultCurveSettings, follow: 'fold', parameter: 'biot', free: 'lambda', bounds: [0, 1000], step, maxPoints: 100_000 }, { start: fold!.u, atPoint: true }), steps, repeats);
  const branch = timeSteps(() => new Continuation(problem, params, { ...defaultSettings, parameter: 'lambda', bounds: [0, 20], step, maxPoints: 100_000 }), steps, repeats);
  return row(`2D Bratu (convective walls) ${m}x${m}`, problem.size, curve, branch);
}

/**
 * Cost of a Hopf-curve step against a one-parameter step with eigenvalues on the same grid: the
 * 2D Brusselator on an m×m square of intervals with no-flux walls (2(m+1)² unknowns), Du = Dv = 1
 * so that the uniform state loses stability to the uniform Hopf mode first. The Hopf curve is
 * followed in (a, b) from the uniform Hopf point a = 1, b = 2, ω = 1 (Prigogine & Lefever 1968:
 * b = 1 + a², ω = a), with `eigenvalues` rightmost eigenvalues per point for the double-Hopf test
 * and the first Lyapunov coefficient at every point; the one-parameter steps move b from 1.5 on
 * the uniform branch with the same number of eigenvalues. The target: a ratio of at most 4.
 */
export function benchHopfCurveSteps(m: number, steps: number, repeats: number, eigenvalues = 6): CurveBenchRow {
  const problem = models.brusselator.factory({ grid: { intervals: [m, m], length: [1, 1] }, boundary: 'neumann' } as never);
  const given = { a: 1, b: 2, Du: 1, Dv: 1 };
  const params = resolveParameters(problem, given);
  const start = uniformState(problem, [1, 2], params);
  const curve = timeSteps(() => new CurveContinuation(problem, params, { ...defaultCurveSettings, follow: 'hopf', parameter: 'a', free: 'b', bounds: [0.5, 3], eigenvalues, step: { initial: 0.05, min: 1e-8, max: 0.05 }, maxPoints: 100_000 }, { start, atPoint: true, frequency: 1 }), steps, repeats);
  const low = resolveParameters(problem, { ...given, b: 1.5 });
  const branch = timeSteps(() => new Continuation(problem, low, { ...defaultSettings, parameter: 'b', bounds: [0, 10], step: { initial: 0.02, min: 1e-8, max: 0.02 }, maxPoints: 100_000, stability: { eigenvalues } }, { start: uniformState(problem, [1, 1.5], low) }), steps, repeats);
  return row(`2D Brusselator (no-flux walls) ${m}x${m}, ${eigenvalues} eigenvalues`, problem.size, curve, branch);
}

/** A state with every field uniform: values[f] at every node of field f. */
function uniformState(problem: Problem, values: number[], p: Params): Float64Array {
  const { shape } = problem.toNodeArray(problem.initialGuess(p), p);
  const nodes = shape.slice(1).reduce((a, b) => a * b, 1);
  const data = new Float64Array(shape.reduce((a, b) => a * b, 1));
  values.forEach((v, f) => data.fill(v, f * nodes, (f + 1) * nodes));
  return problem.fromNodeArray(shape, data, p);
}

interface Engine {
  events(): Generator<{ type: string; point?: unknown }, unknown>;
  readonly counters: { factorisations: number; refactorisations: number; solves: number; seconds: Record<string, number> };
  dispose(): void;
}

interface Timing {
  perStep: number;
  factorisationsPerStep: number;
  solvesPerStep: number;
  newtonPerStep: number;
  shares: Record<string, number>;
}

/** Seconds per step after the first point (one warm-up repetition, then `repeats`; the median), with counts and shares of the last repetition. */
function timeSteps(make: () => Engine, steps: number, repeats: number): Timing {
  const per: number[] = [];
  let last: Timing = { perStep: 0, factorisationsPerStep: 0, solvesPerStep: 0, newtonPerStep: 0, shares: {} };
  for (let rep = 0; rep < repeats + 1; rep++) {
    const engine = make();
    const events = engine.events();
    takePoints(events, 1);
    const before = engine.counters;
    const t0 = performance.now();
    let newton = 0;
    const done = takePoints(events, steps, (e) => {
      newton += (e.point as { newtonIterations?: number }).newtonIterations ?? 0;
    });
    const dt = (performance.now() - t0) / 1000;
    const after = engine.counters;
    engine.dispose();
    if (rep === 0) continue;
    if (done === 0) throw new Error('the benchmark run ended before its first timed step');
    per.push(dt / done);
    const shares: Record<string, number> = {};
    let known = 0;
    for (const k of Object.keys(after.seconds)) {
      shares[k] = (after.seconds[k] - before.seconds[k]) / dt;
      known += shares[k];
    }
    shares.other = Math.max(0, 1 - known);
    last = {
      perStep: 0,
      factorisationsPerStep: (after.factorisations + after.refactorisations - before.factorisations - before.refactorisations) / done,
      solvesPerStep: (after.solves - before.solves) / done,
      newtonPerStep: newton / done,
      shares,
    };
  }
  return { ...last, perStep: median(per) };
}

function row(name: string, unknowns: number, curve: Timing, branch: Timing): CurveBenchRow {
  return {
    case: name,
    unknowns,
    curveSecondsPerStep: curve.perStep,
    branchSecondsPerStep: branch.perStep,
    ratio: curve.perStep / branch.perStep,
    curve: { factorisationsPerStep: curve.factorisationsPerStep, solvesPerStep: curve.solvesPerStep, newtonPerStep: curve.newtonPerStep },
    branch: { factorisationsPerStep: branch.factorisationsPerStep, solvesPerStep: branch.solvesPerStep },
    shares: curve.shares,
  };
}

export function curveTable(rows: CurveBenchRow[]): string {
  return table(
    ['case', 'unknowns', 'curve s/step', 'branch s/step', 'ratio', 'curve factorisations/step', 'curve solves/step', 'Newton/step', 'branch factorisations/step'],
    rows.map((r) => [r.case, r.unknowns, seconds(r.curveSecondsPerStep), seconds(r.branchSecondsPerStep), r.ratio.toFixed(2), r.curve.factorisationsPerStep.toFixed(2), r.curve.solvesPerStep.toFixed(1), r.curve.newtonPerStep.toFixed(2), r.branch.factorisationsPerStep.toFixed(2)]),
  );
}
