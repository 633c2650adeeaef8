/**
 * Issue 11, item 7: a start point that does not truly converge makes a failed run with the
 * reason, never a finished one. 1D Bratu u″ + λe^u = 0 on 20 intervals has no steady state
 * beyond λ ≈ 3.5 (the fold, λ* = 3.5138… in the continuum: Bratu 1914); started at λ = 1e20,
 * 1e40 or 1e100 Newton can only reach states whose residual is as large as its terms.
 */
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, test } from 'vitest';
import { models } from '../../discretisations/index.js';
import { correct, correctWork } from '../../src/continuation/newton.js';
import { ContinuationSystem } from '../../src/continuation/system.js';
import { resolveParameters } from '../../src/problem/problem.js';
import { prepareCaseObject } from '../../src/run/case.js';
import { runCase } from '../../src/run/run-case.js';
import { runModel, settings } from './collect.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-newton-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

describe('start points that do not converge', () => {
  test.each([1e20, 1e40, 1e100])('1D Bratu started at λ = %d: the run fails, naming the start point and the residual', async (lambda) => {
    const prepared = await prepareCaseObject(
      { name: 'no-steady-state', model: 'bratu', grid: { intervals: [20] }, parameters: { lambda }, continuation: { parameter: 'lambda', bounds: [0, 1e300] } },
      { label: 'case', baseDir: tmp },
    );
    const out = join(tmp, `run-${lambda}`);
    const result = await runCase(prepared, { outDir: out });
    expect(result.status).toBe('failed');
    expect(result.failure).toMatch(/the start point did not converge at lambda = .*residual .* against /);
    const run = JSON.parse(readFileSync(join(out, 'run.json'), 'utf8'));
    expect(run.status).toBe('failed');
    expect(run.counts.points).toBe(0);
  });
});

describe('points accepted without a Newton update', () => {
  test('the predictor is accepted as it stands only where it passes both tests (straight beam w = 0: exactly)', () => {
    const run = runModel('beam-foundation', { grid: { intervals: [40] }, ends: 'pinned' }, { P: 0, EI: 1, kf: 100, k3: 100 }, settings({ parameter: 'P', bounds: [0, 30], maxPoints: 100, branchSwitching: { depth: 1 }, stopWhen: [{ monitor: 'max', above: 1 }, { monitor: 'min', below: -1 }] }));
    // (runProblem re-checks the residual test of every point)
    const straight = run.branch(1);
    expect(straight.every((p) => p.newtonIterations === 0 && p.u.every((w) => w === 0))).toBe(true);
    // on the buckled branches the predictor is never a solution: every point took Newton updates
    const buckled = run.points.filter((p) => p.branch !== 1 && p.index > 0);
    expect(buckled.length).toBeGreaterThan(5);
    expect(buckled.every((p) => p.newtonIterations > 0)).toBe(true);
  });
});

describe('the update test after a single Newton update', () => {
  test('one update is not enough evidence: its size is the error estimate until a second one shows the contraction', () => {
    // 1D Bratu at λ = 1 (lower branch, no singular point near): Newton at fixed λ from a state
    // 1e-2 off the solution, with a loose residual tolerance (passed after one update) and a tight
    // step tolerance. The state returned must be within the step tolerance of the solution
    // computed to the last bit (Newton's quadratic convergence: common practice).
    const problem = models.bratu.factory({ grid: { intervals: [32] } });
    const params = resolveParameters(problem, { lambda: 1 });
    const sys = new ContinuationSystem(problem, params, 'lambda');
    const n = problem.size;
    const e = new Float64Array(n + 1);
    e[n] = 1;
    const solve = (x: Float64Array, residualTolerance: number, stepTolerance: number) =>
      correct(sys, x, e, x.slice(), { residualTolerance, stepTolerance, maxIterations: 20, fresh: true }, correctWork(n));
    const exact = new Float64Array(n + 1);
    exact[n] = 1;
    expect(solve(exact, 1e-15, 1e-15).converged).toBe(true);
    const x = exact.slice();
    for (let i = 0; i < n; i++) x[i] += 1e-2 * Math.sin((Math.PI * (i + 1)) / (n + 1));
    const stepTolerance = 1e-12;
    const r = solve(x, 1e-3, stepTolerance);
    expect(r.converged).toBe(true);
    expect(r.iterations).toBeGreaterThanOrEqual(2);
    const diff = x.map((v, i) => v - exact[i]);
    expect(sys.norm(diff)).toBeLessThanOrEqual(stepTolerance * (1 + sys.norm(x)));
  });
});
