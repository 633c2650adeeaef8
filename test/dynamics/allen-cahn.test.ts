/**
 * Allen–Cahn (Chafee–Infante) u_t = u″ + λ(u − u³) on (0, 1) with u = 0 at both ends. For
 * λ > 4π² the steady states are u = 0, the one-signed pair ±u₁ and the sign-changing pairs ±u₂
 * (and more as λ grows); only ±u₁ are stable (Chafee & Infante 1974). Started from seeded noise,
 * every integration must end in +u₁ or −u₁ — never in 0 or a sign-changing state — and both
 * signs must be seen across seeds.
 */
import { describe, expect, it } from 'vitest';
import { initialStateBuilder, models } from '../../discretisations/index.js';
import { eigenvaluesDense } from '../../src/linalg/eigen.js';
import { resolveParameters } from '../../src/problem/problem.js';
import { integrate, maxDifference } from './helpers.js';

const N = 40;
const lambda = 60; // between 4π² ≈ 39.5 and 9π² ≈ 88.8: the states 0, ±u₁, ±u₂
const problem = models['allen-cahn'].factory({ grid: { intervals: [N] } });
const p = resolveParameters(problem, { lambda });

describe('Allen–Cahn from seeded noise', () => {
  it('ends in one of the two stable one-signed states only (Chafee & Infante 1974)', () => {
    const finals: Float64Array[] = [];
    for (const seed of [1, 2, 3, 4, 5, 6]) {
      const u0 = initialStateBuilder(problem, { values: { u: 0 }, noise: { amplitude: 0.1, seed } }).build(p);
      const r = integrate(problem, p, { end: 200 }, { start: u0 });
      expect(r.outcome.kind).toBe('steady');
      // one-signed and clear of zero
      const signs = new Set(Array.from(r.final, (v) => Math.sign(v)));
      expect(signs.size).toBe(1);
      expect(Math.max(...r.final.map(Math.abs))).toBeGreaterThan(0.5);
      // an independent residual check of the polished state
      const f = new Float64Array(problem.size);
      problem.residual(r.final, p, f);
      expect(Math.max(...f.map(Math.abs))).toBeLessThan(1e-8);
      finals.push(r.final);
    }
    // both signs occur, and they are mirror images of one state
    const positive = finals.filter((u) => u[N / 2] > 0);
    const negative = finals.filter((u) => u[N / 2] < 0);
    expect(positive.length).toBeGreaterThan(0);
    expect(negative.length).toBeGreaterThan(0);
    for (const u of finals) expect(maxDifference(u.map(Math.abs), positive[0])).toBeLessThan(1e-8);
    // stable: every eigenvalue of the Jacobian negative (dense, ml-matrix: a reference library)
    const pat = problem.pattern();
    const J = new Float64Array(pat.colPtr[pat.cols]);
    problem.jacobian(positive[0], p, J);
    const eig = eigenvaluesDense({ ...pat, values: J });
    expect(Math.max(...eig.map((e) => e.re))).toBeLessThan(0);
    // while u = 0 has two unstable eigenvalues here (λ above the first two −Δ eigenvalues)
    problem.jacobian(new Float64Array(problem.size), p, J);
    expect(eigenvaluesDense({ ...pat, values: J }).filter((e) => e.re > 0)).toHaveLength(2);
  });
});
