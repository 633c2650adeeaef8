import { describe, expect, test } from 'vitest';
import fc from 'fast-check';
import { LuDecomposition, Matrix } from 'ml-matrix';
import { ComplexSparseLU, SparseLU, SparseLUError } from '../../src/linalg/lu.js';
import { type CscMatrix, cscFromTriplets, matVec, matTVec, toDense } from '../../src/linalg/sparse.js';
import { wasmMemoryBytes } from '../../src/linalg/wasm.js';

/**
 * Random sparse nonsingular matrices with controlled conditioning: A = P (D + E) with D a
 * diagonal of magnitudes in [1, 4] and random signs, E sparse with row sums of |E| at most half
 * of min |D| (so D + E is strictly diagonally dominant, cond_∞ ≤ (4 + 0.5)/(1 − 0.5) = 9), and P
 * a random row permutation — which takes every entry off the diagonal, forces pivoting and
 * produces reducible (block triangular) structures. Optionally a dense "arrow" row and column.
 */
interface RandomMatrix {
  a: CscMatrix;
  dense: Matrix;
}

const matrixArb = fc
  .record({
    n: fc.integer({ min: 1, max: 200 }),
    density: fc.double({ min: 0, max: 0.08, noNaN: true }),
    permute: fc.boolean(),
    arrow: fc.boolean(),
    seed: fc.integer({ min: 1, max: 2 ** 30 }),
  })
  .map(({ n, density, permute, arrow, seed }) => buildMatrix(n, density, permute, arrow, seed));

function rng(seed: number): () => number {
  // small deterministic generator (mulberry32) so a failing case replays exactly
  let s = seed >>> 0;
  return () => {
    s = (s + 0x6d2b79f5) >>> 0;
    let t = s;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

function buildMatrix(n: number, density: number, permute: boolean, arrow: boolean, seed: number): RandomMatrix {
  const rand = rng(seed);
  const ri: number[] = [];
  const ci: number[] = [];
  const v: number[] = [];
  const off: Map<number, number>[] = Array.from({ length: n }, () => new Map());
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) if (i !== j && rand() < density) off[i].set(j, rand() * 2 - 1);
    if (arrow && n > 2) {
      // a dense last row and last column (like a continuation border)
      if (i === n - 1) for (let j = 0; j < n - 1; j++) off[i].set(j, rand() * 2 - 1);
      else off[i].set(n - 1, rand() * 2 - 1);
    }
  }
  const perm = Array.from({ length: n }, (_, i) => i);
  if (permute) {
    for (let i = n - 1; i > 0; i--) {
      const j = Math.floor(rand() * (i + 1));
      [perm[i], perm[j]] = [perm[j], perm[i]];
    }
  }
  for (let i = 0; i < n; i++) {
    const d = (1 + 3 * rand()) * (rand() < 0.5 ? -1 : 1);
    let rowSum = 0;
    for (const x of off[i].values()) rowSum += Math.abs(x);
    const scale = rowSum > 0 ? (0.5 * 1) / rowSum : 0; // |E| row sum ≤ 0.5 ≤ min|D|/2
    ri.push(perm[i]);
    ci.push(i);
    v.push(d);
    for (const [j, x] of off[i]) {
      ri.push(perm[i]);
      ci.push(j);
      v.push(x * scale);
    }
  }
  const a = cscFromTriplets(n, n, ri, ci, v);
  return { a, dense: new Matrix(toDense(a)) };
}

function randomVector(n: number, seed: number): Float64Array {
  const rand = rng(seed);
  return Float64Array.from({ length: n }, () => rand() * 2 - 1);
}

function norm(x: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < x.length; i++) s += x[i] * x[i];
  return Math.sqrt(s);
}

function relativeDiff(x: ArrayLike<number>, y: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < x.length; i++) s += (x[i] - y[i]) ** 2;
  return Math.sqrt(s) / Math.max(norm(y), 1e-300);
}

function relativeResidual(a: CscMatrix, x: Float64Array, b: Float64Array, transposed = false): number {
  const r = transposed ? matTVec(a, x, new Float64Array(a.cols)) : matVec(a, x, new Float64Array(a.rows));
  for (let i = 0; i < r.length; i++) r[i] -= b[i];
  return norm(r) / Math.max(norm(b), 1e-300);
}

const orderings = ['amd', 'colamd', 'metis'] as const;

describe('SparseLU against ml-matrix dense LU (reference library)', () => {
  test('solve and transpose solve match the dense solution', () => {
    fc.assert(
      fc.property(matrixArb, fc.constantFrom(...orderings), fc.integer({ min: 1, max: 1000 }), ({ a, dense }, ordering, seed) => {
        const n = a.rows;
        const b = randomVector(n, seed);
        const lu = new SparseLU(a, { ordering });
        try {
          lu.factor(a.values);
          const x = lu.solve(b);
          const xt = lu.solveTranspose(b);
          const ref = new LuDecomposition(dense).solve(Matrix.columnVector(Array.from(b))).getColumn(0);
          const reft = new LuDecomposition(dense.transpose()).solve(Matrix.columnVector(Array.from(b))).getColumn(0);
          expect(relativeResidual(a, x, b)).toBeLessThan(1e-10);
          expect(relativeResidual(a, xt, b, true)).toBeLessThan(1e-10);
          expect(relativeDiff(x, ref)).toBeLessThan(1e-10);
          expect(relativeDiff(xt, reft)).toBeLessThan(1e-10);
        } finally {
          lu.dispose();
        }
      }),
      { numRuns: 60 },
    );
  });

  test('several right-hand sides at once give the same columns as one at a time', () => {
    fc.assert(
      fc.property(matrixArb, fc.integer({ min: 2, max: 5 }), ({ a }, nrhs) => {
        const n = a.rows;
        const b = randomVector(n * nrhs, 7);
        const lu = new SparseLU(a);
        try {
          lu.factor(a.values);
          const x = lu.solve(b, undefined, nrhs);
          for (let c = 0; c < nrhs; c++) {
            const one = lu.solve(b.subarray(c * n, (c + 1) * n));
            expect(relativeDiff(x.subarray(c * n, (c + 1) * n), one)).toBeLessThan(1e-14);
          }
        } finally {
          lu.dispose();
        }
      }),
      { numRuns: 20 },
    );
  });

  test('determinant sign and log|det| match the dense determinant', () => {
    fc.assert(
      fc.property(matrixArb, fc.constantFrom(...orderings), ({ a, dense }, ordering) => {
        const lu = new SparseLU(a, { ordering });
        try {
          lu.factor(a.values);
          const det = new LuDecomposition(dense).determinant;
          const { sign, logAbs } = lu.logDeterminant();
          expect(sign).toBe(Math.sign(det));
          expect(Math.abs(logAbs - Math.log(Math.abs(det)))).toBeLessThan(1e-10 * Math.max(1, Math.abs(logAbs)));
        } finally {
          lu.dispose();
        }
      }),
      { numRuns: 60 },
    );
  });

  test('refactor and the refactor-or-factor policy give the same solutions as a fresh factor', () => {
    fc.assert(
      fc.property(matrixArb, fc.integer({ min: 1, max: 1000 }), ({ a }, seed) => {
        const n = a.rows;
        const rand = rng(seed);
        // new values on the same pattern: scale every entry by a factor in [0.8, 1.2] (dominance kept)
        const values2 = a.values.map((x) => x * (0.8 + 0.4 * rand()));
        const a2: CscMatrix = { ...a, values: values2 };
        const b = randomVector(n, seed + 1);
        const fresh = new SparseLU(a);
        const kept = new SparseLU(a);
        const policy = new SparseLU(a);
        try {
          kept.factor(a.values);
          policy.factor(a.values);
          fresh.factor(values2);
          kept.refactor(values2);
          policy.update(values2);
          const x0 = fresh.solve(b);
          expect(relativeDiff(kept.solve(b), x0)).toBeLessThan(1e-10);
          expect(relativeDiff(policy.solve(b), x0)).toBeLessThan(1e-10);
          expect(relativeResidual(a2, x0, b)).toBeLessThan(1e-10);
          expect(kept.stats().refactorCount).toBe(1);
        } finally {
          fresh.dispose();
          kept.dispose();
          policy.dispose();
        }
      }),
      { numRuns: 40 },
    );
  });
});

describe('SparseLU errors', () => {
  test('a structurally singular matrix gives a typed error naming the column', () => {
    // column 1 is empty
    const a = cscFromTriplets(3, 3, [0, 2, 1], [0, 2, 2], [1, 1, 1]);
    const lu = new SparseLU(a);
    expect(() => lu.factor(a.values)).toThrowError(SparseLUError);
    try {
      lu.factor(a.values);
    } catch (e) {
      expect((e as SparseLUError).kind).toBe('singular');
      expect((e as SparseLUError).message).toMatch(/singular/);
    }
    expect(() => lu.solve(new Float64Array(3))).toThrowError(/singular/);
    expect(lu.logDeterminant().sign).toBe(0);
    lu.dispose();
  });

  test('a numerically singular matrix is reported singular, with determinant sign 0', () => {
    const a = cscFromTriplets(2, 2, [0, 1, 0, 1], [0, 0, 1, 1], [1, 2, 2, 4]);
    const lu = new SparseLU(a);
    let kind = '';
    try {
      lu.factor(a.values);
    } catch (e) {
      kind = (e as SparseLUError).kind;
    }
    expect(kind).toBe('singular');
    expect(lu.logDeterminant().sign).toBe(0);
    lu.dispose();
  });

  test('NaN and infinite entries are refused with the entry index', () => {
    const a = cscFromTriplets(2, 2, [0, 1], [0, 1], [1, NaN]);
    const lu = new SparseLU(a);
    try {
      lu.factor(a.values);
      expect.unreachable('factor should have thrown');
    } catch (e) {
      expect((e as SparseLUError).kind).toBe('non-finite');
      expect((e as SparseLUError).details.entry).toBe(1);
    }
    lu.dispose();
  });

  test('using a disposed factorisation is an error, disposing twice is not', () => {
    const a = cscFromTriplets(1, 1, [0], [0], [2]);
    const lu = new SparseLU(a);
    lu.factor(a.values);
    lu.dispose();
    lu.dispose();
    expect(() => lu.solve(new Float64Array(1))).toThrowError(/disposed/);
  });

  test('non-square and malformed input is refused', () => {
    const a = cscFromTriplets(2, 3, [0], [0], [1]);
    expect(() => new SparseLU(a)).toThrowError(/square/);
    const bad = { rows: 2, cols: 2, colPtr: Int32Array.from([0, 1, 2]), rowIdx: Int32Array.from([0, 5]) };
    expect(() => new SparseLU(bad)).toThrowError(/invalid/);
  });
});

describe('ComplexSparseLU', () => {
  test('complex solve matches the real 2n formulation solved densely (ml-matrix)', () => {
    fc.assert(
      fc.property(matrixArb, fc.double({ min: -3, max: 3, noNaN: true }), ({ a }, shiftIm) => {
        // A + i·s·I, a complex shift of the kind Hopf location needs
        const n = a.rows;
        const withDiag = cscFromTriplets(
          n,
          n,
          [...Array.from({ length: n }, (_, i) => i), ...Array.from(a.rowIdx)],
          [...Array.from({ length: n }, (_, i) => i), ...colIndices(a)],
          [...new Array<number>(n).fill(0), ...Array.from(a.values)],
        );
        const m = withDiag.values.length;
        const zvals = new Float64Array(2 * m);
        for (let j = 0; j < n; j++) {
          for (let p = withDiag.colPtr[j]; p < withDiag.colPtr[j + 1]; p++) {
            zvals[2 * p] = withDiag.values[p];
            zvals[2 * p + 1] = withDiag.rowIdx[p] === j ? shiftIm : 0;
          }
        }
        const b = randomVector(2 * n, 3);
        const lu = new ComplexSparseLU(withDiag);
        try {
          lu.factor(zvals);
          const x = lu.solve(b);
          // real form [[A, -sI], [sI, A]] [xr; xi] = [br; bi]
          const d = toDense(withDiag);
          const big = Matrix.zeros(2 * n, 2 * n);
          for (let i = 0; i < n; i++) {
            for (let j = 0; j < n; j++) {
              big.set(i, j, d[i][j]);
              big.set(n + i, n + j, d[i][j]);
            }
            big.set(i, n + i, -shiftIm);
            big.set(n + i, i, shiftIm);
          }
          const rhs = new Array<number>(2 * n);
          for (let i = 0; i < n; i++) {
            rhs[i] = b[2 * i];
            rhs[n + i] = b[2 * i + 1];
          }
          const ref = new LuDecomposition(big).solve(Matrix.columnVector(rhs)).getColumn(0);
          const got = new Array<number>(2 * n);
          for (let i = 0; i < n; i++) {
            got[i] = x[2 * i];
            got[n + i] = x[2 * i + 1];
          }
          expect(relativeDiff(got, ref)).toBeLessThan(1e-9);
        } finally {
          lu.dispose();
        }
      }),
      { numRuns: 25 },
    );
  });
});

function colIndices(a: CscMatrix): number[] {
  const out: number[] = [];
  for (let j = 0; j < a.cols; j++) for (let p = a.colPtr[j]; p < a.colPtr[j + 1]; p++) out.push(j);
  return out;
}

describe('2D Poisson problem with a manufactured solution', () => {
  test('the 5-point Laplacian reproduces a solution that is cubic in each variable to round-off', () => {
    // For u cubic in x and in y, the 5-point stencil has no truncation error (u_xxxx = u_yyyy = 0),
    // so the discrete solve must return u at the nodes exactly up to round-off (the stencil's truncation error is (h²/12)(u_xxxx + u_yyyy) + O(h⁴): Taylor expansion, LeVeque 2007, §1.5, from memory).
    const m = 60; // interior nodes per axis
    const h = 1 / (m + 1);
    const u = (x: number, y: number) => x * (1 - x) * (1 + 2 * x) * y * (1 - y) * (3 - y);
    const lap = (x: number, y: number) => {
      // exact Laplacian of u: X(x) = x(1-x)(1+2x) = x + x² - 2x³, X'' = 2 - 12x; Y(y) = y(1-y)(3-y) = 3y - 4y² + y³, Y'' = -8 + 6y
      const X = x * (1 - x) * (1 + 2 * x);
      const Y = y * (1 - y) * (3 - y);
      return (2 - 12 * x) * Y + X * (-8 + 6 * y);
    };
    const idx = (i: number, j: number) => j * m + i;
    const ri: number[] = [];
    const ci: number[] = [];
    const v: number[] = [];
    const b = new Float64Array(m * m);
    for (let j = 0; j < m; j++) {
      for (let i = 0; i < m; i++) {
        const k = idx(i, j);
        ri.push(k);
        ci.push(k);
        v.push(-4 / (h * h));
        b[k] = lap((i + 1) * h, (j + 1) * h);
        for (const [di, dj] of [[1, 0], [-1, 0], [0, 1], [0, -1]]) {
          const ii = i + di;
          const jj = j + dj;
          if (ii >= 0 && ii < m && jj >= 0 && jj < m) {
            ri.push(k);
            ci.push(idx(ii, jj));
            v.push(1 / (h * h));
          } // boundary values of u are zero: nothing moves to the right-hand side
        }
      }
    }
    const a = cscFromTriplets(m * m, m * m, ri, ci, v);
    for (const ordering of orderings) {
      const lu = new SparseLU(a, { ordering });
      lu.factor(a.values);
      const x = lu.solve(b);
      let err = 0;
      let scale = 0;
      for (let j = 0; j < m; j++) {
        for (let i = 0; i < m; i++) {
          const exact = u((i + 1) * h, (j + 1) * h);
          err = Math.max(err, Math.abs(x[idx(i, j)] - exact));
          scale = Math.max(scale, Math.abs(exact));
        }
      }
      expect(err / scale).toBeLessThan(1e-11);
      lu.dispose();
    }
  });
});

describe('wasm memory', () => {
  test('the heap plateaus over hundreds of analyse/factor/solve/dispose cycles', () => {
    const n = 400;
    const tri = () => {
      const ri: number[] = [];
      const ci: number[] = [];
      const v: number[] = [];
      for (let i = 0; i < n; i++) {
        ri.push(i);
        ci.push(i);
        v.push(2 + i / n);
        if (i > 0) {
          ri.push(i);
          ci.push(i - 1);
          v.push(-1);
          ri.push(i - 1);
          ci.push(i);
          v.push(-1);
        }
      }
      return cscFromTriplets(n, n, ri, ci, v);
    };
    const a = tri();
    const b = new Float64Array(n).fill(1);
    const cycle = () => {
      const lu = new SparseLU(a);
      lu.factor(a.values);
      lu.refactor(a.values);
      lu.solve(b);
      lu.solve(new Float64Array(3 * n).fill(1), undefined, 3);
      lu.logDeterminant();
      lu.dispose();
      const z = new ComplexSparseLU(a);
      const zv = new Float64Array(2 * a.values.length);
      for (let p = 0; p < a.values.length; p++) zv[2 * p] = a.values[p];
      z.factor(zv);
      z.solve(new Float64Array(2 * n).fill(1));
      z.dispose();
    };
    for (let k = 0; k < 50; k++) cycle();
    const after50 = wasmMemoryBytes();
    for (let k = 0; k < 300; k++) cycle();
    expect(wasmMemoryBytes()).toBe(after50);
  });
});
