import { expect, test } from 'vitest';
import { runProblem, settings, toyProblem } from './collect.js';

/** Two unknowns on the circle u² + λ² = 1 (v = 0 decoupled): a branch that closes on itself. */
function circle() {
  return toyProblem(
    2,
    (u, l, out) => {
      out[0] = 1 - u[0] * u[0] - l * l;
      out[1] = -u[1];
    },
    (u) => [
      [-2 * u[0], 0],
      [0, -1],
    ],
    (_u, l, out) => {
      out[0] = -2 * l;
      out[1] = 0;
    },
    [1, 0],
  );
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

test('a transcritical branch point (F = λu − u², v decoupled) is classified, and both ways along the new branch are followed', () => {
  // normal form of the transcritical bifurcation: u = 0 and u = λ cross at λ = 0, exchanging stability
  const problem = toyProblem(
    2,
    (u, l, out) => {
      out[0] = l * u[0] - u[0] * u[0];
      out[1] = -u[1];
    },
    (u, l) => [
      [l - 2 * u[0], 0],
      [0, -1],
    ],
    (u, _l, out) => {
      out[0] = u[0];
      out[1] = 0;
    },
    [0, 0],
  );
  const run = runProblem(problem, { lambda: -1 }, settings({ parameter: 'lambda', bounds: [-1, 1], step: { initial: 0.1, min: 1e-8, max: 0.2 }, stability: { eigenvalues: 1 } }));
  const bp = run.specials.find((s) => s.kind === 'branch-point');
  expect(bp && bp.kind === 'branch-point' && bp.type).toBe('transcritical');
  expect(Math.abs(bp!.value)).toBeLessThan(1e-8);
  expect(bp && bp.kind === 'branch-point' && bp.newBranchDirection).toBe('both');
  // the new branch is u = λ on both sides, stable for λ > 0 and unstable for λ < 0
  for (const id of bp && bp.kind === 'branch-point' ? bp.newBranches : []) {
    for (const p of run.branch(id).slice(1)) {
      expect(Math.abs(p.u[0] - p.parameter)).toBeLessThan(1e-8);
      expect(p.stability?.stable).toBe(p.parameter > 0);
    }
  }
  // and u = 0 is stable for λ < 0, unstable for λ > 0
  for (const p of run.branch(1)) if (Math.abs(p.parameter) > 1e-6) expect(p.stability?.stable).toBe(p.parameter < 0);
});
