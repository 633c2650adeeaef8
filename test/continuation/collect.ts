/** Run a continuation in memory and collect its events (test helper). */
import { expect } from 'vitest';
import { models } from '../../discretisations/index.js';
import { Continuation, type EngineSummary } from '../../src/continuation/engine.js';
import { defaultSettings, type ContinuationPoint, type ContinuationSettings, type SpecialPoint } from '../../src/continuation/types.js';
import { type Problem, resolveParameters } from '../../src/problem/problem.js';

export interface Collected {
  problem: Problem;
  points: ContinuationPoint[];
  specials: SpecialPoint[];
  ends: { branch: number; reason: string; message: string }[];
  summary: EngineSummary;
  branch(id: number): ContinuationPoint[];
}

export function settings(partial: Partial<ContinuationSettings> & Pick<ContinuationSettings, 'parameter' | 'bounds'>): ContinuationSettings {
  return { ...defaultSettings, ...partial };
}

export function runModel(model: string, options: Record<string, unknown>, given: Record<string, number>, s: ContinuationSettings): Collected {
  const problem = models[model].factory(options as never);
  return runProblem(problem, given, s);
}

export function runProblem(problem: Problem, given: Record<string, number>, s: ContinuationSettings): Collected {
  const params = resolveParameters(problem, given);
  const c = new Continuation(problem, params, s);
  const points: ContinuationPoint[] = [];
  const specials: SpecialPoint[] = [];
  const ends: Collected['ends'] = [];
  const it = c.events();
  let r = it.next();
  while (!r.done) {
    const e = r.value;
    if (e.type === 'point') points.push(e.point);
    else if (e.type === 'special') specials.push(e.point);
    else if (e.type === 'branch-end') ends.push({ branch: e.branch, reason: e.reason, message: e.message });
    r = it.next();
  }
  c.dispose();
  // every converged point satisfies the residual tolerance (scaled weighted norm)
  for (const p of points) expect(p.residual).toBeLessThanOrEqual(s.newton.residualTolerance);
  return { problem, points, specials, ends, summary: r.value, branch: (id) => points.filter((p) => p.branch === id) };
}

/** Observed order from three values on grids refined by a constant ratio r. */
export function observedOrder(coarse: number, medium: number, fine: number, r = 2): number {
  return Math.log(Math.abs((coarse - medium) / (medium - fine))) / Math.log(r);
}

/**
 * A small algebraic problem (no grid) from its residual, Jacobian (dense, row-major) and parameter
 * derivative: for tests of the engine's logic on cases whose answer is known in closed form.
 */
export function toyProblem(
  size: number,
  residual: (u: Float64Array, lambda: number, out: Float64Array) => void,
  jacobian: (u: Float64Array, lambda: number) => number[][],
  parameterDerivative: (u: Float64Array, lambda: number, out: Float64Array) => void,
  initial: number[],
): Problem {
  const colPtr = Int32Array.from({ length: size + 1 }, (_, j) => j * size);
  const rowIdx = Int32Array.from({ length: size * size }, (_, k) => k % size);
  const pattern = { rows: size, cols: size, colPtr, rowIdx };
  return {
    model: 'toy',
    size,
    gridUnknowns: size,
    extraUnknowns: [],
    parameters: [{ name: 'lambda', default: 0, description: 'parameter' }],
    weights: new Float64Array(size).fill(1),
    pattern: () => pattern,
    residual: (u, p, out) => residual(u, p.lambda, out),
    jacobian: (u, p, values) => {
      const d = jacobian(u, p.lambda);
      for (let j = 0; j < size; j++) for (let i = 0; i < size; i++) values[j * size + i] = d[i][j];
    },
    parameterDerivative: (u, p, _name, out) => parameterDerivative(u, p.lambda, out),
    initialGuess: () => Float64Array.from(initial),
    monitors: [{ name: 'max', description: 'first unknown', evaluate: (u) => u[0] }],
    describe: () => ({ model: 'toy', summary: 'toy problem', fields: ['u'], axes: [] }),
    toNodeArray: (u) => ({ shape: [size], data: u.slice() }),
    fromNodeArray: (_s, d) => d.slice(),
  };
}
