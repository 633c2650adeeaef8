/**
 * Certification of the searched region where it used to fail: a singular mass matrix (the
 * elastica's multiplier row, 400 intervals) and the repeated Fourier-mode eigenvalues of a
 * periodic 64² Gray–Scott grid. At least 95 % of the points must be certified, and wherever a
 * point is certified its `stable` must agree with an independent spectrum.
 */
import { describe, expect, it } from 'vitest';
import { eigenvaluesDense } from '../../src/linalg/eigen.js';
import { resolveParameters } from '../../src/problem/problem.js';
import { missingFrom, rightmostListProblem } from '../linalg/eigen-fixtures.js';
import { runModel, settings } from './collect.js';

type C = { re: number; im: number };

describe('certification of the searched region', () => {
  it('elastica, 400 intervals (singular mass): ≥ 95 % certified, stable as the exact and dense spectra say', () => {
    const N = 400;
    const given = { lambda: 2 };
    const run = runModel('elastica', { grid: { intervals: [N] } }, given, settings({ parameter: 'lambda', bounds: [0, 16], step: { initial: 1, min: 1e-8, max: 1.5 }, maxPoints: 30, branchSwitching: { depth: 1 }, stability: { eigenvalues: 3 } }));
    const certified = run.points.filter((p) => p.stability?.complete);
    expect(run.points.length).toBeGreaterThan(20);
    expect(certified.length).toBeGreaterThanOrEqual(Math.ceil(0.95 * run.points.length));
    // straight strut: finite eigenvalues λ − (4/h²) sin²(kπh/2), k ≥ 1 (the constraint removes
    // k = 0): stable below the discrete buckling load (the model's header; the discrete
    // Neumann Laplacian's eigenvalues, LeVeque, Finite Difference Methods, §2.10, from memory)
    const h = 1 / N;
    const load = (4 / (h * h)) * Math.sin((Math.PI * h) / 2) ** 2;
    for (const p of certified.filter((q) => q.branch === 1)) {
      if (Math.abs(p.parameter - load) < 1e-6) continue;
      expect(p.stability!.stable, `λ = ${p.parameter}`).toBe(p.parameter < load);
    }
    // dense eigenvalues of the pencil (ml-matrix, through eigenvaluesDense's shift-invert) at
    // points spread over every branch (a dense 402² solve per point: a few, not all; never the
    // branch point itself, where an eigenvalue is zero)
    const pick = [0.2, 0.7].flatMap((f) => [1, 2, 3].map((b) => run.branch(b)).filter((br) => br.length > 1).map((br) => br[1 + Math.floor(f * (br.length - 2))]));
    for (const p of new Set(pick)) {
      if (Math.abs(p.parameter - load) < 1e-3) continue;
      if (!p.stability!.complete) continue;
      const params = { ...resolveParameters(run.problem, given), lambda: p.parameter };
      const pat = run.problem.pattern();
      const vals = new Float64Array(pat.colPtr[pat.cols]);
      run.problem.jacobian(p.u, params, vals);
      const dense = eigenvaluesDense({ ...pat, values: vals }, run.problem.massDiagonal).sort((a, b) => b.re - a.re || b.im - a.im);
      const scale = Math.max(...dense.map((v) => Math.hypot(v.re, v.im)));
      const where = `branch ${p.branch}, λ = ${p.parameter}`;
      expect(p.stability!.stable, where).toBe(dense[0].re < 0);
      expect(p.stability!.unstableCount, where).toBe(dense.filter((v) => v.re > 1e-12 * scale).length);
      expect(missingFrom(p.stability!.eigenvalues, dense, (w: C) => 1e-8 * Math.hypot(w.re, w.im) + 1e-12 * scale), where).toBe(0);
    }
  });

  it('periodic Gray–Scott 64², uniform state: ≥ 95 % certified, lists and stability as the exact spectrum', () => {
    const N = 64;
    const given = { F: 0.01, k: 0.05, Du: 0.01, Dv: 0.01 };
    const run = runModel('gray-scott', { grid: { intervals: [N, N], length: [1, 1] }, boundary: 'periodic' }, given, settings({ parameter: 'F', bounds: [0, 0.1], step: { initial: 0.01, min: 1e-8, max: 0.02 }, maxPoints: 12, branchSwitching: { depth: 0 }, stability: { eigenvalues: 4 } }));
    expect(run.points.length).toBeGreaterThan(4);
    const certified = run.points.filter((p) => p.stability?.complete);
    expect(certified.length).toBeGreaterThanOrEqual(Math.ceil(0.95 * run.points.length));
    // the state (1, 0): eigenvalues −F − Du q² and −(F + k) − Dv q² for every Fourier mode of
    // the periodic grid, q² = (4/h²)(sin²(πa/N) + sin²(πb/N)) (discrete Fourier analysis of the
    // 5-point Laplacian, LeVeque §2.10 / §3, from memory; also test/discretisations/models.test.ts):
    // fourfold and eightfold repeated, the case that defeated the certificate
    const h = 1 / N;
    const q1 = Array.from({ length: N }, (_, a) => (4 / (h * h)) * Math.sin((Math.PI * a) / N) ** 2);
    for (const p of certified) {
      const F = p.parameter;
      const exact: C[] = [];
      for (const qa of q1) for (const qb of q1) exact.push({ re: -F - given.Du * (qa + qb), im: 0 }, { re: -(F + given.k) - given.Dv * (qa + qb), im: 0 });
      exact.sort((a, b) => b.re - a.re);
      const scale = Math.abs(exact[exact.length - 1].re);
      const where = `F = ${F}`;
      expect(rightmostListProblem(p.stability!.eigenvalues, exact, 4, scale), where).toBeNull();
      expect(p.stability!.stable, where).toBe(exact[0].re < 0);
      expect(p.stability!.unstableCount, where).toBe(0);
    }
  });
});
