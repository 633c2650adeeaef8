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
