/**
 * Both steady states of the 1D Bratu problem u″ + λeᵘ = 0, u(0) = u(1) = 0, at λ = 2, found by
 * deflated Newton from one guess (u = 0), each equal to its exact closed form to the
 * discretisation error: u(x) = −2 ln[cosh((x − ½)θ/2) / cosh(θ/4)] with θ a root of
 * θ = √(2λ)·cosh(θ/4), which has two roots below the fold λ* ≈ 3.5138 (Bratu 1914). The error
 * at the nodes must shrink at the second order of the three-point difference formula: observed
 * orders from 50, 100 and 200 intervals between 1.9 and 2.1.
 */
import { describe, expect, it } from 'vitest';
import { models } from '../../discretisations/index.js';
import { resolveParameters } from '../../src/problem/problem.js';
import { search } from './helpers.js';

const lambda = 2;

/** The two roots of θ = √(2λ) cosh(θ/4), by bisection on either side of the fold's θ (where (θ/4)·tanh(θ/4) = 1). */
function thetas(): [number, number] {
  const g = (t: number) => t - Math.sqrt(2 * lambda) * Math.cosh(t / 4);
  const bisect = (f: (t: number) => number, a: number, b: number): number => {
    for (let i = 0; i < 200; i++) {
      const m = (a + b) / 2;
      if (Math.sign(f(m)) === Math.sign(f(a))) a = m;
      else b = m;
    }
    return (a + b) / 2;
  };
  const fold = bisect((t) => (t / 4) * Math.tanh(t / 4) - 1, 0.1, 20);
  return [bisect(g, 0, fold), bisect(g, fold, 60)];
}

const exact = (x: number, theta: number) => -2 * Math.log(Math.cosh(((x - 0.5) * theta) / 2) / Math.cosh(theta / 4));

describe('1D Bratu at λ = 2: both states by deflation, equal to the exact ones (Bratu 1914)', () => {
  it('finds two states from u = 0, with nodal errors of second order', () => {
    const [low, high] = thetas();
    expect(low).toBeLessThan(high);
    const errors: number[][] = [];
    for (const N of [50, 100, 200]) {
      const problem = models.bratu.factory({ grid: { intervals: [N] } });
      const p = resolveParameters(problem, { lambda });
      const run = search(problem, p, [{ u: '0' }]);
      expect(run.states.length).toBe(2);
      const states = run.states.map((s) => problem.toNodeArray(s.u, p).data).sort((a, b) => Math.max(...a) - Math.max(...b));
      errors.push(
        [low, high].map((theta, k) => {
          let e = 0;
          for (let i = 0; i <= N; i++) e = Math.max(e, Math.abs(states[k][i] - exact(i / N, theta)));
          return e;
        }),
      );
    }
    for (let k = 0; k < 2; k++) {
      // small on the finest grid (the upper state, max u ≈ 2.9, has the larger constant)
      expect(errors[2][k]).toBeLessThan(k === 0 ? 5e-6 : 1e-4);
      for (let g = 1; g < 3; g++) {
        const order = Math.log2(errors[g - 1][k] / errors[g][k]);
        expect(order).toBeGreaterThan(1.9);
        expect(order).toBeLessThan(2.1);
      }
    }
  });
});
