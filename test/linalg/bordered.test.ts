import { expect, test } from 'vitest';
import fc from 'fast-check';
import { LuDecomposition, Matrix } from 'ml-matrix';
import { BorderedMatrix } from '../../src/linalg/bordered.js';
import { SparseLU } from '../../src/linalg/lu.js';
import { cscFromTriplets, toDense, validatePattern } from '../../src/linalg/sparse.js';

test('the bordered matrix equals [[A, B], [C, D]] entry by entry, and solves like the dense one (ml-matrix)', () => {
  fc.assert(
    fc.property(
      fc.integer({ min: 1, max: 40 }),
      fc.integer({ min: 1, max: 3 }),
      fc.integer({ min: 1, max: 1e6 }),
      (n, k, seed) => {
        let s = seed;
        const rand = () => ((s = (s * 16807) % 2147483647) / 2147483647) * 2 - 1;
        // A: tridiagonal-ish, diagonally dominant
        const ri: number[] = [];
        const ci: number[] = [];
        const v: number[] = [];
        for (let i = 0; i < n; i++) {
          ri.push(i), ci.push(i), v.push(4 + rand());
          if (i > 0) ri.push(i), ci.push(i - 1), v.push(rand());
          if (i + 2 < n) ri.push(i), ci.push(i + 2), v.push(rand());
        }
        const a = cscFromTriplets(n, n, ri, ci, v);
        const bm = new BorderedMatrix(a, k);
        validatePattern(bm.pattern);
        bm.setInner(a.values);
        const dense = Matrix.zeros(n + k, n + k);
        const ad = toDense(a);
        for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) dense.set(i, j, ad[i][j]);
        for (let c = 0; c < k; c++) {
          const col = Array.from({ length: n }, () => rand());
          const row = Array.from({ length: n }, () => rand());
          bm.setColumn(c, col);
          bm.setRow(c, row);
          for (let i = 0; i < n; i++) {
            dense.set(i, n + c, col[i]);
            dense.set(n + c, i, row[i]);
          }
        }
        for (let r = 0; r < k; r++) {
          for (let c = 0; c < k; c++) {
            const d = rand() + (r === c ? 3 : 0);
            bm.setCorner(r, c, d);
            dense.set(n + r, n + c, d);
          }
        }
        const got = toDense({ ...bm.pattern, values: bm.values });
        for (let i = 0; i < n + k; i++) for (let j = 0; j < n + k; j++) expect(got[i][j]).toBe(dense.get(i, j));
        const det = new LuDecomposition(dense).determinant;
        if (Math.abs(det) < 1e-8) return; // skip (rare) nearly singular draws
        const lu = new SparseLU(bm.pattern);
        try {
          lu.factor(bm.values);
          const b = Float64Array.from({ length: n + k }, () => rand());
          const x = lu.solve(b);
          const ref = new LuDecomposition(dense).solve(Matrix.columnVector(Array.from(b))).getColumn(0);
          const cond = dense.norm('frobenius') * new LuDecomposition(dense).solve(Matrix.eye(n + k)).norm('frobenius');
          for (let i = 0; i < n + k; i++) expect(Math.abs(x[i] - ref[i])).toBeLessThan(1e-13 * cond * (1 + Math.abs(ref[i])));
          expect(lu.logDeterminant().sign).toBe(Math.sign(det));
        } finally {
          lu.dispose();
        }
      },
    ),
    { numRuns: 80 },
  );
});
