/**
 * The cusp of u_t = Δu + p₁ + p₂u − u³ with no-flux walls (an expression model). Its uniform
 * states solve p₁ + p₂u − u³ = 0; they fold where p₂ = 3u², i.e. along (p₁, p₂) = (−2u³, 3u²),
 * the curve 27p₁² = 4p₂³, and the two folds meet at the cusp p₁ = p₂ = 0 (u = 0), where the
 * quadratic normal-form coefficient −6u vanishes (the standard cusp normal form; e.g. Kuznetsov,
 * *Elements of Applied Bifurcation Theory*, §8.2 — from memory).
 */
import { describe, expect, test } from 'vitest';
import { reactionDiffusion } from '../../../discretisations/expression/reaction-diffusion.js';
import type { CurveSpecialPoint } from '../../../src/continuation/curves/types.js';
import { curveSettings, independentResidual, runCurve, uniformStart } from './helpers.js';

function cuspProblem(grid: { intervals: number[]; length?: number[] }) {
  return reactionDiffusion({ grid, fields: ['u'], parameters: { p1: -0.5, p2: 1 }, reaction: { u: 'p1 + p2*u - u^3' }, diffusion: { u: 1 }, boundary: 'neumann', initial: { u: -1.2 } } as never);
}

describe('cusp of the cubic normal form (expression model, no-flux walls)', () => {
  for (const grid of [{ intervals: [8] }, { intervals: [4, 3] }]) {
    test(`${grid.intervals.length}D: the fold curve is 27p₁² = 4p₂³ and the cusp is at the origin to 1e-8`, () => {
      const problem = cuspProblem(grid);
      const p = { p1: -0.5, p2: 1 };
      const run = runCurve(
        problem,
        p,
        curveSettings({ follow: 'fold', parameter: 'p2', free: 'p1', bounds: [-0.5, 2], direction: 'decrease', step: { initial: 0.05, min: 1e-9, max: 0.1 } }),
        { start: uniformStart(problem, [-1.2], p) },
      );
      // the search met the fold of the lower states at p₂ = 1: p₁ = 2/(3√3)
      expect(run.points[0].parameter).toBe(1);
      expect(Math.abs(run.points[0].free - 2 / (3 * Math.sqrt(3)))).toBeLessThan(1e-9);
      expect(run.ends.map((e) => e.reason)).toEqual(['parameter-bound']);
      for (const q of run.points) {
        // the two fold branches (−2u³, 3u²) in (p₁, p₂)
        expect(Math.abs(27 * q.free ** 2 - 4 * q.parameter ** 3)).toBeLessThan(1e-9);
        expect(independentResidual(problem, q.u, { p1: q.free, p2: q.parameter })).toBeLessThan(1e-9);
        // u = ∓√(p₂/3) with p₁ = 2u³ on the curve: the state's value, uniform
        const u = q.u[0];
        expect(Math.abs(q.free + 2 * u ** 3)).toBeLessThan(1e-9);
        expect(Math.abs(q.parameter - 3 * u * u)).toBeLessThan(1e-9);
      }
      const specials = run.specials.filter((s): s is CurveSpecialPoint => s.kind !== 'end');
      expect(specials.map((s) => s.kind)).toEqual(['cusp']);
      expect(specials[0].located).toBe(true);
      expect(Math.abs(specials[0].value)).toBeLessThan(1e-8);
      expect(Math.abs(specials[0].free)).toBeLessThan(1e-8);
      expect(Math.abs(specials[0].u[0])).toBeLessThan(1e-4);
      // the coefficient changes sign across the cusp, from one fold branch to the other
      const before = run.points.filter((q) => q.arclength < specials[0].arclength);
      const after = run.points.filter((q) => q.arclength > specials[0].arclength);
      expect(new Set(before.map((q) => Math.sign(q.tests['cusp-coefficient']))).size).toBe(1);
      expect(new Set(after.map((q) => Math.sign(q.tests['cusp-coefficient']))).size).toBe(1);
      expect(Math.sign(before[0].tests['cusp-coefficient'])).toBe(-Math.sign(after[0].tests['cusp-coefficient']));
      // the coefficient is −6u times a positive normalisation: proportional to u along the curve
      const ratios = run.points.filter((q) => Math.abs(q.u[0]) > 0.05).map((q) => q.tests['cusp-coefficient'] / q.u[0]);
      for (const r of ratios) expect(Math.sign(r)).toBe(Math.sign(ratios[0]));
    });
  }
});
