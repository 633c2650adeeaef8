import { describe, expect, test } from 'vitest';
import fc from 'fast-check';
import { observedOrder, runModel, settings } from './collect.js';
import type { FoldPoint } from '../../src/continuation/types.js';

/**
 * Exact solutions of 1D Bratu u'' + λ e^u = 0, u(0) = u(1) = 0 (Bratu 1914):
 *   u(x) = −2 ln[cosh((x − ½)θ/2) / cosh(θ/4)],  with θ = √(2λ) cosh(θ/4),
 * two solutions for 0 < λ < λ*, where λ* = 3.513830719125… is the maximum of
 * λ(θ) = θ² / (2 cosh²(θ/4)), reached where (θ/4) tanh(θ/4) = 1.
 */
const LAMBDA_STAR = 3.513830719125; // exact, Bratu 1914 (digits from the condition above)

function thetaRoots(lambda: number): [number, number] {
  // roots of G(θ) = θ − √(2λ) cosh(θ/4) on either side of the fold's θ* (solve (θ/4)tanh(θ/4) = 1)
  let a = 0;
  let b = 20;
  for (let k = 0; k < 200; k++) {
    const m = (a + b) / 2;
    if ((m / 4) * Math.tanh(m / 4) < 1) a = m;
    else b = m;
  }
  const thetaStar = (a + b) / 2;
  const g = (t: number) => t - Math.sqrt(2 * lambda) * Math.cosh(t / 4);
  const bisect = (lo: number, hi: number) => {
    for (let k = 0; k < 200; k++) {
      const m = (lo + hi) / 2;
      if (Math.sign(g(m)) === Math.sign(g(lo))) lo = m;
      else hi = m;
    }
    return (lo + hi) / 2;
  };
  return [bisect(0, thetaStar), bisect(thetaStar, 60)];
}

function exactU(theta: number, x: number): number {
  return -2 * Math.log(Math.cosh((x - 0.5) * (theta / 2)) / Math.cosh(theta / 4));
}

describe('1D Bratu', () => {
  test('the condition (θ/4)tanh(θ/4) = 1 gives λ* = 3.513830719125 (check of the test oracle itself)', () => {
    const [t1, t2] = thetaRoots(LAMBDA_STAR - 1e-9);
    expect(Math.abs(t1 - t2)).toBeLessThan(1e-3);
  });

  test('the located fold converges to λ* at second order over four grids', () => {
    const folds: number[] = [];
    for (const intervals of [16, 32, 64, 128]) {
      const run = runModel('bratu', { grid: { intervals: [intervals] } }, { lambda: 0.5 }, settings({ parameter: 'lambda', bounds: [0, 10], step: { initial: 0.3, min: 1e-8, max: 0.5 }, stopWhen: [{ monitor: 'max', above: 2.5 }] }));
      const fold = run.specials.find((s): s is FoldPoint => s.kind === 'fold');
      expect(fold?.located).toBe(true);
      expect(fold?.turn).toBe('maximum');
      folds.push(fold!.value);
    }
    const errors = folds.map((f) => Math.abs(f - LAMBDA_STAR));
    // discretisation error falls as h²: each halving of h divides it by about 4
    for (let k = 1; k < errors.length; k++) expect(errors[k - 1] / errors[k]).toBeGreaterThan(3.9);
    const p = observedOrder(folds[1], folds[2], folds[3]);
    expect(Math.abs(p - 2)).toBeLessThan(0.1);
    // Richardson extrapolation of the two finest grids with p = 2
    const extrapolated = folds[3] + (folds[3] - folds[2]) / 3;
    expect(Math.abs(extrapolated - LAMBDA_STAR)).toBeLessThan(1e-6);
  });

  test('the fold is located to 1e-10 in the parameter: two runs with different steps agree', () => {
    const locate = (initial: number) =>
      (runModel('bratu', { grid: { intervals: [40] } }, { lambda: 0.5 }, settings({ parameter: 'lambda', bounds: [0, 10], step: { initial, min: 1e-8, max: initial }, stopWhen: [{ monitor: 'max', above: 2 }] })).specials.find((s) => s.kind === 'fold') as FoldPoint).value;
    expect(Math.abs(locate(0.37) - locate(0.11))).toBeLessThan(1e-10);
  });

  test('the branch passes the fold and reaches max u = 8; both solutions at λ = 2 match the exact family to O(h²)', () => {
    const errs: number[][] = [];
    for (const intervals of [32, 64]) {
      const h = 1 / intervals;
      // start on the lower branch at λ = 2, pass the fold, return to the bound λ = 2 on the upper branch
      const run = runModel('bratu', { grid: { intervals: [intervals] } }, { lambda: 2 }, settings({ parameter: 'lambda', bounds: [2, 10], step: { initial: 0.2, min: 1e-8, max: 0.5 } }));
      const pts = run.branch(1);
      const lower = pts[0];
      const upper = pts[pts.length - 1];
      expect(run.ends[0].reason).toBe('parameter-bound');
      expect(upper.parameter).toBe(2);
      const [t1, t2] = thetaRoots(2);
      const err = (u: Float64Array, theta: number) => Math.max(...Array.from(u, (v, i) => Math.abs(v - exactU(theta, (i + 1) * h))));
      errs.push([err(lower.u, t1), err(upper.u, t2)]);
      expect(upper.monitors.max).toBeGreaterThan(lower.monitors.max + 1);
    }
    // second order: the error falls by about four when h halves, on both solutions
    expect(errs[0][0] / errs[1][0]).toBeGreaterThan(3.8);
    expect(errs[0][1] / errs[1][1]).toBeGreaterThan(3.8);
    expect(errs[1][1]).toBeLessThan(0.05);

    const high = runModel('bratu', { grid: { intervals: [64] } }, { lambda: 0.5 }, settings({ parameter: 'lambda', bounds: [0, 10], step: { initial: 0.2, min: 1e-8, max: 0.5 }, stopWhen: [{ monitor: 'max', above: 8 }] }));
    expect(high.ends[0].reason).toBe('monitor-bound');
    const last = high.points[high.points.length - 1];
    expect(last.monitors.max).toBeGreaterThan(8);
    expect(high.specials.filter((s) => s.kind === 'fold')).toHaveLength(1);
  });

  test('natural-parameter continuation stops at the fold with a clear reason, where arclength passes it', () => {
    const run = runModel('bratu', { grid: { intervals: [32] } }, { lambda: 0.5 }, settings({ parameter: 'lambda', bounds: [0, 10], method: 'natural', step: { initial: 0.2, min: 1e-5, max: 0.2 } }));
    expect(run.ends[0].reason).toBe('fold-not-passed');
    expect(run.ends[0].message).toMatch(/fold/);
    expect(run.ends[0].message).toMatch(/arclength/);
    const last = run.points[run.points.length - 1];
    expect(last.parameter).toBeLessThan(LAMBDA_STAR);
    expect(last.parameter).toBeGreaterThan(LAMBDA_STAR - 0.05);
  });

  test('every accepted point passes the residual test re-evaluated on its own state (property)', () => {
    fc.assert(
      fc.property(fc.double({ min: 0.05, max: 3, noNaN: true }), fc.double({ min: 0.02, max: 0.6, noNaN: true }), fc.constantFrom(1e-8, 1e-10), (lambda0, step, tol) => {
        // runProblem re-evaluates every point's residual and its test (src/problem/residual-size.ts)
        const run = runModel('bratu', { grid: { intervals: [24] } }, { lambda: lambda0 }, settings({ parameter: 'lambda', bounds: [0, 5], step: { initial: step, min: 1e-8, max: step }, maxPoints: 40, newton: { residualTolerance: tol, stepTolerance: tol, maxIterations: 10 } }));
        expect(run.points.length).toBeGreaterThan(1);
      }),
      { numRuns: 12 },
    );
  });
});
