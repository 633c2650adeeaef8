/**
 * Cost of a fold-curve step against a one-parameter step on the same grid: 2D Bratu with
 * convective walls (every node an unknown, m×m of them), the ignition fold followed in
 * (biot, lambda) from the first fold met at biot = 10, and plain pseudo-arclength steps in
 * lambda on the lower branch at biot = 10 — the same step length, no eigenvalues. The figure is
 * the ratio of seconds per step (the target: at most 3).
 */
import { performance } from 'node:perf_hooks';
import { models } from '../../discretisations/index.js';
import { Continuation } from '../../src/continuation/engine.js';
import { CurveContinuation } from '../../src/continuation/curves/engine.js';
import { defaultCurveSettings } from '../../src/continuation/curves/types.js';
import { defaultSettings } from '../../src/continuation/types.js';
import { resolveParameters } from '../../src/problem/problem.js';
import { median, seconds, table } from './stats.js';

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
  const curvePer: number[] = [];
  let curveCounts = { factorisationsPerStep: 0, solvesPerStep: 0, newtonPerStep: 0 };
  let shares: Record<string, number> = {};
  for (let rep = 0; rep < repeats + 1; rep++) {
    const engine = new CurveContinuation(problem, { ...params, lambda: fold.lambda }, { ...defaultCurveSettings, follow: 'fold', parameter: 'biot', free: 'lambda', bounds: [0, 1000], step, maxPoints: 100_000 }, { start: fold.u, atPoint: true });
    const events = engine.events();
    for (let e = events.next(); !e.done; e = events.next()) if (e.value.type === 'point') break;
    const before = engine.counters;
    const t0 = performance.now();
    let done = 0;
    let newton = 0;
    for (let e = events.next(); !e.done && done < steps; e = events.next()) {
      if (e.value.type === 'point') {
        done++;
        newton += e.value.point.newtonIterations;
      }
    }
    const dt = (performance.now() - t0) / 1000;
    const after = engine.counters;
    engine.dispose();
    if (rep === 0) continue;
    curvePer.push(dt / done);
    curveCounts = {
      factorisationsPerStep: (after.factorisations + after.refactorisations - before.factorisations - before.refactorisations) / done,
      solvesPerStep: (after.solves - before.solves) / done,
      newtonPerStep: newton / done,
    };
    shares = {};
    let known = 0;
    for (const k of Object.keys(after.seconds) as (keyof typeof after.seconds)[]) {
      shares[k] = (after.seconds[k] - before.seconds[k]) / dt;
      known += shares[k];
    }
    shares.other = Math.max(0, 1 - known);
  }
  const branchPer: number[] = [];
  let branchCounts = { factorisationsPerStep: 0, solvesPerStep: 0 };
  for (let rep = 0; rep < repeats + 1; rep++) {
    const engine = new Continuation(problem, params, { ...defaultSettings, parameter: 'lambda', bounds: [0, 20], step, maxPoints: 100_000 });
    const events = engine.events();
    for (let e = events.next(); !e.done; e = events.next()) if (e.value.type === 'point') break;
    const before = engine.counters;
    const t0 = performance.now();
    let done = 0;
    for (let e = events.next(); !e.done && done < steps; e = events.next()) if (e.value.type === 'point') done++;
    const dt = (performance.now() - t0) / 1000;
    const after = engine.counters;
    engine.dispose();
    if (rep === 0) continue;
    branchPer.push(dt / done);
    branchCounts = { factorisationsPerStep: (after.factorisations + after.refactorisations - before.factorisations - before.refactorisations) / done, solvesPerStep: (after.solves - before.solves) / done };
  }
  const c = median(curvePer);
  const b = median(branchPer);
  return { case: `2D Bratu (convective walls) ${m}x${m}`, unknowns: problem.size, curveSecondsPerStep: c, branchSecondsPerStep: b, ratio: c / b, curve: curveCounts, branch: branchCounts, shares };
}

export function curveTable(rows: CurveBenchRow[]): string {
  return table(
    ['case', 'unknowns', 'fold-curve s/step', 'branch s/step', 'ratio', 'curve factorisations/step', 'curve solves/step', 'Newton/step', 'branch factorisations/step'],
    rows.map((r) => [r.case, r.unknowns, seconds(r.curveSecondsPerStep), seconds(r.branchSecondsPerStep), r.ratio.toFixed(2), r.curve.factorisationsPerStep.toFixed(2), r.curve.solvesPerStep.toFixed(1), r.curve.newtonPerStep.toFixed(2), r.branch.factorisationsPerStep.toFixed(2)]),
  );
}
