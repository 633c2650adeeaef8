/**
 * A Gray–Scott pattern (a pulse of the autocatalyst) grown by time integration from a localized
 * bump with a little seeded noise, in a no-flux strip: the state the integration settles into
 * must be steady (its residual, evaluated again here, at round-off after the Newton polish), and
 * its stability from the rightmost eigenvalues must agree with what continued integration does
 * from a perturbed copy of it: once the faster modes have died out, the distance to the pattern
 * decays (or grows) at the rate of the rightmost eigenvalue (linear stability: a perturbation
 * evolves as e^{μt} along the leading eigenvector). The eigenvalues are checked against a dense
 * eigensolver (ml-matrix, a reference library).
 */
import { describe, expect, it } from 'vitest';
import { initialStateBuilder, models } from '../../discretisations/index.js';
import { steadyStability } from '../../src/dynamics/stability.js';
import { eigenvaluesDense } from '../../src/linalg/eigen.js';
import { resolveParameters, weightedNorm } from '../../src/problem/problem.js';
import { integrate } from './helpers.js';

const L = 0.3;
const problem = models['gray-scott'].factory({ grid: { intervals: [60], length: [L] }, boundary: 'neumann' });
const p = resolveParameters(problem, { F: 0.04, k: 0.064 });
const bump = `exp(-(x-${L / 2})^2/0.0025)`;

describe('a Gray–Scott pattern found by time integration', () => {
  it('is steady, and its eigenvalues predict what continued integration from a perturbed state does', () => {
    const u0 = initialStateBuilder(problem, { values: { u: `1 - 0.5*${bump}`, v: `0.25*${bump}` }, noise: { amplitude: 1e-3, seed: 1 } }).build(p);
    const grown = integrate(problem, p, { end: 50000 }, { start: u0 });
    expect(grown.outcome.kind).toBe('steady');
    const star = grown.final;
    // a pulse, not the uniform state (1, 0)
    expect(grown.steps[grown.steps.length - 1].monitors['max:v']).toBeGreaterThan(0.2);
    // steady: the residual evaluated again, at round-off
    const f = new Float64Array(problem.size);
    problem.residual(star, p, f);
    expect(Math.max(...f.map(Math.abs))).toBeLessThan(1e-10);

    // the rightmost eigenvalues, from the Krylov solver and from a dense solver
    const s = steadyStability(problem, p, star, 4);
    const pat = problem.pattern();
    const J = new Float64Array(pat.colPtr[pat.cols]);
    problem.jacobian(star, p, J);
    const dense = eigenvaluesDense({ ...pat, values: J }).sort((x, y) => y.re - x.re);
    expect(s.leading).not.toBeNull();
    const mu = s.leading!.re;
    expect(Math.abs(dense[0].re - mu)).toBeLessThan(1e-9);
    // a real leading eigenvalue well apart from the next: growth or decay at that one rate
    expect(dense[0].im).toBe(0);
    expect(dense[1].re).toBeLessThan(100 * mu);

    // continued integration from the pattern with noise on top: the distance evolves as e^{μt}
    const perturbed = initialStateBuilder(problem, { noise: { amplitude: 1e-4, seed: 7 } }).build(p, star);
    const trace: [number, number][] = [];
    const diff = new Float64Array(problem.size);
    const horizon = 1 / Math.abs(mu);
    const settle = 20 / Math.abs(dense[1].re); // the faster modes are gone by then
    integrate(problem, p, { end: horizon, steadyTolerance: 1e-14, relativeTolerance: 1e-7, absoluteTolerance: 1e-11 }, { start: perturbed }, (r) => {
      for (let i = 0; i < diff.length; i++) diff[i] = r.u[i] - star[i];
      trace.push([r.time, weightedNorm(problem.weights, diff)]);
    });
    const late = trace.filter(([t]) => t >= settle);
    const [t1, d1] = late[0];
    const [t2, d2] = late[late.length - 1];
    const rate = Math.log(d2 / d1) / (t2 - t1);
    expect(Math.sign(rate)).toBe(Math.sign(mu));
    expect(Math.abs(rate / mu - 1)).toBeLessThan(0.05);
    expect(s.stable).toBe(mu < 0);
  });
});
