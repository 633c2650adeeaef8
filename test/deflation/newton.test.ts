/**
 * The deflated Newton step: τ·d with d = −J⁻¹F and τ = 1/(1 − ∇(log η)·d) (Sherman–Morrison)
 * must equal the Newton step of the deflated residual G = ηF computed the long way: G's dense
 * Jacobian by central differences of G itself and a dense LU solve by ml-matrix (a reference
 * library), so both the rank-one formula and the gradient of the deflation operator are checked.
 * Then one whole deflated solve: from a guess that plain Newton takes to a known state, the
 * deflated solve converges elsewhere, to a state whose residual is evaluated again here.
 */
import { LuDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { initialStateBuilder, models } from '../../discretisations/index.js';
import { Deflation } from '../../src/deflation/deflation.js';
import { DeflatedNewton, defaultDeflatedNewton, stepScale } from '../../src/deflation/newton.js';
import { toDense } from '../../src/linalg/sparse.js';
import { seededRandom } from '../../src/linalg/random.js';
import { type Params, type Problem, resolveParameters } from '../../src/problem/problem.js';

function random(n: number, seed: number, amplitude = 1): Float64Array {
  const r = seededRandom(seed);
  return Float64Array.from({ length: n }, () => amplitude * (2 * r() - 1));
}

function deflatedResidual(problem: Problem, p: Params, deflation: Deflation, u: Float64Array): Float64Array {
  const f = new Float64Array(problem.size);
  problem.residual(u, p, f);
  const eta = Math.exp(deflation.evaluate(u).logFactor);
  return f.map((x) => eta * x);
}

describe('the deflated Newton step', () => {
  const cases: [string, Problem, Record<string, number>, boolean][] = [
    ['allen-cahn, Dirichlet', models['allen-cahn'].factory({ grid: { intervals: [12] } }), { lambda: 30 }, false],
    ['gray-scott, periodic, modulo translation', models['gray-scott'].factory({ grid: { intervals: [7] }, boundary: 'periodic' }), { Du: 0.01, Dv: 0.005 }, true],
  ];
  for (const [name, problem, given, translation] of cases) {
    it(`is the Newton step of G = ηF (${name})`, () => {
      const p = resolveParameters(problem, given);
      const n = problem.size;
      for (const power of [1.5, 2]) {
        const deflation = new Deflation(problem, p, { power, shift: 1, translation });
        deflation.add(random(n, 1, 0.5).map((x) => x + 0.5));
        deflation.add(random(n, 2, 0.5).map((x) => x + 0.5));
        const u = random(n, 3, 0.5).map((x) => x + 0.5);
        // the code's step
        const f = new Float64Array(n);
        problem.residual(u, p, f);
        const pat = problem.pattern();
        const values = new Float64Array(pat.colPtr[pat.cols]);
        problem.jacobian(u, p, values);
        const J = new Matrix(toDense({ ...pat, values }));
        const d = new LuDecomposition(J).solve(Matrix.columnVector(Array.from(f, (x) => -x))).getColumn(0);
        const g = new Float64Array(n);
        deflation.evaluate(u, g);
        const tau = stepScale(g, Float64Array.from(d), true, Infinity);
        // the long way: the dense Jacobian of G by central differences, then a dense solve
        const G = deflatedResidual(problem, p, deflation, u);
        const dense = Matrix.zeros(n, n);
        const eps = 1e-6;
        for (let j = 0; j < n; j++) {
          const a = u.slice();
          const b = u.slice();
          a[j] += eps;
          b[j] -= eps;
          const ga = deflatedResidual(problem, p, deflation, a);
          const gb = deflatedResidual(problem, p, deflation, b);
          for (let i = 0; i < n; i++) dense.set(i, j, (ga[i] - gb[i]) / (2 * eps));
        }
        const delta = new LuDecomposition(dense).solve(Matrix.columnVector(Array.from(G, (x) => -x))).getColumn(0);
        const size = Math.max(...delta.map(Math.abs));
        expect(Math.abs(tau - 1)).toBeGreaterThan(1e-3); // the deflation does change the step
        for (let i = 0; i < n; i++) expect(Math.abs(tau * d[i] - delta[i])).toBeLessThan(1e-6 * size);
      }
    });
  }

  it('converges away from a known state that plain Newton would reach (1D Bratu, λ = 2)', () => {
    const problem = models.bratu.factory({ grid: { intervals: [40] } });
    const p = resolveParameters(problem, { lambda: 2 });
    const guess = initialStateBuilder(problem, { values: { u: '0' } }).build(p);
    const plain = new DeflatedNewton(problem, p, new Deflation(problem, p, { power: 2, shift: 1, translation: true }), defaultDeflatedNewton);
    const lower = guess.slice();
    expect(plain.solve(lower).converged).toBe(true);
    plain.dispose();
    const deflation = new Deflation(problem, p, { power: 2, shift: 1, translation: true });
    deflation.add(lower);
    const solver = new DeflatedNewton(problem, p, deflation, defaultDeflatedNewton);
    const upper = guess.slice();
    const r = solver.solve(upper);
    solver.dispose();
    expect(r.converged).toBe(true);
    // a root of F, evaluated again, far from the known one (the upper Bratu state, max u ≈ 2.9)
    const f = new Float64Array(problem.size);
    problem.residual(upper, p, f);
    expect(Math.max(...f.map(Math.abs))).toBeLessThan(1e-8);
    expect(Math.max(...upper)).toBeGreaterThan(2.5);
    expect(Math.max(...lower)).toBeLessThan(0.5);
  });
});
