/**
 * Double-Hopf points: two diffusively uncoupled oscillators (an expression model, four fields,
 * no-flux walls), each a Hopf normal form with its own parameter:
 *
 *     u₁' = D₁Δu₁ + m₁u₁ − w₁v₁ − (u₁² + v₁²)u₁,    v₁' = D₁Δv₁ + w₁u₁ + m₁v₁ − (u₁² + v₁²)v₁,
 *     u₂' = D₂Δu₂ + m₂u₂ − w₂v₂ + (u₂² + v₂²)u₂,    v₂' = D₂Δv₂ + w₂u₂ + m₂v₂ + (u₂² + v₂²)v₂.
 *
 * The state 0 has the eigenvalues m₁ − D₁q² ± iw₁ and m₂ − D₂q² ± iw₂ (q² the discrete
 * eigenvalues of −Δ): the Hopf line of the first oscillator is m₁ = 0, that of the second m₂ = 0,
 * and they cross at the double-Hopf point (m₁, m₂) = (0, 0) (exact). Following the first
 * oscillator's Hopf curve as m₂ moves, the second pair reaches the axis there. The first
 * oscillator's l₁ is 2·(−1)/(w₁|Ω|) all along (the normal form's cubic coefficient −1;
 * Guckenheimer & Holmes 1983, (3.4.11), normalised as in criticality.test.ts).
 */
import { describe, expect, test } from 'vitest';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { reactionDiffusion } from '../../../discretisations/expression/reaction-diffusion.js';
import type { CurveSpecialPoint } from '../../../src/continuation/curves/types.js';
import { denseJacobian } from '../../discretisations/helpers.js';
import { curveSettings, runCurve, uniformStart } from '../curves/helpers.js';

describe('double-Hopf point of two uncoupled oscillators', () => {
  for (const grid of [{ intervals: [5] }, { intervals: [3, 2], length: [1, 0.8] }]) {
    test(`${grid.intervals.length}D: located at (m₁, m₂) = (0, 0) to 1e-8; the test function is the second pair's real part (dense eigenvalues at every point)`, () => {
      const pr = { m1: 0, m2: -0.6, w1: 1, w2: 1.7 };
      const problem = reactionDiffusion({
        grid,
        fields: ['u1', 'v1', 'u2', 'v2'],
        parameters: pr,
        reaction: {
          u1: 'm1*u1 - w1*v1 - (u1^2+v1^2)*u1',
          v1: 'w1*u1 + m1*v1 - (u1^2+v1^2)*v1',
          u2: 'm2*u2 - w2*v2 + (u2^2+v2^2)*u2',
          v2: 'w2*u2 + m2*v2 + (u2^2+v2^2)*v2',
        },
        diffusion: { u1: 0.1, v1: 0.1, u2: 0.2, v2: 0.2 },
        boundary: 'neumann',
        initial: { u1: 0, v1: 0, u2: 0, v2: 0 },
      } as never);
      const run = runCurve(
        problem,
        pr,
        curveSettings({ follow: 'hopf', parameter: 'm2', free: 'm1', bounds: [-0.6, 0.5], eigenvalues: 6, step: { initial: 0.05, min: 1e-9, max: 0.2 } }),
        { start: uniformStart(problem, [0, 0, 0, 0], pr), atPoint: true, frequency: pr.w1 },
      );
      expect(run.ends.map((e) => e.reason)).toEqual(['parameter-bound']);
      const measure = grid.intervals.reduce((m, _n, i) => m * (grid.length?.[i] ?? 1), 1);
      for (const q of run.points) {
        expect(Math.abs(q.free)).toBeLessThan(1e-10);
        expect(Math.abs(q.tests.frequency - pr.w1)).toBeLessThan(1e-10);
        expect(Math.abs(q.tests['first-lyapunov-coefficient'] + 2 / (pr.w1 * measure))).toBeLessThan(1e-6);
        // dense eigenvalues (ml-matrix): the other pair nearest the axis is m₂ ± iw₂, all others stable
        const e = new EigenvalueDecomposition(new Matrix(denseJacobian(problem, q.u, { ...pr, m1: q.free, m2: q.parameter })));
        const others = e.realEigenvalues.map((re, i) => ({ re, im: e.imaginaryEigenvalues[i] })).filter((v) => v.im > 0 && Math.abs(v.im - pr.w1) > 1e-6);
        const nearest = others.reduce((b, v) => (Math.abs(v.re) < Math.abs(b.re) ? v : b));
        const unstable = others.filter((v) => v.re > 0).length;
        expect(Math.abs(q.tests['next-pair-real-part'] - (unstable % 2 === 0 ? 1 : -1) * Math.abs(nearest.re))).toBeLessThan(1e-8);
      }
      const specials = run.specials.filter((s): s is CurveSpecialPoint => s.kind !== 'end');
      expect(specials.map((s) => s.kind)).toEqual(['double-hopf']);
      expect(specials[0].located).toBe(true);
      expect(Math.abs(specials[0].value)).toBeLessThan(1e-8);
      expect(Math.abs(specials[0].free)).toBeLessThan(1e-8);
    });
  }
});
