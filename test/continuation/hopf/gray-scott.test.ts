/**
 * The Hopf curve of Gray–Scott's uniform states in (k, F) (Gray & Scott 1984).
 *
 * Uniform states have u v = F + k and F(1 − u) = (F + k) v; the uniform Jacobian has
 * trace = k − v² and det = (F + k)(v² − F). A pair ±iω crosses the axis where the trace vanishes
 * with det > 0: v = √k, so F√k − F(F + k) = (F + k)k, i.e. (F + k)² = F√k with k > F, and
 * ω² = det = (F + k)(k − F). The curve meets the fold curve F = 4(F + k)² at the
 * Bogdanov–Takens point k = F = 1/16, where ω → 0. With Du = Dv the other grid modes have the
 * uniform eigenvalues shifted by −D q², so no second pair and no real eigenvalue reaches the
 * axis: the only other codimension-two point is where the first Lyapunov coefficient of the
 * uniform kinetics changes sign (Bautin), computed here independently with the planar formula.
 */
import { describe, expect, test } from 'vitest';
import { models } from '../../../discretisations/index.js';
import type { CurveSpecialPoint } from '../../../src/continuation/curves/types.js';
import type { HopfPoint } from '../../../src/continuation/types.js';
import { Continuation } from '../../../src/continuation/engine.js';
import { resolveParameters } from '../../../src/problem/problem.js';
import { settings } from '../collect.js';
import { curveSettings, independentResidual, runCurve, uniformStart } from '../curves/helpers.js';
import { cx, planarLyapunov, type Vec } from './planar.js';

/** A uniform state on the upper root at (F, k), inside the region of three states. */
function upperState(F: number, k: number): [number, number] {
  const s = F + k;
  const v = (F + Math.sqrt(F * F - 4 * s * s * F)) / (2 * s);
  return [1 - (s * v) / F, v];
}

/** F on the Hopf curve at k: the root F < k of F² + (2k − √k)F + k² = 0. */
function hopfF(k: number): number {
  const b = 2 * k - Math.sqrt(k);
  return (-b - Math.sqrt(b * b - 4 * k * k)) / 2;
}

/** l₁ of the uniform kinetics at the Hopf point with parameter k (planar formula of the test helper). */
function planarL1(k: number): number {
  const F = hopfF(k);
  const v = Math.sqrt(k);
  const u = (F + k) / v;
  const { add, mul, re, sub } = cx;
  // ±u v²: B(x, y) = 2v(x_u y_v + x_v y_u) + 2u x_v y_v, C(x, y, z) = 2(x_u y_v z_v + x_v y_u z_v + x_v y_v z_u)
  const Bf = (x: Vec, y: Vec): Vec => {
    const s = add(mul(re(2 * v), add(mul(x[0], y[1]), mul(x[1], y[0]))), mul(re(2 * u), mul(x[1], y[1])));
    return [sub(re(0), s), s];
  };
  const Cf = (x: Vec, y: Vec, z: Vec): Vec => {
    const s = mul(re(2), add(add(mul(mul(x[0], y[1]), z[1]), mul(mul(x[1], y[0]), z[1])), mul(mul(x[1], y[1]), z[0])));
    return [sub(re(0), s), s];
  };
  return planarLyapunov(
    [
      [-v * v - F, -2 * u * v],
      [v * v, 2 * u * v - (F + k)],
    ],
    Bf,
    Cf,
  ).l1;
}

/** The Bautin point of the uniform kinetics: l₁ = 0 on the Hopf curve (bisection in k). */
function planarBautin(): number {
  let lo = 0.02;
  let hi = 0.06;
  const slo = Math.sign(planarL1(lo));
  expect(Math.sign(planarL1(hi))).toBe(-slo);
  for (let i = 0; i < 200 && hi - lo > 1e-15; i++) {
    const mid = 0.5 * (lo + hi);
    if (Math.sign(planarL1(mid)) === slo) lo = mid;
    else hi = mid;
  }
  return 0.5 * (lo + hi);
}

const hopfSettings = curveSettings({
  follow: 'hopf',
  parameter: 'k',
  free: 'F',
  bounds: [0.02, 0.07],
  freeBounds: [0, 1],
  eigenvalues: 4,
  step: { initial: 0.002, min: 1e-9, max: 0.01 },
  newton: { residualTolerance: 1e-10, stepTolerance: 1e-10, maxIterations: 12 },
});

const grids = [
  { grid: { intervals: [10] }, measure: 1 },
  { grid: { intervals: [5, 4], length: [1, 1.3] }, measure: 1.3 },
];

for (const { grid, measure } of grids) {
  const dim = grid.intervals.length;
  describe(`Gray–Scott uniform Hopf curve, ${dim}D grid`, () => {
    const problem = models['gray-scott'].factory({ grid, boundary: 'neumann' } as never);
    const p = { F: 0.05, k: 0.05, Du: 1, Dv: 1 };

    test('from the Bogdanov–Takens point of the fold curve: points on (F + k)² = F√k to 1e-9, ω² = (F + k)(k − F), l₁ as the planar formula, the Bautin point', () => {
      const fold = runCurve(
        problem,
        p,
        curveSettings({ follow: 'fold', parameter: 'k', free: 'F', bounds: [0.02, 0.07], freeBounds: [0, 1], step: { initial: 0.004, min: 1e-9, max: 0.008 } }),
        { start: uniformStart(problem, upperState(0.05, 0.05), p) },
      );
      const bt = fold.specials.find((s) => s.kind === 'bogdanov-takens')!;
      expect(bt).toBeDefined();
      const run = runCurve(problem, { ...p, k: bt.value, F: bt.free }, hopfSettings, { start: bt.u, atPoint: true, frequency: 0 });
      // the curve leaves the Bogdanov–Takens point one way, with ω growing from 0, and ends at k = 0.02
      expect(run.ends.map((e) => e.reason)).toEqual(['parameter-bound']);
      expect(run.points[0].tests.frequency).toBe(0);
      expect(run.points[1].tests.frequency).toBeGreaterThan(0);
      expect(run.points.length).toBeGreaterThan(15);
      for (const q of run.points) {
        // Gray & Scott 1984: the uniform Hopf curve and its frequency
        expect(Math.abs((q.free + q.parameter) ** 2 - q.free * Math.sqrt(q.parameter))).toBeLessThan(1e-9);
        expect(Math.abs(q.tests.frequency ** 2 - (q.free + q.parameter) * (q.parameter - q.free))).toBeLessThan(1e-9);
        expect(independentResidual(problem, q.u, { ...p, k: q.parameter, F: q.free })).toBeLessThan(1e-9);
        expect(Math.abs(q.u[1] - Math.sqrt(q.parameter))).toBeLessThan(1e-8);
        if (q.tests.frequency > 0.01) {
          const l1 = q.tests['first-lyapunov-coefficient'];
          expect(Math.abs(l1 - planarL1(q.parameter) / measure)).toBeLessThan(1e-6 * Math.max(1, Math.abs(l1)));
        }
      }
      const specials = run.specials.filter((s): s is CurveSpecialPoint => s.kind !== 'end');
      expect(specials.map((s) => s.kind)).toEqual(['bautin']);
      expect(specials[0].located).toBe(true);
      const kb = planarBautin();
      expect(Math.abs(specials[0].value - kb)).toBeLessThan(1e-8);
      expect(Math.abs(specials[0].free - hopfF(kb))).toBeLessThan(1e-8);
    });

    test('from a Hopf point of a one-parameter run: the curve reaches the Bogdanov–Takens point, where ω → 0 and it ends', () => {
      const k = 0.05;
      // the upper uniform state at F = 0.035 (stable), followed as F falls
      const params = resolveParameters(problem, { ...p, k, F: 0.035 });
      const engine = new Continuation(
        problem,
        params,
        settings({ parameter: 'F', bounds: [0.02, 0.04], direction: 'decrease', step: { initial: 0.002, min: 1e-8, max: 0.004 }, stability: { eigenvalues: 4 } }),
        { start: uniformStart(problem, upperState(0.035, k), params) },
      );
      let hopf: HopfPoint | undefined;
      try {
        for (const e of engine.events()) if (e.type === 'special' && e.point.kind === 'hopf') hopf ??= e.point;
      } finally {
        engine.dispose();
      }
      expect(hopf).toBeDefined();
      // Gray & Scott 1984: the Hopf point at k = 0.05 (its location to the one-parameter engine's 1e-8)
      expect(Math.abs(hopf!.value - hopfF(k))).toBeLessThan(1e-7);
      const run = runCurve(problem, { ...p, k, F: hopf!.value }, { ...hopfSettings, direction: 'increase' }, { start: hopf!.u, atPoint: true, frequency: hopf!.frequency });
      expect(run.ends.map((e) => e.reason)).toEqual(['bogdanov-takens']);
      const specials = run.specials.filter((s): s is CurveSpecialPoint => s.kind !== 'end');
      expect(specials.map((s) => s.kind)).toEqual(['bogdanov-takens']);
      const bt = specials[0];
      expect(bt.located).toBe(true);
      // ω → 0 at the end, which is the Bogdanov–Takens point k = F = 1/16 (Gray & Scott 1984)
      expect(Math.abs(bt.tests.frequency)).toBeLessThan(1e-9);
      expect(Math.abs(bt.value - 1 / 16)).toBeLessThan(1e-9);
      expect(Math.abs(bt.free - 1 / 16)).toBeLessThan(1e-9);
      const last = run.points[run.points.length - 1];
      expect(last.parameter).toBe(bt.value);
      for (const q of run.points) {
        expect(Math.abs((q.free + q.parameter) ** 2 - q.free * Math.sqrt(q.parameter))).toBeLessThan(1e-9);
        expect(Math.abs(q.tests.frequency ** 2 - (q.free + q.parameter) * (q.parameter - q.free))).toBeLessThan(1e-9);
      }
      // ω falls to 0 over the last points (it peaks near k = 0.054 on the way)
      const omegas = run.points.map((q) => q.tests.frequency).slice(-4);
      for (let i = 1; i < omegas.length; i++) expect(omegas[i]).toBeLessThan(omegas[i - 1]);
    });
  });
}
