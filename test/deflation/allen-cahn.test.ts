/**
 * Every steady state of the Allen–Cahn (Chafee–Infante) problem u″ + λ(u − u³) = 0 on (0, 1),
 * u(0) = u(1) = 0, found by deflated Newton from three guesses written here.
 *
 * Chafee & Infante (1974): for (kπ)² < λ < ((k+1)π)² there are exactly 2k + 1 steady states —
 * u = 0 and, for each j = 1 … k, a pair ±u_j with j − 1 interior zeros; u_j has j − 1 unstable
 * eigenvalues and u = 0 has k (the Morse indices; Chafee & Infante 1974, from memory). For the
 * discretised problem on 100 intervals the grid's own eigenvalues μ_j = (4/h²) sin²(jπh/2)
 * (the discrete Dirichlet Laplacian's, standard finite-difference result) take the place of (jπ)².
 *
 * Each state's residual is evaluated again here with the difference formula written out
 * (independent of the model's code), duplicates are looked for by plain distances, and each
 * state's unstable count is compared with the eigenvalues of its dense Jacobian (ml-matrix, a
 * reference library).
 */
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { models } from '../../discretisations/index.js';
import { toDense } from '../../src/linalg/sparse.js';
import { resolveParameters } from '../../src/problem/problem.js';
import { laplacianEigenvalue, rms, search } from './helpers.js';

const N = 100;
const h = 1 / N;
const problem = models['allen-cahn'].factory({ grid: { intervals: [N] } });
// three guesses: the first three sine modes
const guesses = [{ u: 'sin(pi*x)' }, { u: 'sin(2*pi*x)' }, { u: 'sin(3*pi*x)' }];

describe('Allen–Cahn on 100 intervals: all 2k + 1 steady states by deflation (Chafee & Infante 1974)', () => {
  for (const lambda of [50, 120]) {
    it(`finds exactly 2k + 1 states at λ = ${lambda}, each a steady state, no two alike, with the Morse indices`, () => {
      // k: the discrete eigenvalues below λ
      let k = 0;
      while (laplacianEigenvalue(k + 1, N) < lambda) k++;
      expect(k).toBe(lambda === 50 ? 2 : 3); // (2π)² < 50 < (3π)², (3π)² < 120 < (4π)²
      const p = resolveParameters(problem, { lambda });
      const run = search(problem, p, guesses, { stability: { eigenvalues: k + 3 } });
      expect(run.reason).toBe('exhausted');
      expect(run.states.length).toBe(2 * k + 1);

      const nodes = run.states.map((s) => problem.toNodeArray(s.u, p).data);
      // every state is steady: the residual written out, u at both ends zero
      for (const u of nodes) {
        expect(u[0]).toBe(0);
        expect(u[N]).toBe(0);
        let worst = 0;
        for (let i = 1; i < N; i++) worst = Math.max(worst, Math.abs((u[i - 1] - 2 * u[i] + u[i + 1]) / (h * h) + lambda * (u[i] - u[i] ** 3)));
        expect(worst).toBeLessThan(1e-7);
      }
      // no two alike
      for (let a = 0; a < nodes.length; a++) for (let b = a + 1; b < nodes.length; b++) expect(rms(nodes[a], nodes[b])).toBeGreaterThan(0.05);

      // the zero state, and a pair ±u_j with j − 1 sign changes for each j = 1 … k
      const changes = (u: Float64Array): number => {
        let c = 0;
        let last = 0;
        for (const v of u) {
          if (Math.abs(v) < 1e-9) continue;
          if (last !== 0 && Math.sign(v) !== last) c++;
          last = Math.sign(v);
        }
        return c;
      };
      const zero = nodes.filter((u) => Math.max(...u.map(Math.abs)) < 1e-8);
      expect(zero.length).toBe(1);
      for (let j = 1; j <= k; j++) {
        const pair = nodes.filter((u) => Math.max(...u.map(Math.abs)) > 1e-3 && changes(u) === j - 1);
        expect(pair.length).toBe(2);
        expect(rms(pair[0], pair[1].map((v) => -v))).toBeLessThan(1e-7);
      }

      // stability: j − 1 unstable eigenvalues on the ±u_j pair, k on u = 0; the same counts from dense eigenvalues
      const pat = problem.pattern();
      const values = new Float64Array(pat.colPtr[pat.cols]);
      run.states.forEach((s, i) => {
        const expected = Math.max(...nodes[i].map(Math.abs)) < 1e-8 ? k : changes(nodes[i]);
        expect(s.stability?.unstableCount).toBe(expected);
        expect(s.stability?.stable).toBe(expected === 0);
        problem.jacobian(s.u, p, values);
        const dense = new EigenvalueDecomposition(new Matrix(toDense({ ...pat, values })));
        expect(dense.realEigenvalues.filter((re) => re > 0).length).toBe(expected);
        const rightmost = Math.max(...dense.realEigenvalues);
        expect(Math.abs(s.stability!.leading!.re - rightmost)).toBeLessThan(1e-7 * Math.max(1, Math.abs(rightmost)));
      });
      // how many solves found each: every state once (deflation kept them apart)
      expect(run.states.every((s) => s.solves === 1)).toBe(true);
      expect(run.solves.filter((r) => r.outcome === 'repeat')).toEqual([]);
    });
  }
});
