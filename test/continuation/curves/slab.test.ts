/**
 * The ignition limit of a unit slab with convective faces, u'' + λeᵘ = 0, u' = Bi·u at x = 0
 * and −u' = Bi·u at x = 1, followed in (Bi, λ) as a fold curve (bratu, boundary robin).
 *
 * Closed form (derived here; the symmetric family of Bratu 1914 with the convective condition):
 * u = m − 2 ln cosh(θ(x − ½)/2) solves u'' + λeᵘ = 0 when λ eᵐ = θ²/2. At x = 0,
 * u'(0) = θ tanh(θ/4) and u(0) = m − 2 ln cosh(θ/4), so the face condition gives
 *
 *     λ(θ; Bi) = θ² / (2 cosh²(θ/4)) · exp(−θ tanh(θ/4) / Bi),
 *
 * and the ignition limit is λ*(Bi) = max over θ of λ(θ; Bi). As Bi → 0 the slab is nearly
 * isothermal: λ ≈ (s/2) e^(−s/(4Bi)) with s = θ², maximal at s = 4Bi, λ* → 2Bi/e (Semenov's
 * thermal-explosion limit; Semenov 1928, from memory). As Bi → ∞ the faces are held at
 * u = 0 and λ* → 3.513830719 (the Dirichlet fold, Bratu 1914).
 */
import { describe, expect, test } from 'vitest';
import { models } from '../../../discretisations/index.js';
import type { CurvePoint } from '../../../src/continuation/curves/types.js';
import { curveSettings, ignitionLimit, runCurve } from './helpers.js';

const LAMBDA_DIRICHLET = 3.513830719125; // Bratu 1914: the fold where (θ/4) tanh(θ/4) = 1

function slab(intervals: number) {
  return models.bratu.factory({ grid: { intervals: [intervals] }, boundary: 'robin' } as never);
}

/** λ on the fold curve at Bi = target: the curve from the first fold met at Bi = 1, ending on the bound. */
function limitAt(intervals: number, target: number, maxStep = 2): CurvePoint {
  const problem = slab(intervals);
  const up = target > 1;
  const run = runCurve(
    problem,
    { lambda: 0.1, biot: 1 },
    curveSettings({
      follow: 'fold',
      parameter: 'biot',
      free: 'lambda',
      bounds: up ? [1, target] : [target, 1],
      direction: up ? 'increase' : 'decrease',
      step: { initial: 0.05, min: 1e-9, max: maxStep },
      newton: { residualTolerance: 1e-11, stepTolerance: 1e-11, maxIterations: 12 },
    }),
  );
  expect(run.ends.map((e) => e.reason)).toEqual(['parameter-bound']);
  const last = run.points[run.points.length - 1];
  expect(last.parameter).toBe(target);
  return last;
}

describe('the slab ignition limit against the Biot number', () => {
  test('the closed form tends to Semenov’s 2·Bi/e as Bi → 0 and to the Dirichlet fold as Bi → ∞ (check of the oracle)', () => {
    for (const Bi of [1e-3, 1e-4]) expect(Math.abs(ignitionLimit(Bi) / ((2 * Bi) / Math.E) - 1)).toBeLessThan(2 * Bi);
    expect(Math.abs(ignitionLimit(1e6) - LAMBDA_DIRICHLET)).toBeLessThan(1e-4);
    expect(ignitionLimit(1)).toBeLessThan(ignitionLimit(10));
  });

  test('at Bi = 0.1, 1 and 10 the curve converges to the closed form at second order, within the refinement’s error estimate', () => {
    for (const Bi of [0.1, 1, 10]) {
      const exact = ignitionLimit(Bi);
      const values = [20, 40, 80].map((N) => (Bi === 1 ? pointAtStart(N) : limitAt(N, Bi).free));
      const errors = values.map((v) => v - exact);
      // second order: each halving of h divides the error by about 4
      for (let k = 1; k < errors.length; k++) expect(errors[k - 1] / errors[k]).toBeGreaterThan(3.8);
      for (let k = 1; k < errors.length; k++) expect(errors[k - 1] / errors[k]).toBeLessThan(4.2);
      // the refinement's own estimate of the finest grid's error (Richardson, p = 2) matches the true error
      const estimate = (values[2] - values[1]) / 3;
      expect(Math.abs(errors[2] - -estimate) / Math.abs(errors[2])).toBeLessThan(0.05);
      // and the extrapolated value is far closer to the closed form
      const extrapolated = values[2] + (values[2] - values[1]) / 3;
      expect(Math.abs(extrapolated - exact)).toBeLessThan(0.02 * Math.abs(errors[2]));
    }
  });

  test('small and large Biot numbers: the curve approaches 2·Bi/e and 3.5138 (40 intervals)', () => {
    const low = limitAt(40, 0.001);
    expect(Math.abs(low.free / ((2 * 0.001) / Math.E) - 1)).toBeLessThan(3e-3);
    const high = limitAt(40, 1000, 100);
    // λ*(1000) = 3.4998 lies 14/Bi below the Dirichlet fold; 40 intervals add about 1e-3
    expect(Math.abs(high.free - ignitionLimit(1000))).toBeLessThan(2e-3);
    expect(high.free).toBeLessThan(LAMBDA_DIRICHLET);
    expect(LAMBDA_DIRICHLET - high.free).toBeLessThan(0.02);
  });
});

/** λ at the first point of the curve (the fold met at Bi = 1, converged by the fold system). */
function pointAtStart(intervals: number): number {
  const run = runCurve(
    slab(intervals),
    { lambda: 0.1, biot: 1 },
    curveSettings({ follow: 'fold', parameter: 'biot', free: 'lambda', bounds: [1, 2], maxPoints: 1, newton: { residualTolerance: 1e-11, stepTolerance: 1e-11, maxIterations: 12 } }),
  );
  expect(run.points[0].parameter).toBe(1);
  return run.points[0].free;
}
