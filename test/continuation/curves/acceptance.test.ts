/**
 * Curve points converge on the true residual (issue 11, item 1): a state whose residual only
 * looks small after row scaling is refused.
 *
 * Reasoning (our own): the rows of a fourth-order beam are divided by max(1, row max |J|) ≈
 * 6·EI/h⁴ in the scaled measure (src/continuation/curves/scale.ts), 6·4·10⁷ ≈ 2.5·10⁸ on 80
 * intervals of a unit beam with EI = 1. A smooth second-mode error δ = η sin(2πx) changes F by
 * about (EI(2π)⁴ − P(2π)² + kf)·δ ≈ 10³·δ (the continuum operator, from memory), so the scaled
 * F stays far below the curve tolerance 1e-9 up to η ≈ 10⁻⁴ (the fold's g, which an
 * antisymmetric δ changes little, then decides), while the true ‖F‖_w ≈ 6·10² η is thousands
 * of times the test rtol·‖terms‖_w + 16ε‖rounding‖_w (src/problem/residual-size.ts) already at
 * η = 10⁻⁵. The old corrector accepted such a predictor with 0 iterations (its only residual
 * test was that scaled measure, which `evaluate` still returns as the progress measure); the
 * new one refuses it and corrects it back onto the fold, recording the state's true ‖F‖_w.
 */
import { describe, expect, test } from 'vitest';
import { models } from '../../../discretisations/index.js';
import { FoldSystem } from '../../../src/continuation/curves/fold-system.js';
import { correctCurve, curveWork, residualPasses } from '../../../src/continuation/curves/newton.js';
import { defaultCurveSettings } from '../../../src/continuation/curves/types.js';
import { resolveParameters, weightedNorm } from '../../../src/problem/problem.js';
import { curveSettings, runCurve } from './helpers.js';

describe('curve acceptance on the true residual (beam-foundation fold, 80 intervals)', () => {
  const N = 80;
  const problem = models['beam-foundation'].factory({ grid: { intervals: [N] }, ends: 'pinned' } as never);
  const given = { P: 0, kf: 100, k3: 100, imperfection: 1e-3 };
  // the limit load at ε = 1e-3: the first point of a fold curve in (ε, P)
  const run = runCurve(problem, given, curveSettings({ follow: 'fold', parameter: 'imperfection', free: 'P', bounds: [1e-6, 1e-3], direction: 'decrease', maxPoints: 1 }));
  const rtol = defaultCurveSettings.newton.residualTolerance;

  test('a state the scaled residual accepts is refused, then corrected onto the fold', () => {
    expect(run.points.length).toBeGreaterThan(0);
    const q = run.points[0];
    const base = resolveParameters(problem, given);
    const p = { ...base, P: q.free, imperfection: q.parameter };
    // the recorded residual is the true ‖F‖_w of the saved state
    const f = new Float64Array(problem.size);
    problem.residual(q.u, p, f);
    expect(q.residual).toBe(weightedNorm(problem.weights, f));

    const sys = new FoldSystem(problem, base, 'imperfection', 'P');
    try {
      const y0 = sys.fromState(q.u, p);
      sys.initialise(y0);
      sys.setScale(y0);
      const g = new Float64Array(sys.size - 1);
      sys.evaluate(y0, g);
      expect(residualPasses(sys, rtol)).toBe(true);
      // a second-mode error in deflection
      const eta = 1e-5;
      const { shape, data } = problem.toNodeArray(q.u, p);
      const x = Array.from({ length: data.length }, (_, i) => i / (data.length - 1));
      const bad = problem.fromNodeArray(shape, Float64Array.from(data, (w, i) => w + eta * Math.sin(2 * Math.PI * x[i])), p);
      const yBad = sys.fromState(bad, p);
      let maxChange = 0;
      for (let i = 0; i < problem.size; i++) maxChange = Math.max(maxChange, Math.abs(bad[i] - q.u[i]));
      expect(maxChange).toBeGreaterThan(0.9 * eta);
      // the old acceptance measure passes, the true residual test does not
      const scaled = sys.evaluate(yBad, g);
      expect(scaled).toBeLessThan(rtol);
      expect(residualPasses(sys, rtol)).toBe(false);
      expect(sys.stateResidual.norm).toBeGreaterThan(1e3 * sys.stateResidual.bound(rtol));
      // the corrector, started there with the parameter fixed, takes Newton steps back to the fold
      const e = new Float64Array(sys.size);
      e[sys.parameterIndex] = 1;
      const y = yBad.slice();
      const r = correctCurve(sys, y, e, yBad.slice(), { ...defaultCurveSettings.newton, exact: true }, curveWork(sys.size));
      expect(r.converged).toBe(true);
      expect(r.iterations).toBeGreaterThan(0);
      let err = 0;
      for (let i = 0; i < sys.size; i++) err = Math.max(err, Math.abs(y[i] - y0[i]));
      expect(err).toBeLessThan(1e-7);
      const pr = sys.params(y);
      problem.residual(sys.state(y), pr, f);
      expect(r.residual).toBe(weightedNorm(problem.weights, f));
    } finally {
      sys.dispose();
    }
  });
});
