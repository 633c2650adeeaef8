import { expect, test } from 'vitest';
import type { Problem } from '../../src/problem/problem.js';
import { runProblem, settings } from './collect.js';

/** Two unknowns on the circle u² + λ² = 1 (v = 0 decoupled): a branch that closes on itself. */
function circle(): Problem {
  const pattern = { rows: 2, cols: 2, colPtr: Int32Array.from([0, 1, 2]), rowIdx: Int32Array.from([0, 1]) };
  const w = new Float64Array([1, 1]);
  return {
    model: 'circle',
    size: 2,
    gridUnknowns: 2,
    extraUnknowns: [],
    parameters: [{ name: 'lambda', default: 0, description: 'parameter' }],
    weights: w,
    pattern: () => pattern,
    residual: (u, p, out) => {
      out[0] = 1 - u[0] * u[0] - p.lambda * p.lambda;
      out[1] = -u[1];
    },
    jacobian: (u, _p, values) => {
      values[0] = -2 * u[0];
      values[1] = -1;
    },
    parameterDerivative: (_u, p, _name, out) => {
      out[0] = -2 * p.lambda;
      out[1] = 0;
    },
    initialGuess: () => new Float64Array([1, 0]),
    monitors: [{ name: 'max', description: 'u', evaluate: (u) => u[0] }],
    describe: () => ({ model: 'circle', summary: 'circle', fields: ['u', 'v'], axes: [] }),
    toNodeArray: (u) => ({ shape: [2], data: u.slice() }),
    fromNodeArray: (_s, d) => d.slice(),
  };
}

test('a branch that returns to its start stops as a closed loop after passing two folds', () => {
  const run = runProblem(circle(), { lambda: 0 }, settings({ parameter: 'lambda', bounds: [-2, 2], step: { initial: 0.1, min: 1e-8, max: 0.2 }, maxPoints: 500 }));
  expect(run.ends[0].reason).toBe('closed-loop');
  const folds = run.specials.filter((s) => s.kind === 'fold');
  expect(folds.map((f) => Math.round(f.value * 1e8) / 1e8).sort()).toEqual([-1, 1]);
  // the loop is about 2π long (unit circle in the weighted norm)
  const last = run.points[run.points.length - 1];
  expect(last.arclength).toBeGreaterThan(2 * Math.PI - 0.3);
  expect(last.arclength).toBeLessThan(2 * Math.PI + 0.3);
});

test('the point limit and the parameter bound stop a branch with their own reasons', () => {
  const limited = runProblem(circle(), { lambda: 0 }, settings({ parameter: 'lambda', bounds: [-2, 2], step: { initial: 0.1, min: 1e-8, max: 0.1 }, maxPoints: 5 }));
  expect(limited.ends[0].reason).toBe('point-limit');
  expect(limited.points).toHaveLength(5);
  const bounded = runProblem(circle(), { lambda: 0 }, settings({ parameter: 'lambda', bounds: [-0.5, 0.5], step: { initial: 0.1, min: 1e-8, max: 0.1 } }));
  expect(bounded.ends[0].reason).toBe('parameter-bound');
  expect(bounded.points[bounded.points.length - 1].parameter).toBe(0.5);
});
