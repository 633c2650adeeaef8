/**
 * The Hopf line of the Brusselator's uniform state on a no-flux line, in (a, b).
 *
 * The uniform state (a, b/a) has the Jacobian [[b − 1, a²], [−b, −a²]] for the uniform mode: a
 * pair ±iω crosses the axis at b = 1 + a² with ω = a (Prigogine & Lefever 1968). Spatial mode n
 * of the grid (discrete eigenvalue q² of −Δ with no-flux ends) has det J_n =
 * −(b − 1 − Du q²)(a² + Dv q²) + a²b, which on the Hopf line is a²(1 − (Dv − Du)q²) + Du Dv q⁴:
 * a real eigenvalue crosses zero while the pair sits on the axis — a zero-Hopf point — where
 * a² = Du Dv q⁴ / ((Dv − Du)q² − 1). With Du = 1, Dv = 4 on a line of length π with 8 intervals,
 * the modes n = 1 and 2 give two such points inside a ∈ [0.5, 3] (n = 3 lies beyond).
 */
import { describe, expect, test } from 'vitest';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { models } from '../../../discretisations/index.js';
import type { CurveSpecialPoint } from '../../../src/continuation/curves/types.js';
import { denseJacobian } from '../../discretisations/helpers.js';
import { curveSettings, independentResidual, runCurve, uniformStart } from '../curves/helpers.js';
import { cx, planarLyapunov, type Vec } from './planar.js';

/** Discrete eigenvalue of −d²/dx² with no-flux ends, mode n, N intervals on length L (LeVeque 2007, §2.10; from memory, checked against ml-matrix in test/discretisations/laplacian.test.ts). */
const q2 = (n: number, N: number, L: number): number => ((4 * N * N) / (L * L)) * Math.sin((n * Math.PI) / (2 * N)) ** 2;

const Du = 1;
const Dv = 4;
const N = 8;
const L = Math.PI;

describe('Brusselator: the uniform Hopf line b = 1 + a², ω = a, and its zero-Hopf points', () => {
  const problem = models.brusselator.factory({ grid: { intervals: [N], length: [L] }, boundary: 'neumann' } as never);
  const p = { a: 1, b: 1.5, Du, Dv };
  // the first Hopf point met raising b from 1.5 at a = 1, then both ways in a
  const run = runCurve(
    problem,
    p,
    curveSettings({ follow: 'hopf', parameter: 'a', free: 'b', bounds: [0.5, 3], direction: 'both', eigenvalues: 6, step: { initial: 0.05, min: 1e-9, max: 0.2 } }),
    { start: uniformStart(problem, [1, 1.5], p) },
  );

  test('every point lies on b = 1 + a² with ω = a to 1e-9, a steady state with the pair ±iω (dense eigenvalues at every point)', () => {
    expect(run.ends.map((e) => e.reason)).toEqual(['parameter-bound', 'parameter-bound']);
    expect(run.logs.some((l) => /first Hopf point met moving b from 1.5: b = 2\b/.test(l))).toBe(true);
    expect(run.points.length).toBeGreaterThan(20);
    const as = run.points.map((q) => q.parameter);
    expect(Math.min(...as)).toBe(0.5);
    expect(Math.max(...as)).toBe(3);
    for (const q of run.points) {
      // Prigogine & Lefever 1968
      expect(Math.abs(q.free - (1 + q.parameter ** 2))).toBeLessThan(1e-9);
      expect(Math.abs(q.tests.frequency - q.parameter)).toBeLessThan(1e-9);
      const params = { ...p, a: q.parameter, b: q.free };
      expect(independentResidual(problem, q.u, params)).toBeLessThan(1e-9);
      // dense eigenvalues (ml-matrix): the pair ±iω, and the sign of det J the test function reports
      const e = new EigenvalueDecomposition(new Matrix(denseJacobian(problem, q.u, params)));
      const pairs = e.realEigenvalues.map((re, i) => ({ re, im: e.imaginaryEigenvalues[i] }));
      const nearest = pairs.reduce((best, v) => (Math.hypot(v.re, v.im - q.parameter) < Math.hypot(best.re, best.im - q.parameter) ? v : best));
      expect(Math.hypot(nearest.re, nearest.im - q.parameter)).toBeLessThan(1e-9);
      const realNegative = pairs.filter((v) => Math.abs(v.im) < 1e-12 && v.re < 0).length;
      if (Math.min(...pairs.map((v) => Math.abs(v.re) + Math.abs(v.im - 0))) > 1e-6) {
        expect(q.tests['jacobian-determinant-sign']).toBe(realNegative % 2 === 0 ? 1 : -1);
      }
    }
  });

  test('the zero-Hopf points a² = Du Dv q⁴/((Dv − Du)q² − 1) of modes 1 and 2 to 1e-8, and nothing else', () => {
    const expected = [1, 2, 3]
      .map((n) => q2(n, N, L))
      .filter((s) => (Dv - Du) * s > 1)
      .map((s) => Math.sqrt((Du * Dv * s * s) / ((Dv - Du) * s - 1)))
      .filter((a) => a >= 0.5 && a <= 3)
      .sort((x, y) => x - y);
    expect(expected).toHaveLength(2);
    const specials = run.specials.filter((s): s is CurveSpecialPoint => s.kind !== 'end');
    expect(specials.map((s) => s.kind)).toEqual(['zero-hopf', 'zero-hopf']);
    const found = specials.map((s) => s.value).sort((x, y) => x - y);
    found.forEach((a, i) => expect(Math.abs(a - expected[i])).toBeLessThan(1e-8));
    for (const s of specials) {
      expect(s.located).toBe(true);
      expect(Math.abs(s.free - (1 + s.value ** 2))).toBeLessThan(1e-9);
    }
  });

  test('l₁ agrees with the planar formula for the uniform kinetics divided by the line length, negative (supercritical) all along', () => {
    for (const q of run.points) {
      const a = q.parameter;
      const b = q.free;
      // u²v about (a, b/a): B(x, y) = (1, −1)·[2(b/a) x_u y_u + 2a(x_u y_v + x_v y_u)], C(x, y, z) = (1, −1)·2(x_u y_u z_v + x_u y_v z_u + x_v y_u z_u)
      const { add, mul, re, sub } = cx;
      const Bf = (x: Vec, y: Vec): Vec => {
        const s = add(mul(re((2 * b) / a), mul(x[0], y[0])), mul(re(2 * a), add(mul(x[0], y[1]), mul(x[1], y[0]))));
        return [s, sub(re(0), s)];
      };
      const Cf = (x: Vec, y: Vec, z: Vec): Vec => {
        const s = mul(re(2), add(add(mul(mul(x[0], y[0]), z[1]), mul(mul(x[0], y[1]), z[0])), mul(mul(x[1], y[0]), z[0])));
        return [s, sub(re(0), s)];
      };
      const planar = planarLyapunov(
        [
          [b - 1, a * a],
          [-b, -a * a],
        ],
        Bf,
        Cf,
      );
      const l1 = q.tests['first-lyapunov-coefficient'];
      expect(Math.abs(l1 - planar.l1 / L)).toBeLessThan(1e-6 * Math.max(1, Math.abs(l1)));
      expect(l1).toBeLessThan(0);
    }
  });
});
