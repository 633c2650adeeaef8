import { describe, expect, it } from 'vitest';
import { bratu } from '../../discretisations/models/bratu.js';
import { grayScott } from '../../discretisations/models/gray-scott.js';
import { resolveParameters } from '../../src/problem/problem.js';
import { denseJacobian, fdJacobian, maxAbsDiff } from './helpers.js';

describe('smoke', () => {
  it('bratu 1D jacobian matches dense FD', () => {
    const pr = bratu({ grid: { intervals: [8] } });
    const p = resolveParameters(pr, { lambda: 2 });
    const u = Float64Array.from({ length: pr.size }, (_, i) => Math.sin(i));
    expect(maxAbsDiff(denseJacobian(pr, u, p), fdJacobian(pr, u, p))).toBeLessThan(1e-5);
  });
  it('gray-scott 1D periodic phase jacobian matches dense FD', () => {
    const pr = grayScott({ grid: { intervals: [10] }, initial: 'pulse', 'phase-condition': true });
    const p = resolveParameters(pr, { Du: 0.01, Dv: 0.005 });
    const u = pr.initialGuess(p);
    u[pr.size - 1] = 0.3;
    for (let i = 0; i < pr.size - 1; i++) u[i] += 0.1 * Math.cos(3 * i);
    expect(maxAbsDiff(denseJacobian(pr, u, p), fdJacobian(pr, u, p))).toBeLessThan(1e-6);
  });
});
