/**
 * Curves of branch points of a uniform state, with the critical mode and its changes.
 *
 * Brusselator on a no-flux line (length L, N intervals): the uniform state (a, b/a) has, for
 * the discrete mode n (wavenumber² q² = (4/h²) sin²(nπh/(2L)), the eigenvalues of the discrete
 * no-flux Laplacian — the DCT-I modes cos(nπx/L); e.g. LeVeque, *Finite Difference Methods for
 * ODEs and PDEs*, §2.10, from memory), a zero eigenvalue where
 *     b_n(a) = (1 + Du q²)(a² + Dv q²)/(Dv q²)
 * (the Turing condition: Prigogine & Lefever 1968; Nicolis & Prigogine 1977). Two lines cross
 * where a² = Du Dv q_n² q_m², and the lowest line is the stability boundary.
 *
 * Beam on an elastic foundation, pinned ends: the straight beam buckles in mode n at
 * P_n(kf) = EI μ_n + kf/μ_n with μ_n the discrete −d²/dx² eigenvalues (Timoshenko & Gere,
 * *Theory of Elastic Stability*); modes n and n+1 buckle together at kf = EI μ_n μ_{n+1}.
 */
import { describe, expect, test } from 'vitest';
import { models } from '../../../discretisations/index.js';
import type { CurveSpecialPoint } from '../../../src/continuation/curves/types.js';
import { curveSettings, denseEigenvalues, jacobianScale, runCurve, uniformStart } from './helpers.js';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { denseJacobian } from '../../discretisations/helpers.js';

const q2 = (n: number, N: number, L: number): number => (4 / (L / N) ** 2) * Math.sin((n * Math.PI) / (2 * N)) ** 2;

describe('Turing lines of the Brusselator (no-flux line)', () => {
  const N = 40;
  const L = 20;
  const Du = 1;
  const Dv = 8;
  const problem = models.brusselator.factory({ grid: { intervals: [N], length: [L] }, boundary: 'neumann' } as never);
  const p = { a: 2, b: 2.5, Du, Dv };
  const bn = (n: number, a: number): number => ((1 + Du * q2(n, N, L)) * (a * a + Dv * q2(n, N, L))) / (Dv * q2(n, N, L));
  // from a stable uniform state the search meets the lowest line; the curve then follows the boundary
  const run = runCurve(
    problem,
    p,
    curveSettings({ follow: 'branch-point', parameter: 'a', free: 'b', bounds: [1.5, 4], step: { initial: 0.05, min: 1e-9, max: 0.1 }, newton: { residualTolerance: 1e-11, stepTolerance: 1e-11, maxIterations: 12 } }),
    { start: uniformStart(problem, [2, 1.25], p) },
  );

  test('every point lies on b_n(a) of its reported mode to 1e-9, and that mode is the lowest line there', () => {
    expect(run.points.length).toBeGreaterThan(30);
    for (const q of run.points) {
      const n = q.mode![0];
      expect(Math.abs(q.free - bn(n, q.parameter))).toBeLessThan(1e-9);
      // uniform state (a, b/a)
      expect(Math.abs(q.u[0] - q.parameter)).toBeLessThan(1e-12);
      expect(Math.abs(q.u[1] - q.free / q.parameter)).toBeLessThan(1e-9);
      let lowest = Infinity;
      for (let m = 1; m < N; m++) lowest = Math.min(lowest, bn(m, q.parameter));
      expect(q.free - lowest).toBeLessThan(1e-9);
    }
  });

  test('the mode changes where neighbouring lines cross, a² = Du Dv q_n² q_{n+1}², to 1e-9', () => {
    const changes = run.specials.filter((s): s is CurveSpecialPoint => s.kind === 'mode-change');
    expect(changes.length).toBeGreaterThanOrEqual(3);
    for (const c of changes) {
      const n = c.mode![0];
      expect(c.newMode![0]).toBe(n + 1);
      expect(c.located).toBe(true);
      expect(Math.abs(c.value - Math.sqrt(Du * Dv * q2(n, N, L) * q2(n + 1, N, L)))).toBeLessThan(1e-9);
      expect(Math.abs(c.free - bn(n, c.value))).toBeLessThan(1e-9);
      // each change starts a new curve at the same point with the new mode
      expect(c.newBranches).toHaveLength(1);
      const next = run.curve(c.newBranches![0]);
      expect(next[0].parameter).toBe(c.value);
      expect(next[1].mode).toEqual([n + 1]);
    }
    expect(run.specials.filter((s) => s.kind !== 'mode-change' && s.kind !== 'end')).toEqual([]);
  });

  test('at every point the dense Jacobian annihilates the reported cosine mode', () => {
    for (const q of run.points) {
      const params = { ...p, a: q.parameter, b: q.free };
      const J = denseJacobian(problem, q.u, params);
      // the mode cos(nπx/L) in (u, v) with the null vector of the 2×2 block R_u − q²·diag(Du, Dv)
      const n = q.mode![0];
      const k2 = q2(n, N, L);
      const a = q.parameter;
      const b = q.free;
      const r11 = b - 1 - Du * k2;
      const r12 = a * a;
      const shape = problem.toNodeArray(q.u, params).shape;
      const data = new Float64Array(2 * (N + 1));
      for (let i = 0; i <= N; i++) {
        data[i] = -r12 * Math.cos((n * Math.PI * i) / N);
        data[N + 1 + i] = r11 * Math.cos((n * Math.PI * i) / N);
      }
      const x = problem.fromNodeArray(shape, data, params);
      let jx = 0;
      let xm = 0;
      for (let i = 0; i < J.length; i++) {
        let s2 = 0;
        for (let j = 0; j < J.length; j++) s2 += J[i][j] * x[j];
        jx = Math.max(jx, Math.abs(s2));
        xm = Math.max(xm, Math.abs(x[i]));
      }
      expect(jx).toBeLessThan(1e-9 * jacobianScale(problem, q.u, params) * xm);
    }
  });

  test('dense eigenvalues (ml-matrix) in the middle of each curve: a zero eigenvalue whose eigenvector is that mode', () => {
    const ids = [...new Set(run.points.map((q) => q.branch))];
    for (const q of ids.map((id) => run.curve(id)).map((c) => c[c.length >> 1])) {
      const params = { ...p, a: q.parameter, b: q.free };
      const J = new Matrix(denseJacobian(problem, q.u, params));
      const e = new EigenvalueDecomposition(J);
      const k = e.realEigenvalues.map((re, i) => Math.hypot(re, e.imaginaryEigenvalues[i])).reduce((best, x, i, all) => (x < all[best] ? i : best), 0);
      expect(Math.abs(e.realEigenvalues[k])).toBeLessThan(1e-9 * jacobianScale(problem, q.u, params));
      // the u-part of the null vector (its node array, field u) against cos(nπx/L) at the nodes
      const vec = problem.toNodeArray(Float64Array.from(e.eigenvectorMatrix.getColumn(k)), params).data;
      const n = q.mode![0];
      let dot = 0;
      let nv = 0;
      let nc = 0;
      for (let i = 0; i <= N; i++) {
        const c = Math.cos((n * Math.PI * i) / N);
        dot += vec[i] * c;
        nv += vec[i] ** 2;
        nc += c * c;
      }
      expect(Math.abs(dot) / Math.sqrt(nv * nc)).toBeGreaterThan(1 - 1e-9);
    }
  });
});

describe('buckling loads of the beam on a foundation against the foundation stiffness (pinned)', () => {
  const N = 20;
  const problem = models['beam-foundation'].factory({ grid: { intervals: [N] }, ends: 'pinned' } as never);
  const mu = (n: number): number => q2(n, N, 1);
  const run = runCurve(problem, { P: 0, kf: 100 }, curveSettings({ follow: 'branch-point', parameter: 'kf', free: 'P', bounds: [0, 4000], step: { initial: 20, min: 1e-8, max: 100 } }));

  test('every point lies on P_n(kf) = EI μ_n + kf/μ_n of its mode to 1e-9, the lowest load', () => {
    expect(run.points[0].mode).toEqual([1]);
    for (const q of run.points) {
      const n = q.mode![0];
      expect(Math.abs(q.free - (mu(n) + q.parameter / mu(n)))).toBeLessThan(1e-9);
      let lowest = Infinity;
      for (let m = 1; m < N; m++) lowest = Math.min(lowest, mu(m) + q.parameter / mu(m));
      expect(q.free - lowest).toBeLessThan(1e-9);
      // the state is the straight beam
      expect(Math.max(...q.u.map(Math.abs))).toBe(0);
    }
  });

  test('the critical mode changes at kf = EI μ_n μ_{n+1}, to 1e-9 (relative)', () => {
    const changes = run.specials.filter((s): s is CurveSpecialPoint => s.kind === 'mode-change');
    expect(changes.map((c) => [c.mode, c.newMode])).toEqual([
      [[1], [2]],
      [[2], [3]],
    ]);
    for (const c of changes) {
      const n = c.mode![0];
      expect(Math.abs(c.value / (mu(n) * mu(n + 1)) - 1)).toBeLessThan(1e-9);
      // two eigenvalues are zero there (dense check)
      const eig = denseEigenvalues(problem, c.u, { P: c.free, EI: 1, kf: c.value, k3: 100, imperfection: 0 });
      const scale = jacobianScale(problem, c.u, { P: c.free, EI: 1, kf: c.value, k3: 100, imperfection: 0 });
      expect(Math.abs(eig[1].re)).toBeLessThan(1e-8 * scale);
    }
    expect(run.ends.map((e) => e.reason)).toEqual(['mode-change', 'mode-change', 'parameter-bound']);
  });
});
