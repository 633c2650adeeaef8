/**
 * The heat equation u_t = u″ on (0, 1) with u = 0 at both ends (allen-cahn with λ = 0), from
 * u(x, 0) = sin(πx): on the grid, sin(πx_i) is an eigenvector of the discrete Laplacian, so the
 * semi-discrete solution is exactly e^{−μt} sin(πx_i) with the grid's own eigenvalue
 * μ = (4/h²) sin²(πh/2) (LeVeque, Finite Difference Methods for ODEs and PDEs, SIAM 2007, §2.10, from memory). The integrator must reproduce that decay rate, and
 * its error at a fixed time must fall with the step size at its nominal order 2 (BDF2).
 */
import { describe, expect, it } from 'vitest';
import { models } from '../../discretisations/index.js';
import { resolveParameters } from '../../src/problem/problem.js';
import { bdfFormula } from '../../src/dynamics/bdf2.js';
import { integrate, maxDifference } from './helpers.js';

const N = 20;
const h = 1 / N;
const problem = models['allen-cahn'].factory({ grid: { intervals: [N] } });
const p = resolveParameters(problem, { lambda: 0 });
const u0 = Float64Array.from({ length: problem.size }, (_, i) => Math.sin(Math.PI * (i + 1) * h));
// LeVeque, Finite Difference Methods for ODEs and PDEs, SIAM 2007, §2.10, from memory: the discrete Dirichlet Laplacian's first eigenvalue
const mu = (4 / h ** 2) * Math.sin((Math.PI * h) / 2) ** 2;

describe('the heat equation from sin(πx)', () => {
  it('decays at the rate of the grid’s own eigenvalue (4/h²)·sin²(πh/2)', () => {
    const r = integrate(problem, p, { end: 0.4, relativeTolerance: 1e-8, absoluteTolerance: 1e-12, steadyTolerance: 1e-14 }, { start: u0 });
    // the rate between successive accepted steps, late in the run, in the middle node
    const mid = N / 2 - 1;
    const late = r.steps.filter((s) => s.time > 0.2);
    const first = late[0];
    const last = late[late.length - 1];
    const rate = -Math.log(last.u[mid] / first.u[mid]) / (last.time - first.time);
    expect(Math.abs(rate / mu - 1)).toBeLessThan(1e-5);
    // and the shape stays sin(πx) throughout
    const exact = u0.map((v) => v * Math.exp(-mu * last.time));
    expect(maxDifference(last.u, exact)).toBeLessThan(1e-6 * Math.exp(-mu * last.time) * 100);
    expect(r.outcome.kind).toBe('drifting');
  });

  it('converges at order 2 in time (a convergence study at fixed steps)', () => {
    const T = 0.2;
    const errors: number[] = [];
    const counts = [10, 20, 40, 80, 160];
    for (const n of counts) {
      const r = integrate(problem, p, { end: T, fixedStep: T / n, relativeTolerance: 1e-12, absoluteTolerance: 1e-14, steadyTolerance: 1e-16 }, { start: u0 });
      expect(r.steps[r.steps.length - 1].time).toBeCloseTo(T, 12);
      errors.push(maxDifference(r.final, u0.map((v) => v * Math.exp(-mu * T))));
    }
    const orders = errors.slice(1).map((e, k) => Math.log2(errors[k] / e));
    // the finer pairs are in the asymptotic range: within ±0.2 of the nominal order 2
    for (const q of orders.slice(1)) expect(Math.abs(q - 2)).toBeLessThan(0.2);
  });

  it('uses the textbook BDF2 coefficients at constant steps', () => {
    // constant steps: u_{n+1} − 4/3 u_n + 1/3 u_{n−1} = 2/3 h F(u_{n+1}) (Gear; standard)
    const f = bdfFormula(0.1, 0.1);
    expect(f.gamma).toBeCloseTo(2 / 3, 15);
    expect(f.a1).toBeCloseTo(4 / 3, 15);
    expect(f.a2).toBeCloseTo(1 / 3, 15);
  });

  it('ends steady at u = 0 when left long enough, and is told steady at once when started there', () => {
    const r = integrate(problem, p, { end: 100 }, { start: u0 });
    expect(r.outcome.kind).toBe('steady');
    expect(Math.max(...r.final.map(Math.abs))).toBeLessThan(1e-8);
    const z = integrate(problem, p, { end: 100 }, { start: new Float64Array(problem.size) });
    expect(z.outcome).toMatchObject({ kind: 'steady', time: 0 });
  });
});
