/**
 * The sizes behind the convergence test (src/problem/residual-size.ts): term sizes bound the
 * residual (triangle inequality), rounding sizes bound the term sizes, expression models split
 * their formulas into summands, code models get the Jacobian rule — and a state that is not a
 * solution fails the test where the old row-scaled residual passed it (issue 11, item 1).
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { models } from '../../discretisations/index.js';
import type { Problem } from '../../src/problem/problem.js';
import { ResidualSizes, residualTest } from '../../src/problem/residual-size.js';
import codeModel from '../fixtures/code-model.js';

const variants: [string, Record<string, unknown>, number[], Record<string, number>][] = [
  ['bratu', { boundary: 'dirichlet' }, [12], { lambda: 2 }],
  ['bratu', { boundary: 'robin' }, [5, 4], { lambda: 1, biot: 3 }],
  ['allen-cahn', { boundary: 'periodic' }, [3, 3, 4], { lambda: 20 }],
  ['allen-cahn', { boundary: 'neumann' }, [10], { lambda: 5 }],
  ['gray-scott', { boundary: 'periodic', 'phase-condition': true, initial: 'pulse' }, [12], { F: 0.03, k: 0.06 }],
  ['brusselator', { boundary: 'neumann' }, [6, 6], { a: 2, b: 3 }],
  ['elastica', {}, [20], { lambda: 12 }],
  ['beam-foundation', { ends: 'pinned' }, [20], { P: 5, EI: 1.5, kf: 40, k3: 30 }],
  ['beam-foundation', { ends: 'clamped' }, [20], { P: 5, EI: 1.5, kf: 40, k3: -30 }],
  ['reaction-diffusion', { fields: ['u', 'v'], parameters: { mu: 0.5 }, reaction: { u: 'mu*(u - u^3) - v', v: 'u*v - v/(1 + u)' }, diffusion: { u: 1, v: 0.5 }, boundary: 'neumann' }, [8], { mu: 0.5 }],
];

function build(model: string, options: Record<string, unknown>, intervals: number[]): Problem {
  return models[model].factory({ ...options, grid: { intervals } } as never);
}

describe('residual sizes of every built-in model', () => {
  it('|F_i| ≤ terms_i ≤ rounding_i at random states (triangle inequality; rounding counts more summands)', () => {
    for (const [model, options, intervals, given] of variants) {
      const problem = build(model, options, intervals);
      const p = { ...Object.fromEntries(problem.parameters.map((s) => [s.name, s.default])), ...given };
      const sizes = new ResidualSizes(problem);
      expect(sizes.exact, model).toBe(true);
      const f = new Float64Array(problem.size);
      fc.assert(
        fc.property(fc.integer({ min: 1, max: 2 ** 31 - 2 }), fc.double({ min: 0.01, max: 3, noNaN: true }), (seed, amplitude) => {
          // a random state with entries in [−amplitude, amplitude] (Park–Miller generator from the seed)
          let s = seed;
          const u = Float64Array.from({ length: problem.size }, () => amplitude * (2 * ((s = (s * 16807) % 2147483647) / 2147483647) - 1));
          problem.residual(u, p, f);
          sizes.evaluate(u, p, f);
          const bad: number[] = [];
          for (let i = 0; i < problem.size; i++) {
            if (!(Math.abs(f[i]) <= sizes.terms[i] * (1 + 1e-12) + 1e-300 && sizes.terms[i] <= sizes.rounding[i] * (1 + 1e-12))) bad.push(i);
          }
          expect(bad, `${model}: rows where |F| > terms or terms > rounding`).toEqual([]);
        }),
        { numRuns: 20 },
      );
    }
  });

  it('an expression model counts the summands of its formulas: λ(u − u³) as |λu| + |λu³|, exp(u)/(1 + u) as one', () => {
    const problem = build('reaction-diffusion', { fields: ['u'], parameters: { lambda: 3 }, reaction: { u: 'lambda*(u - u^3) + exp(u)/(1 + u)' }, diffusion: { u: 1 }, boundary: 'neumann' }, [4]);
    const u = Float64Array.from([0.5, -1.5, 2, 0.25, -0.75]);
    const f = new Float64Array(5);
    problem.residual(u, { lambda: 3 }, f);
    const sizes = new ResidualSizes(problem);
    sizes.evaluate(u, { lambda: 3 }, f);
    // the diffusion term as a whole: F − reaction (neumann: no boundary data)
    for (let i = 0; i < 5; i++) {
      const x = u[i];
      const reaction = 3 * (x - x ** 3) + Math.exp(x) / (1 + x);
      const expected = Math.abs(f[i] - reaction) + Math.abs(3 * x) + Math.abs(3 * x ** 3) + Math.abs(Math.exp(x) / (1 + x));
      expect(sizes.terms[i]).toBeCloseTo(expected, 12);
    }
  });

  it('a code model without term sizes gets the Jacobian rule: J u and F − J u as the two terms', () => {
    const problem = codeModel({ grid: { intervals: [12] } });
    expect(problem.residualMagnitudes).toBeUndefined();
    const p = { lambda: 2, mean: 0.3 };
    const u = Float64Array.from({ length: problem.size }, (_, i) => Math.sin(i + 1));
    const f = new Float64Array(problem.size);
    problem.residual(u, p, f);
    const sizes = new ResidualSizes(problem);
    expect(sizes.exact).toBe(false);
    sizes.evaluate(u, p, f);
    // J u by finite differences of F along u (independent of the stored pattern): F(u + εu) − F(u − εu) over 2ε
    const eps = 1e-6;
    const fp = new Float64Array(problem.size);
    const fm = new Float64Array(problem.size);
    problem.residual(u.map((x) => x * (1 + eps)), p, fp);
    problem.residual(u.map((x) => x * (1 - eps)), p, fm);
    for (let i = 0; i < problem.size; i++) {
      const ju = (fp[i] - fm[i]) / (2 * eps);
      expect(sizes.terms[i]).toBeCloseTo(Math.abs(ju) + Math.abs(f[i] - ju), 5);
    }
  });
});

describe('the test cannot be faked by large stencils', () => {
  it('beam, 80 intervals, EI = 2: w = 0.18 sin(πx/L) at P = 24.44 fails (the only nearby solution is w = 0); the old row-scaled residual was below 1e-9', () => {
    const p = { P: 24.44, EI: 2, kf: 50, k3: 10 };
    const h = 2 / 80;
    const problem2 = models['beam-foundation'].factory({ ends: 'pinned', grid: { intervals: [80], length: [2] } } as never);
    const u = Float64Array.from({ length: 79 }, (_, i) => 0.18 * Math.sin((Math.PI * (i + 1) * h) / 2));
    const r = residualTest(problem2, u, p, 1e-9);
    expect(r.passed).toBe(false);
    expect(r.norm / r.bound).toBeGreaterThan(1e3);
    // what the old test measured: F divided row by row by max(1, max_j |J_ij|), weighted norm
    const f = new Float64Array(79);
    problem2.residual(u, p, f);
    const pattern = problem2.pattern();
    const values = new Float64Array(pattern.colPtr[pattern.cols]);
    problem2.jacobian(u, p, values);
    const rowMax = new Float64Array(79);
    for (let k = 0; k < values.length; k++) rowMax[pattern.rowIdx[k]] = Math.max(rowMax[pattern.rowIdx[k]], Math.abs(values[k]));
    let scaled = 0;
    for (let i = 0; i < 79; i++) scaled += h * (f[i] / Math.max(1, rowMax[i])) ** 2;
    expect(Math.sqrt(scaled)).toBeLessThan(1e-4); // tiny, while max |F| is 0.06-sized
    expect(Math.max(...f.map(Math.abs))).toBeGreaterThan(0.01);
  });

  it('1D Bratu at λ = 1e20 with u ≈ −21 inside: the residual is of the size of its terms', () => {
    const problem = build('bratu', {}, [20]);
    const u = new Float64Array(19).fill(-21);
    const r = residualTest(problem, u, { lambda: 1e20 }, 1e-9);
    expect(r.passed).toBe(false);
    expect(r.norm).toBeGreaterThan(1e9);
  });
});
