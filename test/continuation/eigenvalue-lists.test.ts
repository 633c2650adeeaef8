/**
 * The eigenvalue lists written for every point of small runs, checked against dense eigenvalues
 * of the same Jacobian (ml-matrix's EigenvalueDecomposition of M⁻¹J: a general-purpose
 * reference library) at EVERY point, with 1 to 8 eigenvalues requested: the values (relative
 * 1e-8), their multiplicities (the symmetric grids below have double, triple, fourfold and
 * eightfold eigenvalues), the unstable count and the `complete` claim.
 */
import { describe, expect, it } from 'vitest';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import type { ContinuationSettings } from '../../src/continuation/types.js';
import { resolveParameters } from '../../src/problem/problem.js';
import { missingFrom, rightmostListProblem } from '../linalg/eigen-fixtures.js';
import { type Collected, runModel, settings } from './collect.js';

type C = { re: number; im: number };

/** Dense eigenvalues of M⁻¹J at a point's state (ml-matrix). */
function denseSpectrum(run: Collected, given: Record<string, number>, parameter: string, u: Float64Array, value: number): C[] {
  const { problem } = run;
  const params = { ...resolveParameters(problem, given), [parameter]: value };
  const pat = problem.pattern();
  const vals = new Float64Array(pat.colPtr[pat.cols]);
  problem.jacobian(u, params, vals);
  const n = pat.cols;
  const A = Matrix.zeros(n, n);
  const mass = problem.massDiagonal;
  for (let j = 0; j < n; j++) {
    for (let p = pat.colPtr[j]; p < pat.colPtr[j + 1]; p++) {
      const i = pat.rowIdx[p];
      A.set(i, j, A.get(i, j) + vals[p] / (mass ? mass[i] : 1));
    }
  }
  const e = new EigenvalueDecomposition(A);
  return e.realEigenvalues.map((re, i) => ({ re, im: e.imaginaryEigenvalues[i] })).sort((a, b) => b.re - a.re || b.im - a.im);
}

interface Case {
  name: string;
  model: string;
  options: Record<string, unknown>;
  given: Record<string, number>;
  settings: Omit<ContinuationSettings, 'stability'>;
}

const cases: Case[] = [
  {
    // 3D Bratu on the unit cube, 6³ intervals (125 unknowns): triple eigenvalues (cube symmetry)
    name: '3D Bratu',
    model: 'bratu',
    options: { grid: { intervals: [6, 6, 6] } },
    given: { lambda: 1 },
    settings: settings({ parameter: 'lambda', bounds: [0, 20], step: { initial: 1.5, min: 1e-8, max: 3 }, maxPoints: 8, branchSwitching: { depth: 0 } }),
  },
  {
    // 2D Brusselator on a square with no-flux walls, 6² intervals (98 unknowns): double modes,
    // through the Hopf point b = 1 + a² = 5 of the uniform state (Du = Dv)
    name: '2D Brusselator',
    model: 'brusselator',
    options: { grid: { intervals: [6, 6], length: [1, 1] } },
    given: { a: 2, b: 4, Du: 0.02, Dv: 0.02 },
    settings: settings({ parameter: 'b', bounds: [0, 6], step: { initial: 0.3, min: 1e-8, max: 0.4 }, maxPoints: 8, branchSwitching: { depth: 0 } }),
  },
  {
    // Gray–Scott uniform state (1, 0) on a periodic 6² grid (72 unknowns): fourfold Fourier modes
    name: 'periodic Gray–Scott',
    model: 'gray-scott',
    options: { grid: { intervals: [6, 6], length: [1, 1] }, boundary: 'periodic' },
    given: { F: 0.01, k: 0.05, Du: 0.01, Dv: 0.005 },
    settings: settings({ parameter: 'F', bounds: [0, 0.2], step: { initial: 0.02, min: 1e-8, max: 0.03 }, maxPoints: 8, branchSwitching: { depth: 0 } }),
  },
];

describe('eigenvalue lists against dense eigenvalues at every point', () => {
  for (const c of cases) {
    it(`${c.name}, 1 to 8 eigenvalues requested`, () => {
      let points = 0;
      let complete = 0;
      for (let count = 1; count <= 8; count++) {
        const run = runModel(c.model, c.options, c.given, { ...c.settings, stability: { eigenvalues: count } });
        expect(run.points.length).toBeGreaterThan(3);
        for (const p of run.points) {
          const st = p.stability!;
          const dense = denseSpectrum(run, c.given, c.settings.parameter, p.u, p.parameter);
          const scale = Math.max(...dense.map((v) => Math.hypot(v.re, v.im)));
          const where = `${c.name}, count ${count}, ${c.settings.parameter} = ${p.parameter}`;
          // every value listed is a dense eigenvalue to relative 1e-8 (floor 1e-12 of the spectral
          // radius for values near zero), and no copy is listed more often than it occurs
          const tol = (w: C) => 1e-8 * Math.hypot(w.re, w.im) + 1e-12 * scale;
          expect(missingFrom(st.eigenvalues, dense, tol), `${where}: ${JSON.stringify(st.eigenvalues)}`).toBe(0);
          points++;
          if (!st.complete) continue;
          complete++;
          // certified: the count rightmost with whole clusters, and the exact unstable count
          expect(rightmostListProblem(st.eigenvalues, dense, count, scale), where).toBeNull();
          expect(st.unstableCount, where).toBe(dense.filter((v) => v.re > 1e-12 * scale).length);
          expect(st.stable, where).toBe(dense[0].re < 0);
        }
      }
      // the certificate is the point of the search: given at (nearly) every point
      expect(complete).toBeGreaterThanOrEqual(Math.ceil(0.95 * points));
    });
  }
});
