/**
 * Locating a fold must not make the sparse factors fill in: the fold's bordered matrix
 * [[J, b], [cᵀ, d]] has J's pattern plus a dense border, like the continuation's, and near the
 * fold (J nearly singular) threshold pivoting with a zero corner took the border row as a pivot
 * early — 2.6 times the entries in L at 40×40, 9 times at 200×200, 2 s instead of 0.13 s per
 * factorisation there. The fold value itself is checked against SciPy (test/bench/reference.test.ts)
 * and exact formulas elsewhere; this test checks the cost.
 */
import { afterEach, expect, test, vi } from 'vitest';
import { SparseLU } from '../../src/linalg/lu.js';
import { runModel, settings } from './collect.js';

afterEach(() => vi.restoreAllMocks());

test('2D Bratu 40×40 through its fold: every factorisation has the fill of the first (no pivoting off the diagonal)', () => {
  const lnz: number[] = [];
  const factor = SparseLU.prototype.factor;
  vi.spyOn(SparseLU.prototype, 'factor').mockImplementation(function (this: SparseLU, values: Float64Array) {
    factor.call(this, values);
    lnz.push(this.stats().lnz);
  });
  const run = runModel('bratu', { grid: { intervals: [41, 41] } }, { lambda: 1 }, settings({ parameter: 'lambda', bounds: [0, 10], step: { initial: 0.25, min: 1e-8, max: 0.25 }, maxPoints: 60, stability: { eigenvalues: 0 } }));
  const folds = run.specials.filter((s) => s.kind === 'fold');
  expect(folds).toHaveLength(1);
  expect(folds[0].located).toBe(true);
  expect(lnz.length).toBeGreaterThan(2);
  // the same pattern and ordering: with diagonal pivots every factor has the same entries (common practice: fill as the cost measure of a sparse LU)
  expect(Math.max(...lnz)).toBeLessThanOrEqual(1.05 * lnz[0]);
});
