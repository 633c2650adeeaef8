/**
 * The expression-defined `reaction-diffusion` model:
 *  - it reproduces the built-in gray-scott, brusselator and bratu models (same pattern, same
 *    residual, Jacobian, parameter, second and mixed derivatives to round-off) — the built-ins
 *    are hand-written formulas on the same assembly, so this checks the compiled expressions
 *    against hand-derived derivatives on full grids;
 *  - on random expression systems (1D and 2D, every boundary kind, diffusion as a number, a
 *    parameter or an expression) the analytic Jacobian, parameter derivatives, second and mixed
 *    derivatives agree with central finite differences (relative error < 1e-6);
 *  - the coupling pattern follows the expressions; bad input gets one-line errors.
 */
import { describe, expect, test } from 'vitest';
import fc from 'fast-check';
import type { Params, Problem } from '../../src/problem/problem.js';
import { type CscMatrix, matVec } from '../../src/linalg/sparse.js';
import { reactionDiffusion } from '../../discretisations/expression/reaction-diffusion.js';
import { grayScott } from '../../discretisations/models/gray-scott.js';
import { brusselator } from '../../discretisations/models/brusselator.js';
import { bratu } from '../../discretisations/models/bratu.js';
import { modelEntry } from '../../discretisations/index.js';
import { randomExpression, richardsonDerivative } from './random-expressions.js';

/** A deterministic pseudo-random vector in [lo, hi] (xorshift; reproducible without fast-check). */
function vector(n: number, seed: number, lo = 0, hi = 1): Float64Array {
  let s = seed >>> 0 || 1;
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    s ^= s << 13;
    s >>>= 0;
    s ^= s >>> 17;
    s ^= s << 5;
    s >>>= 0;
    out[i] = lo + ((hi - lo) * s) / 2 ** 32;
  }
  return out;
}

/** Largest element-wise difference relative to max(|a_i|, |b_i|, 1). */
function maxRelativeDifference(a: Float64Array, b: Float64Array): number {
  expect(a.length).toBe(b.length);
  let m = 0;
  for (let i = 0; i < a.length; i++) {
    const d = Math.abs(a[i] - b[i]) / Math.max(Math.abs(a[i]), Math.abs(b[i]), 1);
    if (!(d <= m)) m = Number.isNaN(d) ? Infinity : d;
  }
  return m;
}

/** Compare every quantity of two problems with the same unknowns at state u and parameters p. */
function compareProblems(a: Problem, b: Problem, u: Float64Array, p: Params, tol: number): void {
  expect(a.size).toBe(b.size);
  const pa = a.pattern();
  const pb = b.pattern();
  expect([...pa.colPtr]).toEqual([...pb.colPtr]);
  expect([...pa.rowIdx]).toEqual([...pb.rowIdx]);
  expect([...a.weights]).toEqual([...b.weights]);
  const n = a.size;
  const ra = new Float64Array(n);
  const rb = new Float64Array(n);
  a.residual(u, p, ra);
  b.residual(u, p, rb);
  expect(maxRelativeDifference(ra, rb)).toBeLessThanOrEqual(tol);
  const ja = new Float64Array(pa.rowIdx.length);
  const jb = new Float64Array(pb.rowIdx.length);
  a.jacobian(u, p, ja);
  b.jacobian(u, p, jb);
  expect(maxRelativeDifference(ja, jb)).toBeLessThanOrEqual(tol);
  for (const s of a.parameters) {
    a.parameterDerivative(u, p, s.name, ra);
    b.parameterDerivative(u, p, s.name, rb);
    expect(maxRelativeDifference(ra, rb), `parameter ${s.name}`).toBeLessThanOrEqual(tol);
  }
  expect(typeof a.secondDerivative).toBe('function');
  expect(typeof b.secondDerivative).toBe('function');
  const s = vector(n, 11, -1, 1);
  const t = vector(n, 12, -1, 1);
  a.secondDerivative!(u, p, s, t, ra);
  b.secondDerivative!(u, p, s, t, rb);
  expect(maxRelativeDifference(ra, rb)).toBeLessThanOrEqual(tol);
  for (const q of a.parameters) {
    a.mixedDerivative!(u, p, q.name, s, ra);
    b.mixedDerivative!(u, p, q.name, s, rb);
    expect(maxRelativeDifference(ra, rb), `mixed ${q.name}`).toBeLessThanOrEqual(tol);
  }
}

const grayScottExpressions = {
  fields: ['u', 'v'],
  parameters: { F: 0.04, k: 0.06, Du: 2e-5, Dv: 1e-5 },
  reaction: { u: '-u*v^2 + F*(1 - u)', v: 'u*v^2 - (F + k)*v' },
  diffusion: { u: 'Du', v: 'Dv' },
};

const brusselatorExpressions = {
  fields: ['u', 'v'],
  parameters: { a: 2, b: 2, Du: 1, Dv: 8 },
  reaction: { u: 'a - (b + 1)*u + u^2*v', v: 'b*u - u^2*v' },
  diffusion: { u: 'Du', v: 'Dv' },
};

describe('reproduces the built-in models', () => {
  const grids = [{ intervals: [24] }, { intervals: [12, 10], length: [2, 1.5] }];
  for (const grid of grids) {
    for (const boundary of ['periodic', 'neumann'] as const) {
      const where = `${grid.intervals.length}D ${boundary}`;
      test(`gray-scott ${where}`, () => {
        const builtIn = grayScott({ grid, boundary });
        const expr = reactionDiffusion({ grid, ...grayScottExpressions, boundary });
        // states near the pattern-forming range, parameters away from the defaults
        const u = vector(builtIn.size, 3, 0, 1);
        compareProblems(expr, builtIn, u, { F: 0.037, k: 0.061, Du: 2e-3, Dv: 1e-3 }, 1e-14);
      });
      test(`brusselator ${where}`, () => {
        const builtIn = brusselator({ grid, boundary });
        const expr = reactionDiffusion({ grid, ...brusselatorExpressions, boundary });
        const u = vector(builtIn.size, 5, 0, 4);
        compareProblems(expr, builtIn, u, { a: 1.5, b: 3.2, Du: 0.01, Dv: 0.08 }, 1e-14);
      });
    }
  }

  test('gray-scott with a phase condition', () => {
    const grid = { intervals: [20] };
    const builtIn = grayScott({ grid, boundary: 'periodic', 'phase-condition': true, initial: 'pulse' });
    const expr = reactionDiffusion({ grid, ...grayScottExpressions, boundary: 'periodic', 'phase-condition': true });
    const ref = vector(builtIn.gridUnknowns, 9, 0, 1);
    (builtIn as unknown as { setPhaseReference(r: Float64Array): void }).setPhaseReference(ref);
    expr.setPhaseReference(ref);
    const u = vector(builtIn.size, 4, 0, 1);
    compareProblems(expr, builtIn, u, { F: 0.04, k: 0.06, Du: 1e-3, Dv: 5e-4 }, 1e-14);
  });

  test('bratu with dirichlet and robin walls (2D)', () => {
    const grid = { intervals: [9, 7] };
    const bratuExpressions = { fields: ['u'], reaction: { u: 'lambda*exp(u)' }, diffusion: { u: 1 } };
    const d = reactionDiffusion({ grid, ...bratuExpressions, parameters: { lambda: 1 }, boundary: 'dirichlet' });
    compareProblems(d, bratu({ grid, boundary: 'dirichlet' }), vector(d.size, 7, 0, 2), { lambda: 5.3 }, 1e-14);
    const r = reactionDiffusion({
      grid,
      ...bratuExpressions,
      parameters: { lambda: 1, biot: 10 },
      boundary: { kind: 'robin', coefficient: 'biot', value: 0 },
    });
    compareProblems(r, bratu({ grid, boundary: 'robin' }), vector(r.size, 8, 0, 2), { lambda: 2.1, biot: 3.5 }, 1e-14);
  });

  test('uniform initial states match', () => {
    const grid = { intervals: [6, 6] };
    const builtIn = brusselator({ grid, boundary: 'neumann' });
    const expr = reactionDiffusion({ grid, ...brusselatorExpressions, boundary: 'neumann', initial: { u: 'a', v: 'b/a' } });
    const p = { a: 1.5, b: 3.2, Du: 1, Dv: 8 };
    expect([...expr.initialGuess(p)]).toEqual([...builtIn.initialGuess(p)]);
  });
});

// ---------------------------------------------------------------------------------------------
// Finite-difference checks on random expression systems

function jacobianMatrix(problem: Problem, u: Float64Array, p: Params): CscMatrix {
  const pat = problem.pattern();
  const values = new Float64Array(pat.rowIdx.length);
  problem.jacobian(u, p, values);
  return { ...pat, values };
}

/** Relative agreement of two vectors: max |a − b| ≤ tol · max(‖b‖∞, 1). */
function agree(a: Float64Array, b: Float64Array, tol: number): { ok: boolean; error: number } {
  let scale = 1;
  for (let i = 0; i < b.length; i++) scale = Math.max(scale, Math.abs(b[i]), Math.abs(a[i]));
  let err = 0;
  for (let i = 0; i < a.length; i++) err = Math.max(err, Math.abs(a[i] - b[i]));
  return { ok: err <= tol * scale, error: err / scale };
}

/** Fourth-order central difference of a vector function along one scalar. */
function fdVector(n: number, f: (t: number, out: Float64Array) => void, t0: number): Float64Array {
  const out = new Float64Array(n);
  const tmp = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    out[i] = richardsonDerivative((t) => {
      f(t, tmp);
      return tmp[i];
    }, t0);
  }
  return out;
}

/**
 * Check every derivative of `problem` at (u, p) against finite differences: Jacobian columns,
 * every parameter derivative, second derivative along random directions, mixed derivatives.
 */
function checkDerivatives(problem: Problem, u: Float64Array, p: Params, tol: number): void {
  const n = problem.size;
  const J = jacobianMatrix(problem, u, p);
  const col = new Float64Array(n);
  const e = new Float64Array(n);
  // The residual is cheap on these small grids; a directional derivative per unit vector checks
  // every column, i.e. every Jacobian entry (and that nothing lies outside the pattern).
  const residualAlong = (dir: Float64Array) => (t: number, out: Float64Array) => {
    const v = u.slice();
    for (let i = 0; i < n; i++) v[i] += t * dir[i];
    problem.residual(v, p, out);
  };
  for (let j = 0; j < n; j++) {
    e.fill(0);
    e[j] = 1;
    matVec(J, e, col);
    const fd = fdVector(n, residualAlong(e), 0);
    const r = agree(col, fd, tol);
    expect(r.ok, `Jacobian column ${j}: relative error ${r.error}`).toBe(true);
  }
  const dp = new Float64Array(n);
  for (const s of problem.parameters) {
    problem.parameterDerivative(u, p, s.name, dp);
    const fd = fdVector(n, (t, out) => problem.residual(u, { ...p, [s.name]: t }, out), p[s.name]);
    const r = agree(dp, fd, tol);
    expect(r.ok, `parameter ${s.name}: relative error ${r.error}`).toBe(true);
  }
  // second derivative F_uu[a, b] = d/dt (J(u + t b) a) and mixed F_up[a] = d/dp (J a)
  const a = vector(n, 21, -1, 1);
  const b = vector(n, 22, -1, 1);
  const Ja = (v: Float64Array, q: Params, out: Float64Array): void => {
    matVec(jacobianMatrix(problem, v, q), a, out);
  };
  const second = new Float64Array(n);
  problem.secondDerivative!(u, p, a, b, second);
  const fd2 = fdVector(n, (t, out) => {
    const v = u.slice();
    for (let i = 0; i < n; i++) v[i] += t * b[i];
    Ja(v, p, out);
  }, 0);
  const r2 = agree(second, fd2, tol);
  expect(r2.ok, `second derivative: relative error ${r2.error}`).toBe(true);
  for (const s of problem.parameters) {
    problem.mixedDerivative!(u, p, s.name, a, dp);
    const fd = fdVector(n, (t, out) => Ja(u, { ...p, [s.name]: t }, out), p[s.name]);
    const r = agree(dp, fd, tol);
    expect(r.ok, `mixed derivative ${s.name}: relative error ${r.error}`).toBe(true);
  }
}

type Kind = 'dirichlet' | 'neumann' | 'robin' | 'periodic';

/** Boundary conditions of each kind with parameter-dependent data where the kind has data. */
function boundaryOf(kind: Kind): unknown {
  switch (kind) {
    case 'dirichlet':
      // u: value from a parameter; v: a number on one side, a parameter on the others
      return { u: { kind: 'dirichlet', value: 'g' }, v: { all: { kind: 'dirichlet', value: 'g' }, xmin: { kind: 'dirichlet', value: 0.3 } } };
    case 'neumann':
      return { u: { kind: 'neumann', flux: 'g' }, v: { all: 'neumann', xmax: { kind: 'neumann', flux: -0.5 } } };
    case 'robin':
      return { all: { kind: 'robin', coefficient: 'alpha', value: 'g' } };
    case 'periodic':
      return 'periodic';
  }
}

describe('derivatives agree with finite differences on random expression systems', () => {
  const SYMBOLS = ['u', 'v', 'alpha', 'beta', 'x'];
  const SYMBOLS_2D = [...SYMBOLS, 'y'];
  for (const dim of [1, 2]) {
    for (const kind of ['dirichlet', 'neumann', 'robin', 'periodic'] as Kind[]) {
      test(`${dim}D ${kind}`, () => {
        const symbols = dim === 1 ? SYMBOLS : SYMBOLS_2D;
        fc.assert(
          fc.property(
            randomExpression(symbols, 3),
            randomExpression(symbols, 3),
            fc.constantFrom<unknown>(0.7, 'beta', 'beta*(1 + alpha^2)'),
            fc.double({ min: -1, max: 1, noNaN: true }),
            fc.double({ min: 0.5, max: 1.5, noNaN: true }),
            fc.double({ min: 0.2, max: 2, noNaN: true }),
            fc.integer({ min: 1, max: 1000 }),
            (ru, rv, dv, alpha, beta, g, seed) => {
              const grid = dim === 1 ? { intervals: [6], length: [1.3] } : { intervals: [4, 3], length: [1, 0.8] };
              const problem = reactionDiffusion({
                grid,
                fields: ['u', 'v'],
                parameters: { alpha: 0.5, beta: 1, g: 1 },
                reaction: { u: ru.text, v: rv.text },
                diffusion: { u: 0.4, v: dv },
                boundary: boundaryOf(kind),
              });
              // robin coefficient alpha must keep the problem meaningful, not necessarily positive
              const p = { alpha, beta, g };
              const u = vector(problem.size, seed, -1.2, 1.2);
              checkDerivatives(problem, u, p, 1e-6);
            },
          ),
          { numRuns: 6 },
        );
      });
    }
  }

  test('3D grid with coordinates x, y, z in the reaction and the initial state', () => {
    const problem = reactionDiffusion({
      grid: { intervals: [3, 3, 3] },
      fields: ['T'],
      parameters: { lambda: 1.2, gamma: 15 },
      reaction: { T: 'lambda*exp(T/(1 + T/gamma))*(1 + 0.1*sin(pi*x)*cos(y)*z)' },
      diffusion: { T: 1 },
      boundary: { all: 'dirichlet', zmax: { kind: 'robin', coefficient: 2, value: 0 } },
      initial: { T: 'sin(pi*x)*sin(pi*y)*z' },
    });
    const p = { lambda: 1.2, gamma: 15 };
    const u = problem.initialGuess(p);
    expect(u.some((t) => t !== 0)).toBe(true);
    checkDerivatives(problem, vector(problem.size, 31, 0, 1), p, 1e-6);
  });
});

describe('pattern and description', () => {
  test('registered as reaction-diffusion in the model registry', () => {
    const entry = modelEntry('reaction-diffusion');
    expect(entry.dimensions).toEqual([1, 2, 3]);
    expect(entry.options.map((o) => o.name)).toEqual(['grid', 'fields', 'parameters', 'reaction', 'diffusion', 'boundary', 'initial', 'phase-condition']);
    const p = entry.factory({ grid: { intervals: [6] }, ...grayScottExpressions, boundary: 'neumann' });
    expect(p.model).toBe('reaction-diffusion');
  });

  test('the Jacobian pattern holds only the couplings the expressions have', () => {
    const grid = { intervals: [10] };
    const common = { grid, fields: ['u', 'v'], parameters: { k: 1 }, diffusion: { u: 1, v: 1 }, boundary: 'neumann' };
    const full = reactionDiffusion({ ...common, reaction: { u: 'u*v', v: 'u*v' } });
    const oneWay = reactionDiffusion({ ...common, reaction: { u: 'k - u', v: 'u - v^2' } });
    const nodes = 11;
    // full: per node a dense 2x2 block; one-way: no ∂R_u/∂v entry
    expect(full.pattern().rowIdx.length - oneWay.pattern().rowIdx.length).toBe(nodes);
  });

  test('describe() names the model, fields and axes and carries a caution', () => {
    const p = reactionDiffusion({ grid: { intervals: [8, 4] }, ...grayScottExpressions, boundary: 'periodic' });
    const d = p.describe();
    expect(d.model).toBe('reaction-diffusion');
    expect(d.fields).toEqual(['u', 'v']);
    expect(d.axes.map((a) => a.name)).toEqual(['x', 'y']);
    expect(d.summary).toContain('-u*v^2 + F*(1 - u)');
    expect(d.caution).toMatch(/licensed/);
    expect(p.parameters.map((s) => s.name)).toEqual(['F', 'k', 'Du', 'Dv']);
  });

  test('parameters with descriptions and bounds', () => {
    const p = reactionDiffusion({
      grid: { intervals: [4] },
      fields: ['u'],
      parameters: { r: { default: 2, min: 0, max: 10, description: 'growth rate' } },
      reaction: { u: 'r*u*(1 - u)' },
      diffusion: { u: 1 },
      boundary: 'neumann',
    });
    expect(p.parameters).toEqual([{ name: 'r', default: 2, min: 0, max: 10, description: 'growth rate' }]);
  });
});

describe('errors', () => {
  const base = {
    grid: { intervals: [8, 8] },
    fields: ['u', 'v'],
    parameters: { F: 0.04, k: 0.06 },
    reaction: { u: '-u*v^2 + F*(1-u)', v: 'u*v^2 - (F+k)*v' },
    diffusion: { u: 2e-5, v: 1e-5 },
    boundary: 'periodic',
  };
  const cases: [string, Record<string, unknown>, RegExp][] = [
    ['syntax error in a reaction', { reaction: { u: 'u*(v', v: 'v' } }, /^model 'reaction-diffusion': reaction for field 'u': syntax error in "u\*\(v": Parenthesis \) expected/],
    ['unknown symbol', { reaction: { u: 'u*q', v: 'v' } }, /^model 'reaction-diffusion': reaction for field 'u': unknown symbol 'q' in "u\*q" \(accepted: u, v, F, k, x, y; constants pi, e\)$/],
    ['z on a 2D grid', { reaction: { u: 'u', v: 'v*z' } }, /^model 'reaction-diffusion': reaction for field 'v': unknown symbol 'z' in "v\*z"/],
    ['non-differentiable function', { reaction: { u: 'max(u, 0)', v: 'v' } }, /reaction for field 'u': the function 'max' is not accepted because it has no derivative everywhere in "max\(u, 0\)"/],
    ['missing reaction', { reaction: { u: 'u' } }, /^model 'reaction-diffusion': option 'reaction' has no entry for field 'v'/],
    ['reaction for an unknown field', { reaction: { u: 'u', v: 'v', w: 'w' } }, /^model 'reaction-diffusion': option 'reaction' names unknown field 'w' \(fields: u, v\)$/],
    ['diffusion with a field in it', { diffusion: { u: 'u*F', v: 1 } }, /^model 'reaction-diffusion': diffusion for field 'u': unknown symbol 'u' in "u\*F" \(accepted: F, k; constants pi, e\)$/],
    ['negative diffusion', { diffusion: { u: -1, v: 1 } }, /^model 'reaction-diffusion': diffusion for field 'u': must be a finite number >= 0, got -1$/],
    ['missing diffusion', { diffusion: { u: 1 } }, /option 'diffusion' has no entry for field 'v'/],
    ['initial with a field in it', { initial: { u: 'v + x' } }, /^model 'reaction-diffusion': initial for field 'u': unknown symbol 'v' in "v \+ x" \(accepted: F, k, x, y; constants pi, e\)$/],
    ['reserved parameter name', { parameters: { max: 1 } }, /^model 'reaction-diffusion': parameter name 'max' is reserved for an output column/],
    ['parameter named like a function', { parameters: { exp: 1 } }, /^model 'reaction-diffusion': parameter name 'exp' is reserved in expressions/],
    ['field named like a side', { fields: ['u', 'xmin'], reaction: { u: 'u', xmin: '0' }, diffusion: { u: 1, xmin: 1 } }, /field name 'xmin' is reserved for boundary sides/],
    ['parameter without a default', { parameters: { F: { min: 0 } } }, /^model 'reaction-diffusion': parameter 'F': 'default' must be a finite number, got undefined$/],
    ['unknown boundary kind', { boundary: 'wall' }, /^model 'reaction-diffusion': boundary: unknown boundary kind 'wall' \(accepted: neumann, dirichlet, robin, periodic\)$/],
    ['robin without a coefficient', { boundary: 'robin' }, /boundary: a robin condition needs a coefficient/],
    ['boundary mixing fields and sides', { boundary: { u: 'periodic', all: 'periodic' } }, /option 'boundary' mixes field names and 'all'/],
    ['boundary parameter unknown', { boundary: { kind: 'dirichlet', value: 'T0' } }, /names parameter 'T0', which the model does not have \(known: F, k\)/],
    ['wrong key in a condition', { boundary: { kind: 'neumann', value: 1 } }, /boundary: key 'value' does not belong to a neumann condition \(accepted: kind, flux\)$/],
    ['unknown option', { colour: 'red' }, /^model 'reaction-diffusion': unknown option 'colour'/],
    ['fields not a list', { fields: 'u' }, /^model 'reaction-diffusion': option 'fields' must be a non-empty list of names, got 'u'$/],
  ];
  for (const [what, change, pattern] of cases) {
    test(what, () => {
      let err: unknown;
      try {
        reactionDiffusion({ ...base, ...change } as never);
      } catch (e) {
        err = e;
      }
      expect(err).toBeInstanceOf(Error);
      const msg = (err as Error).message;
      expect(msg).not.toContain('\n');
      expect(msg).toMatch(pattern);
    });
  }
});
