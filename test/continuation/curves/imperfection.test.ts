/**
 * Imperfection sensitivity of a beam on a softening foundation (pinned ends, kf = 100, well away
 * from 4π⁴ ≈ 390 where modes 1 and 2 buckle together): the perfect beam buckles subcritically
 * at P_c = EI μ₁ + kf/μ₁; with an imperfection ε in the critical mode the load peaks at a limit
 * point P_max < P_c, and for a symmetric unstable bifurcation P_c − P_max ∝ ε^(2/3) (Koiter
 * 1945; Thompson & Hunt, *A General Theory of Elastic Stability*, 1973).
 */
import { describe, expect, test } from 'vitest';
import { models } from '../../../discretisations/index.js';
import { curveSettings, denseEigenvalues, independentResidual, jacobianScale, runCurve } from './helpers.js';

describe('imperfection sensitivity (beam-foundation, pinned)', () => {
  const N = 40;
  const problem = models['beam-foundation'].factory({ grid: { intervals: [N] }, ends: 'pinned' } as never);
  const mu = (4 * N * N) * Math.sin(Math.PI / (2 * N)) ** 2;
  const Pc = mu + 100 / mu;
  // the limit load at ε = 1e-3 (the first fold met loading from P = 0), followed down to 1e-6
  const run = runCurve(
    problem,
    { P: 0, kf: 100, k3: 100, imperfection: 1e-3 },
    curveSettings({ follow: 'fold', parameter: 'imperfection', free: 'P', bounds: [1e-6, 1e-3], direction: 'decrease', step: { initial: 0.001, min: 1e-10, max: 0.003 }, maxPoints: 400 }),
  );

  test('P_c − P_max ∝ ε^(2/3) over three decades: fitted exponent 0.667 ± 0.02', () => {
    expect(run.ends.map((e) => e.reason)).toEqual(['parameter-bound']);
    const pts = run.points;
    expect(pts[0].parameter).toBe(1e-3);
    expect(pts[pts.length - 1].parameter).toBe(1e-6);
    for (const q of pts) {
      expect(q.free).toBeLessThan(Pc);
      const params = { P: q.free, EI: 1, kf: 100, k3: 100, imperfection: q.parameter };
      expect(independentResidual(problem, q.u, params)).toBeLessThan(1e-8);
      // a limit point: the dense Jacobian (ml-matrix eigenvalues) is singular there
      const nearest = denseEigenvalues(problem, q.u, params)[0];
      expect(Math.hypot(nearest.re, nearest.im)).toBeLessThan(1e-9 * jacobianScale(problem, q.u, params));
    }
    // least squares of log(P_c − P_max) against log ε, over points spread over the three decades
    const xs = pts.map((q) => Math.log(q.parameter));
    const ys = pts.map((q) => Math.log(Pc - q.free));
    for (const decade of [-6, -5, -4]) expect(xs.some((x) => x >= decade * Math.LN10 && x < (decade + 1) * Math.LN10)).toBe(true);
    const n = xs.length;
    const mx = xs.reduce((a, b) => a + b) / n;
    const my = ys.reduce((a, b) => a + b) / n;
    let sxy = 0;
    let sxx = 0;
    for (let i = 0; i < n; i++) {
      sxy += (xs[i] - mx) * (ys[i] - my);
      sxx += (xs[i] - mx) ** 2;
    }
    // Koiter 1945: the two-thirds power law of symmetric unstable buckling
    expect(Math.abs(sxy / sxx - 2 / 3)).toBeLessThan(0.02);
    // and the limit load tends to the perfect beam's buckling load
    expect(Pc - pts[pts.length - 1].free).toBeLessThan(2e-3 * Pc);
  });

  test('the limit state bulges in the critical mode, growing like ε^(1/3)', () => {
    const a = run.points[0];
    const b = run.points[run.points.length - 1];
    const ratio = a.monitors.centre / b.monitors.centre;
    // (1e-3 / 1e-6)^(1/3) = 10
    expect(ratio).toBeGreaterThan(8);
    expect(ratio).toBeLessThan(12);
    expect(b.monitors.centre).toBeGreaterThan(0);
  });
});
