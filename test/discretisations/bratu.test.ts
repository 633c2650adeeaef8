/**
 * Bratu: truncation order of the discrete residual at the exact 1D solution, and the model's
 * conventions (centre monitor, caution, robin variant).
 *
 * Exact solution of u'' + λ e^u = 0, u(0) = u(1) = 0 (Bratu 1914):
 *   u(x) = −2 ln[ cosh((x − ½) θ/2) / cosh(θ/4) ],   θ = √(2λ) cosh(θ/4)  (lower branch: smaller θ).
 */
import { describe, expect, it } from 'vitest';
import { bratu } from '../../discretisations/models/bratu.js';
import { resolveParameters, weightedNorm } from '../../src/problem/problem.js';
import { residualOf } from './helpers.js';

function bratuTheta(lambda: number): number {
  // fixed point θ ← √(2λ) cosh(θ/4) converges on the lower branch (contraction for λ < λ*)
  let t = 0;
  for (let k = 0; k < 200; k++) t = Math.sqrt(2 * lambda) * Math.cosh(t / 4);
  return t;
}

const exactU = (x: number, t: number) => -2 * Math.log(Math.cosh((x - 0.5) * (t / 2)) / Math.cosh(t / 4));

describe('bratu', () => {
  it('the residual of the exact solution falls as h² over four grids (observed order 2 ± 0.1)', () => {
    const lambda = 2;
    const theta = bratuTheta(lambda);
    // the fixed point satisfies its equation
    expect(Math.abs(theta - Math.sqrt(2 * lambda) * Math.cosh(theta / 4))).toBeLessThan(1e-12);
    const norms: number[] = [];
    for (const N of [16, 32, 64, 128]) {
      const pr = bratu({ grid: { intervals: [N] } });
      const p = resolveParameters(pr, { lambda });
      const u = new Float64Array(pr.size);
      for (let i = 0; i < pr.size; i++) u[i] = exactU((i + 1) / N, theta);
      norms.push(weightedNorm(pr.weights, residualOf(pr, u, p)));
    }
    for (let k = 0; k + 1 < norms.length; k++) {
      const order = Math.log2(norms[k] / norms[k + 1]);
      expect(order).toBeGreaterThan(1.9);
      expect(order).toBeLessThan(2.1);
    }
  });

  it('the centre monitor reads the exact solution at x = ½ (node or interpolated)', () => {
    const theta = bratuTheta(1);
    for (const N of [8, 9]) {
      const pr = bratu({ grid: { intervals: [N] } });
      const p = resolveParameters(pr, { lambda: 1 });
      const u = new Float64Array(pr.size);
      for (let i = 0; i < pr.size; i++) u[i] = exactU((i + 1) / N, theta);
      const centre = pr.monitors.find((m) => m.name === 'centre')!.evaluate(u, p);
      const tolerance = N % 2 === 0 ? 1e-14 : 0.02; // odd N: linear interpolation between the two middle nodes
      expect(Math.abs(centre - exactU(0.5, theta))).toBeLessThan(tolerance);
      expect(pr.monitors.find((m) => m.name === 'max')!.evaluate(u, p)).toBeCloseTo(Math.max(...u), 14);
    }
  });

  it('carries the ignition caution and refuses unknown options and bad boundaries', () => {
    const pr = bratu({ grid: { intervals: [4, 4] } });
    expect(pr.describe().caution).toMatch(/not a substitute for design codes/);
    expect(() => bratu({ grid: { intervals: [4] }, boundary: 'neumann' })).toThrow(/option 'boundary' is 'neumann' \(accepted: dirichlet, robin\)/);
    expect(() => bratu({ grid: { intervals: [4] }, bondary: 'robin' })).toThrow(/unknown option 'bondary'/);
  });

  it('robin variant: biot → ∞ approaches the dirichlet problem, biot = 0 is the insulated (neumann) wall', () => {
    const N = 10;
    const dir = bratu({ grid: { intervals: [N] } });
    const rob = bratu({ grid: { intervals: [N] }, boundary: 'robin' });
    expect(rob.size).toBe(N + 1);
    expect(rob.parameters.map((s) => s.name)).toEqual(['lambda', 'biot']);
    // a state that vanishes at the walls: robin rows of interior nodes equal dirichlet rows
    const u = new Float64Array(N + 1);
    for (let i = 1; i < N; i++) u[i] = Math.sin((Math.PI * i) / N);
    const fr = residualOf(rob, u, { lambda: 1, biot: 5 });
    const fd = residualOf(dir, u.subarray(1, N), { lambda: 1 });
    for (let i = 1; i < N; i++) expect(fr[i]).toBeCloseTo(fd[i - 1], 9);
    // wall row: (2u_1 − (2 + 2h·biot) u_0)/h² + λ e^{u_0} with u_0 = 0
    const h = 1 / N;
    expect(fr[0]).toBeCloseTo((2 * u[1]) / h ** 2 + 1, 9);
    // biot derivative at the wall: −2u_0/h per unit biot
    u[0] = 0.3;
    const d = new Float64Array(N + 1);
    rob.parameterDerivative(u, { lambda: 1, biot: 5 }, 'biot', d);
    expect(d[0]).toBeCloseTo((-2 * 0.3) / h, 10);
    expect(d[5]).toBe(0);
  });
});
