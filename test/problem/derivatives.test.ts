/** Second-order derivatives: exact (model-supplied) against directional finite differences. */
import { describe, expect, it } from 'vitest';
import { derivativeEvaluator, finiteDifferenceDerivatives } from '../../src/problem/derivatives.js';
import { models } from '../../discretisations/index.js';
import { resolveParameters } from '../../src/problem/problem.js';
import codeModel from '../fixtures/code-model.js';

function rel(a: Float64Array, b: Float64Array): number {
  let d = 0;
  let s = 0;
  for (let i = 0; i < a.length; i++) {
    d = Math.max(d, Math.abs(a[i] - b[i]));
    s = Math.max(s, Math.abs(a[i]), Math.abs(b[i]));
  }
  return s === 0 ? 0 : d / s;
}

describe('second derivatives', () => {
  const cases: [string, Record<string, unknown>][] = [
    ['bratu', { grid: { intervals: [12, 10] } }],
    ['gray-scott', { grid: { intervals: [30] }, initial: 'pulse', 'phase-condition': true }],
    ['brusselator', { grid: { intervals: [8, 8] }, initial: 'perturbed' }],
    ['elastica', { grid: { intervals: [20] } }],
    ['beam-foundation', { grid: { intervals: [20] } }],
  ];
  for (const [id, opts] of cases) {
    it(`${id}: finite differences of Jacobian values match the exact F_uu and F_up`, () => {
      const pr = models[id].factory(opts as never);
      const p = resolveParameters(pr);
      const n = pr.size;
      const u = pr.initialGuess(p);
      for (let i = 0; i < n; i++) u[i] += 0.3 * Math.sin(1.7 * i + 0.4);
      const a = Float64Array.from({ length: n }, (_, i) => Math.cos(0.9 * i));
      const b = Float64Array.from({ length: n }, (_, i) => Math.sin(0.5 * i + 1));
      const ev = derivativeEvaluator(pr);
      expect(ev.exactSecond && ev.exactMixed).toBe(true);
      const fd = finiteDifferenceDerivatives(pr);
      const x = new Float64Array(n);
      const y = new Float64Array(n);
      ev.secondDerivative(u, p, a, b, x);
      fd.secondDerivative(u, p, a, b, y);
      expect(rel(x, y)).toBeLessThan(1e-5);
      for (const s of pr.parameters) {
        ev.mixedDerivative(u, p, s.name, a, x);
        fd.mixedDerivative(u, p, s.name, a, y);
        expect(rel(x, y)).toBeLessThan(1e-6);
      }
    });
  }

  it('falls back to finite differences for a model without exact second derivatives', () => {
    const pr = codeModel({ grid: { intervals: [20] } });
    const ev = derivativeEvaluator(pr);
    expect(ev.exactSecond).toBe(false);
    const p = resolveParameters(pr);
    const u = pr.initialGuess(p);
    const e = new Float64Array(pr.size);
    e[7] = 1;
    const out = new Float64Array(pr.size);
    ev.secondDerivative(u, p, e, e, out);
    // F_7 contains λ u_7(1 − u_7): its second derivative in u_7 is −2λ, plus the diffusion terms
    // (∂²/∂u_7² of κ(u_7, u_j)(u_j − u_7)/h² = (0.5(u_j − u_7) − 2·0.5(u_7 + u_j))/h² per neighbour)
    const h2 = 1 / (1 / 20) ** 2;
    let expected = -2 * p.lambda;
    for (const j of [6, 8]) expected += h2 * (0.5 * (u[j] - u[7]) - (u[7] + u[j]));
    expect(out[7]).toBeCloseTo(expected, 4);
  });
});
