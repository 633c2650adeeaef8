/**
 * The automatic choice between KLU and SuperLU: the predicted factor it decides on (checked
 * against symbolic Gaussian elimination done densely), and the decision itself (deterministic,
 * from the pattern alone).
 */
import { describe, expect, test } from 'vitest';
import fc from 'fast-check';
import { SparseLU, SparseLUError, decideBackend, predictFactor, structurallyDeficientColumn } from '../../src/linalg/lu.js';
import { type CscPattern, cscFromTriplets, matVec } from '../../src/linalg/sparse.js';
import { laplacian2d } from '../../tools/bench/grid.js';

/** A random unsymmetric sparse pattern with a full diagonal, and a random ordering. */
const patternArb = fc
  .record({ n: fc.integer({ min: 1, max: 40 }), density: fc.double({ min: 0, max: 0.2, noNaN: true }), seed: fc.integer({ min: 1, max: 2 ** 30 }) })
  .map(({ n, density, seed }) => {
    let s = seed >>> 0;
    const rand = () => {
      s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
      return s / 4294967296;
    };
    const ri: number[] = [];
    const ci: number[] = [];
    for (let i = 0; i < n; i++) {
      ri.push(i);
      ci.push(i);
      for (let j = 0; j < n; j++) if (i !== j && rand() < density) (ri.push(i), ci.push(j));
    }
    const perm = Array.from({ length: n }, (_, i) => i);
    for (let i = n - 1; i > 0; i--) {
      const j = Math.floor(rand() * (i + 1));
      [perm[i], perm[j]] = [perm[j], perm[i]];
    }
    return { pattern: cscFromTriplets(n, n, ri, ci, new Array<number>(ri.length).fill(1)) as CscPattern, perm: Int32Array.from(perm) };
  });

/**
 * Oracle: eliminate the permuted symmetric pattern of A + Aᵀ densely (boolean Gaussian
 * elimination, no cancellation): the exact nonzero count of the Cholesky factor, column by
 * column — the definition of fill (Rose, Tarjan & Lueker 1976).
 */
function denseSymbolic(p: CscPattern, perm: Int32Array): { entries: number; flops: number } {
  const n = p.rows;
  const inv = new Int32Array(n);
  for (let k = 0; k < n; k++) inv[perm[k]] = k;
  const m = Array.from({ length: n }, () => new Uint8Array(n));
  for (let j = 0; j < n; j++) {
    for (let q = p.colPtr[j]; q < p.colPtr[j + 1]; q++) {
      const a = inv[p.rowIdx[q]];
      const b = inv[j];
      m[a][b] = m[b][a] = 1;
    }
  }
  let entries = 0;
  let flops = 0;
  for (let k = 0; k < n; k++) {
    const below: number[] = [];
    for (let i = k + 1; i < n; i++) if (m[i][k]) below.push(i);
    for (const i of below) for (const j of below) m[i][j] = 1;
    entries += below.length + 1;
    flops += below.length + 2 * below.length * below.length;
  }
  return { entries, flops };
}

describe('predicted factor (the automatic choice decides on it)', () => {
  test('entries and flops equal dense symbolic elimination for a given ordering', () => {
    fc.assert(
      fc.property(patternArb, ({ pattern, perm }) => {
        const got = predictFactor({ ...pattern }, 'given', perm);
        const want = denseSymbolic(pattern, perm);
        expect(got.entries).toBe(want.entries);
        expect(got.flops).toBe(want.flops);
        expect(got.supernodes).toBeGreaterThanOrEqual(1);
        expect(got.supernodes).toBeLessThanOrEqual(pattern.rows);
      }),
      { numRuns: 60 },
    );
  });

  test('a tridiagonal matrix in natural order: 2n − 1 entries, 3(n − 1) flops, no fill', () => {
    const n = 50;
    const ri: number[] = [];
    const ci: number[] = [];
    for (let i = 0; i < n; i++) {
      ri.push(i);
      ci.push(i);
      if (i > 0) (ri.push(i), ci.push(i - 1), ri.push(i - 1), ci.push(i));
    }
    const p = cscFromTriplets(n, n, ri, ci, new Array<number>(ri.length).fill(1));
    const got = predictFactor(p, 'given', Int32Array.from({ length: n }, (_, i) => i));
    expect(got.entries).toBe(2 * n - 1);
    expect(got.flops).toBe(3 * (n - 1));
  });
});

describe('automatic backend choice', () => {
  test('small problems get KLU without analysis; the reason says why', () => {
    const a = laplacian2d(20, 1);
    const lu = new SparseLU(a);
    expect(lu.backend).toBe('klu');
    expect(lu.decision.requested).toBe('auto');
    expect(lu.decision.reason).toMatch(/small problem \(400 unknowns/);
    lu.dispose();
  });

  test('the choice is a function of the pattern: the same twice, and the factors solve the system', () => {
    const a = laplacian2d(60, 1); // 3,600 unknowns: analysed, then decided
    const first = new SparseLU(a);
    const second = new SparseLU(a);
    expect(first.decision).toEqual(second.decision);
    expect(first.decision.prediction).toBeDefined();
    expect(first.decision.reason).toMatch(/predicted factor of 3600 unknowns/);
    expect(decideBackend(a.rows, first.decision.prediction!).backend).toBe(first.backend);
    first.factor(a.values);
    const x = first.solve(new Float64Array(a.rows).fill(1));
    expect(x.every(Number.isFinite)).toBe(true);
    first.dispose();
    second.dispose();
  });

  test('a 3D grid (24³ unknowns, 7-point Laplacian) gets SuperLU, and its factors solve the system', () => {
    const m = 24;
    const at = (x: number, y: number, z: number) => (z * m + y) * m + x;
    const ri: number[] = [];
    const ci: number[] = [];
    const v: number[] = [];
    for (let z = 0; z < m; z++)
      for (let y = 0; y < m; y++)
        for (let x = 0; x < m; x++) {
          const k = at(x, y, z);
          ri.push(k), ci.push(k), v.push(6.5);
          for (const [dx, dy, dz] of [[1, 0, 0], [-1, 0, 0], [0, 1, 0], [0, -1, 0], [0, 0, 1], [0, 0, -1]]) {
            const [X, Y, Z] = [x + dx, y + dy, z + dz];
            if (X >= 0 && X < m && Y >= 0 && Y < m && Z >= 0 && Z < m) ri.push(k), ci.push(at(X, Y, Z)), v.push(-1);
          }
        }
    const a = cscFromTriplets(m ** 3, m ** 3, ri, ci, v);
    const lu = new SparseLU(a);
    expect(lu.backend).toBe('superlu');
    expect(lu.decision.reason).toMatch(/SuperLU \(supernodal\) pays/);
    lu.factor(a.values);
    const b = new Float64Array(a.rows).fill(1);
    const x = lu.solve(b);
    const r = matVec(a, x, new Float64Array(a.rows));
    let err = 0;
    for (let i = 0; i < r.length; i++) err = Math.max(err, Math.abs(r[i] - b[i]));
    expect(err).toBeLessThan(1e-12);
    lu.dispose();
  });

  test('the rule: SuperLU for large factors with many operations per entry, KLU otherwise', () => {
    expect(decideBackend(100_000, { entries: 5e6, flops: 5e9, supernodes: 10_000 }).backend).toBe('superlu');
    expect(decideBackend(160_000, { entries: 5e6, flops: 1.6e9, supernodes: 10_000 }).backend).toBe('klu'); // a 2D grid: 320 per entry
    expect(decideBackend(10_000, { entries: 2e5, flops: 1e8, supernodes: 1_000 }).backend).toBe('klu'); // small
  });

  test('a backend can be forced; an unknown one is refused naming the accepted ones', () => {
    const a = laplacian2d(10, 1);
    const lu = new SparseLU(a, { backend: 'superlu' });
    expect(lu.backend).toBe('superlu');
    expect(lu.decision).toMatchObject({ backend: 'superlu', requested: 'superlu' });
    lu.dispose();
    expect(() => new SparseLU(a, { backend: 'umfpack' as never })).toThrowError(SparseLUError);
    expect(() => new SparseLU(a, { backend: 'umfpack' as never })).toThrowError(/accepted: auto, klu, superlu/);
  });
});

describe('structural rank (SuperLU is spared patterns no values can make regular)', () => {
  /** Whether some permutation σ has every (σ(j), j) in the pattern: the definition of full structural rank. */
  function fullRankByPermutations(n: number, has: boolean[][]): boolean {
    const used = new Array<boolean>(n).fill(false);
    const place = (j: number): boolean => {
      if (j === n) return true;
      for (let i = 0; i < n; i++) {
        if (has[i][j] && !used[i]) {
          used[i] = true;
          if (place(j + 1)) return true;
          used[i] = false;
        }
      }
      return false;
    };
    return place(0);
  }

  test('a maximum matching finds a deficient column exactly when no permutation fits the pattern (all permutations of small patterns)', () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 6 }), fc.array(fc.boolean(), { minLength: 36, maxLength: 36 }), (n, bits) => {
        const has = Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => bits[i * 6 + j]));
        const ri: number[] = [];
        const ci: number[] = [];
        for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) if (has[i][j]) (ri.push(i), ci.push(j));
        const col = structurallyDeficientColumn(cscFromTriplets(n, n, ri, ci, ri.map(() => 1)));
        expect(col < 0).toBe(fullRankByPermutations(n, has));
      }),
      { numRuns: 300 },
    );
  });

  test('SuperLU reports a structurally singular pattern as singular, naming the column', () => {
    // columns 1 and 2 have their only entries in row 1
    const a = cscFromTriplets(3, 3, [0, 1, 1, 2], [0, 1, 2, 0], [1, 1, 1, 1]);
    const lu = new SparseLU(a, { backend: 'superlu' });
    let err: unknown;
    try {
      lu.factor(a.values);
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(SparseLUError);
    expect((err as SparseLUError).kind).toBe('singular');
    expect((err as SparseLUError).message).toMatch(/column 2/);
    expect(lu.logDeterminant().sign).toBe(0);
    lu.dispose();
  });
});
