/**
 * The benchmark's SciPy reference (tools/bench/reference/arclength_scipy.py) must solve the same
 * discrete problem as branchline, or its timings say nothing. On a small 2D Bratu grid:
 *  - every reference point satisfies our residual (same stencil, same Dirichlet elimination,
 *    same numbering);
 *  - at every reference point, ARPACK's 6 eigenvalues nearest 0 are the 6 nearest 0 of the dense
 *    spectrum of our Jacobian (ml-matrix, a general-purpose reference library);
 *  - the reference's fold (secant on τ_λ) is our located fold.
 * Needs a python3 with SciPy (Debian's python3-scipy; CI installs it); skipped without one.
 */
import { describe, expect, test } from 'vitest';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { models } from '../../discretisations/index.js';
import { resolveParameters } from '../../src/problem/problem.js';
import { type CscMatrix, toDense } from '../../src/linalg/sparse.js';
import type { FoldPoint } from '../../src/continuation/types.js';
import { findScipyPython, runReference } from '../../tools/bench/reference.js';
import { runModel, settings } from '../continuation/collect.js';

const found = findScipyPython();
const m = 9; // interior nodes per axis: intervals 10

describe.skipIf(!found.python)(`SciPy reference against branchline (${found.reason})`, () => {
  test('same residual, same eigenvalues at every point, same fold', () => {
    const ref = runReference(found.python!, { dim: 2, m, steps: 40, eigenvalues: 6, locateFold: true, states: true });
    const problem = models.bratu.factory({ grid: { intervals: [m + 1, m + 1] } });
    expect(ref.unknowns).toBe(problem.size);
    expect(ref.points.length).toBe(41);
    const pattern = problem.pattern();
    const values = new Float64Array(pattern.colPtr[pattern.cols]);
    const f = new Float64Array(problem.size);
    for (const pt of ref.points) {
      const u = Float64Array.from(pt.u!);
      const p = resolveParameters(problem, { lambda: pt.parameter });
      problem.residual(u, p, f);
      problem.jacobian(u, p, values);
      const J: CscMatrix = { ...pattern, values };
      // residual: converged by the reference to a scaled residual of 1e-9 (entries of J ~ 4/h² = 400)
      let fmax = 0;
      for (const v of f) fmax = Math.max(fmax, Math.abs(v));
      expect(fmax).toBeLessThan(1e-6);
      const dense = new EigenvalueDecomposition(new Matrix(toDense(J)));
      const nearest = dense.realEigenvalues
        .map((re, i) => ({ re, im: dense.imaginaryEigenvalues[i] }))
        .sort((a, b) => Math.hypot(a.re, a.im) - Math.hypot(b.re, b.im))
        .slice(0, 6)
        .map((z) => z.re)
        .sort((a, b) => b - a);
      const arpack = pt.eigenvalues!.map(([re]) => re).sort((a, b) => b - a);
      for (const [re, im] of pt.eigenvalues!) expect(Math.abs(im)).toBeLessThan(1e-8 * (1 + Math.abs(re)));
      for (let k = 0; k < 6; k++) expect(Math.abs(arpack[k] - nearest[k])).toBeLessThan(1e-6 * (1 + Math.abs(nearest[k])));
    }
    expect(ref.fold?.value).toBeDefined();
    const ours = runModel('bratu', { grid: { intervals: [m + 1, m + 1] } }, { lambda: 1 }, settings({ parameter: 'lambda', bounds: [0, 10], step: { initial: 0.25, min: 1e-8, max: 0.25 }, stopWhen: [{ monitor: 'max', above: 2 }] }));
    const folds = ours.specials.filter((s): s is FoldPoint => s.kind === 'fold');
    expect(folds).toHaveLength(1);
    expect(Math.abs(folds[0].value - ref.fold!.value!)).toBeLessThan(1e-8 * folds[0].value);
    // at the fold J is singular: one eigenvalue near 0 in the reference's spectrum there
    expect(Math.abs(ref.fold!.eigenvalues![0][0])).toBeLessThan(1e-3);
  });
});
