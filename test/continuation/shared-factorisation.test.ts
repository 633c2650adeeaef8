/**
 * Shared factorisations: the eigenvalue solver's shift-invert operator at shift 0 taken from the
 * factors of the bordered continuation matrix (the bordering lemma), instead of a factorisation of
 * J of its own.
 */
import { describe, expect, it } from 'vitest';
import { models } from '../../discretisations/index.js';
import { Continuation } from '../../src/continuation/engine.js';
import { ContinuationSystem } from '../../src/continuation/system.js';
import { defaultSettings, type ContinuationPoint } from '../../src/continuation/types.js';
import { eigenvaluesDense } from '../../src/linalg/eigen.js';
import { SparseLU } from '../../src/linalg/lu.js';
import { matVec } from '../../src/linalg/sparse.js';
import { resolveParameters } from '../../src/problem/problem.js';

function seeded(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return s / 2 ** 32 - 0.5;
  };
}

describe('solves with J from the bordered factors', () => {
  const problem = models.bratu.factory({ grid: { intervals: [13, 11] } });
  const n = problem.size;
  const params = resolveParameters(problem, { lambda: 4 });

  it('agree with a factorisation of J itself, for any border row and column (residual of J x = r)', () => {
    const random = seeded(7);
    const sys = new ContinuationSystem(problem, params, 'lambda');
    const u = Float64Array.from({ length: n }, () => 0.3 + 0.1 * random());
    sys.assemble(u, 4);
    const tangent = Float64Array.from({ length: n + 1 }, () => random());
    sys.setTangentRow(tangent);
    sys.factor(true);
    const solver = sys.jacobianSolver();
    expect(solver).toBeDefined();
    expect(solver!.shift).toBe(0);
    const pattern = problem.pattern();
    const J = { ...pattern, values: sys.jacobian.slice() };
    const own = new SparseLU(pattern);
    own.factor(J.values);
    for (let k = 0; k < 3; k++) {
      const r = Float64Array.from({ length: n }, () => random());
      const x = solver!.lu.solve(r, new Float64Array(n));
      const Jx = matVec(J, x, new Float64Array(n));
      let res = 0;
      let rn = 0;
      for (let i = 0; i < n; i++) {
        res = Math.max(res, Math.abs(Jx[i] - r[i]));
        rn = Math.max(rn, Math.abs(r[i]));
      }
      expect(res).toBeLessThan(1e-9 * rn);
      const y = own.solve(r);
      for (let i = 0; i < n; i++) expect(Math.abs(x[i] - y[i])).toBeLessThan(1e-10 * (1 + Math.abs(y[i])));
    }
    own.dispose();
    // after the next factorisation the old solver refuses to solve with stale factors
    sys.factor(true);
    expect(() => solver!.lu.solve(new Float64Array(n))).toThrow(/factored again/);
    sys.dispose();
  });
});

describe('a branch whose eigenvalues come from the shared factors', () => {
  it('2D Bratu through the fold: eigenvalues equal the dense ones at every point, with fewer eigen factorisations than points', () => {
    const problem = models.bratu.factory({ grid: { intervals: [15, 15] } }); // 196 unknowns
    const params = resolveParameters(problem, { lambda: 6 });
    const engine = new Continuation(problem, params, {
      ...defaultSettings,
      parameter: 'lambda',
      bounds: [0, 10],
      step: { initial: 0.5, min: 1e-8, max: 3 },
      maxPoints: 40,
      stopWhen: [{ monitor: 'max', above: 2.5 }],
      stability: { eigenvalues: 4 },
    });
    const points: ContinuationPoint[] = [];
    for (const e of engine.events()) if (e.type === 'point') points.push(e.point);
    const c = engine.counters;
    engine.dispose();
    expect(points.length).toBeGreaterThan(10);
    // the branch passes its fold (upper branch: one positive eigenvalue)
    expect(points.some((p) => p.stability?.unstableCount === 1)).toBe(true);
    // most points take their shift-0 operator from the bordered factors
    expect(c.eigenFactorisations).toBeLessThan(0.75 * points.length);
    const pattern = problem.pattern();
    const values = new Float64Array(pattern.colPtr[pattern.cols]);
    for (const p of points) {
      problem.jacobian(Float64Array.from(p.u), resolveParameters(problem, { ...params, lambda: p.parameter }), values);
      // ml-matrix's dense eigenvalues of the saved state's Jacobian (a general-purpose reference)
      const dense = eigenvaluesDense({ ...pattern, values }).sort((a, b) => b.re - a.re);
      const found = p.stability!.eigenvalues;
      expect(found.length).toBeGreaterThanOrEqual(4);
      for (let k = 0; k < 4; k++) {
        expect(Math.abs(found[k].re - dense[k].re)).toBeLessThan(1e-6 * (1 + Math.abs(dense[k].re)));
        expect(Math.abs(found[k].im)).toBeLessThan(1e-8 * (1 + Math.abs(dense[k].re)));
      }
    }
  });
});
