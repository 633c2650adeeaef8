/**
 * The fold curve of Gray–Scott's uniform states in (k, F), followed on a 1D and a 2D grid.
 *
 * Uniform states (u, v ≠ 0): u v = F + k and F(1 − u) = (F + k) v, so (F + k) v² − F v +
 * F(F + k) = 0, whose two roots meet where F = 4(F + k)² (the fold curve), at v = √F. The
 * uniform Jacobian has det = (F + k)(v² − F) and trace = k − v², so along the fold the trace is
 * k − F = √F/2 − 2F, and the zero eigenvalue becomes double where it vanishes: F = k = 1/16,
 * the Bogdanov–Takens point (Gray & Scott 1984).
 * With Du = Dv = D the spatial modes q have eigenvalues λ(R_u) − D q², so when D q₁² exceeds the
 * largest trace on the curve (1/32, at F = 1/64) no other eigenvalue reaches zero on it: no other
 * codimension-two point may be reported.
 */
import { describe, expect, test } from 'vitest';
import { models } from '../../../discretisations/index.js';
import type { CurveSpecialPoint } from '../../../src/continuation/curves/types.js';
import { curveSettings, denseEigenvalues, independentResidual, jacobianScale, runCurve, uniformStart } from './helpers.js';

/** A uniform state on the upper root at (F, k), inside the region of three states. */
function upperState(F: number, k: number): [number, number] {
  const s = F + k;
  const v = (F + Math.sqrt(F * F - 4 * s * s * F)) / (2 * s);
  return [1 - (s * v) / F, v];
}

const settings = curveSettings({
  follow: 'fold',
  parameter: 'k',
  free: 'F',
  bounds: [0.02, 0.0625 + 0.004],
  freeBounds: [0, 1],
  step: { initial: 0.004, min: 1e-9, max: 0.008 },
  newton: { residualTolerance: 1e-10, stepTolerance: 1e-10, maxIterations: 12 },
});

for (const grid of [{ intervals: [10] }, { intervals: [5, 4], length: [1, 1.3] }]) {
  const dim = grid.intervals.length;
  describe(`Gray–Scott uniform fold curve, ${dim}D grid`, () => {
    const problem = models['gray-scott'].factory({ grid, boundary: 'neumann' } as never);
    const p = { F: 0.05, k: 0.05, Du: 1, Dv: 1 };
    const run = runCurve(problem, p, settings, { start: uniformStart(problem, upperState(0.05, 0.05), p) });

    test('every point lies on F = 4(F + k)² to 1e-9 and is a steady state with a zero eigenvalue (dense check)', () => {
      // the curve passes the Bogdanov–Takens point, where it turns back in k, and ends at the lower k bound
      expect(run.ends.map((e) => e.reason)).toEqual(['parameter-bound']);
      expect(run.points.length).toBeGreaterThan(10);
      for (const q of run.points) {
        // Gray & Scott 1984: the uniform saddle-node curve
        expect(Math.abs(q.free - 4 * (q.free + q.parameter) ** 2)).toBeLessThan(1e-9);
        const params = { ...p, k: q.parameter, F: q.free };
        expect(independentResidual(problem, q.u, params)).toBeLessThan(1e-9);
        // the state is uniform with v = √F (the double root)
        const v = q.u[1];
        expect(Math.abs(v - Math.sqrt(q.free))).toBeLessThan(1e-7);
        // dense eigenvalues (ml-matrix): one of them is zero
        const eig = denseEigenvalues(problem, q.u, params);
        expect(Math.hypot(eig[0].re, eig[0].im)).toBeLessThan(1e-9 * jacobianScale(problem, q.u, params));
      }
    });

    test('the Bogdanov–Takens point is located at F = k = 1/16 to 1e-7, and nothing else is reported', () => {
      const specials = run.specials.filter((s): s is CurveSpecialPoint => s.kind !== 'end');
      expect(specials.map((s) => s.kind)).toEqual(['bogdanov-takens']);
      const bt = specials[0];
      expect(bt.located).toBe(true);
      // Gray & Scott 1984: trace = k − v² = 0 on the fold curve at F = k = 1/16
      expect(Math.abs(bt.value - 1 / 16)).toBeLessThan(1e-7);
      expect(Math.abs(bt.free - 1 / 16)).toBeLessThan(1e-7);
      // the zero eigenvalue is double there (dense check): two eigenvalues of size ~√ε‖J‖
      const eig = denseEigenvalues(problem, bt.u, { ...p, k: bt.value, F: bt.free });
      const scale = jacobianScale(problem, bt.u, { ...p, k: bt.value, F: bt.free });
      expect(Math.hypot(eig[1].re, eig[1].im)).toBeLessThan(1e-5 * scale);
      expect(Math.hypot(eig[2].re, eig[2].im)).toBeGreaterThan(1e-3);
    });

    test('the test functions change sign only at the Bogdanov–Takens point, on the points either side of it', () => {
      // ⟨w, v⟩ is proportional to the other eigenvalue, the trace (its orientation is fixed at the
      // start, so the sign of the product is what is constant)
      const signs = new Set(run.points.map((q) => Math.sign(q.tests['bogdanov-takens']) * Math.sign(q.parameter - q.free)));
      expect(signs.size).toBe(1);
      expect(new Set(run.points.map((q) => q.tests['determinant-sign'])).size).toBe(1);
      const bt = run.specials.find((s) => s.kind === 'bogdanov-takens')!;
      const before = run.points.filter((q) => q.arclength < bt.arclength);
      expect(before.length).toBeGreaterThan(0);
      expect(before.length).toBeLessThan(run.points.length);
    });
  });
}
