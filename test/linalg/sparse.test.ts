import { expect, test } from 'vitest';
import fc from 'fast-check';
import { Matrix } from 'ml-matrix';
import {
  TripletBuilder,
  embedPattern,
  entryIndex,
  fromDense,
  matTVec,
  matVec,
  patternUnion,
  toDense,
  transpose,
  validatePattern,
} from '../../src/linalg/sparse.js';

const tripletsArb = fc
  .record({ rows: fc.integer({ min: 1, max: 12 }), cols: fc.integer({ min: 1, max: 12 }) })
  .chain(({ rows, cols }) =>
    fc.record({
      rows: fc.constant(rows),
      cols: fc.constant(cols),
      entries: fc.array(
        fc.tuple(fc.integer({ min: 0, max: rows - 1 }), fc.integer({ min: 0, max: cols - 1 }), fc.integer({ min: -9, max: 9 })),
        { maxLength: 60 },
      ),
    }),
  );

function denseOf(rows: number, cols: number, entries: [number, number, number][]): number[][] {
  const d = Array.from({ length: rows }, () => new Array<number>(cols).fill(0));
  for (const [i, j, v] of entries) d[i][j] += v;
  return d;
}

test('triplet assembly sums duplicates and gives a valid sorted pattern', () => {
  fc.assert(
    fc.property(tripletsArb, ({ rows, cols, entries }) => {
      const t = new TripletBuilder(rows, cols, 1);
      for (const [i, j, v] of entries) t.add(i, j, v);
      const a = t.toCsc();
      validatePattern(a);
      expect(toDense(a)).toEqual(denseOf(rows, cols, entries));
      for (const [i, j] of entries) expect(entryIndex(a, i, j)).toBeGreaterThanOrEqual(0);
    }),
  );
});

test('mat-vec, transpose mat-vec and transpose agree with ml-matrix', () => {
  fc.assert(
    fc.property(tripletsArb, ({ rows, cols, entries }) => {
      const d = denseOf(rows, cols, entries);
      const a = fromDense(d);
      const x = Float64Array.from({ length: cols }, (_, i) => i - 2.5);
      const y = Float64Array.from({ length: rows }, (_, i) => 1 + i * 0.5);
      const m = new Matrix(d);
      expect(Array.from(matVec(a, x, new Float64Array(rows)))).toEqual(m.mmul(Matrix.columnVector(Array.from(x))).getColumn(0));
      expect(Array.from(matTVec(a, y, new Float64Array(cols)))).toEqual(m.transpose().mmul(Matrix.columnVector(Array.from(y))).getColumn(0));
      expect(toDense(transpose(a))).toEqual(m.transpose().to2DArray());
    }),
  );
});

test('pattern union contains both patterns and embeds each', () => {
  fc.assert(
    fc.property(tripletsArb, tripletsArb, (p, q) => {
      const a = fromDense(denseOf(p.rows, p.cols, p.entries));
      const bEntries = q.entries.filter(([i, j]) => i < p.rows && j < p.cols);
      const b = fromDense(denseOf(p.rows, p.cols, bEntries));
      const u = patternUnion(a, b);
      validatePattern(u);
      const ma = embedPattern(a, u);
      const mb = embedPattern(b, u);
      for (let j = 0; j < a.cols; j++) {
        for (let k = a.colPtr[j]; k < a.colPtr[j + 1]; k++) expect(u.rowIdx[ma[k]]).toBe(a.rowIdx[k]);
        for (let k = b.colPtr[j]; k < b.colPtr[j + 1]; k++) expect(u.rowIdx[mb[k]]).toBe(b.rowIdx[k]);
      }
      expect(u.colPtr[u.cols]).toBeLessThanOrEqual(a.colPtr[a.cols] + b.colPtr[b.cols]);
    }),
  );
});

test('out-of-range triplets are refused with the entry named', () => {
  const t = new TripletBuilder(2, 2);
  expect(() => t.add(2, 0, 1)).toThrowError(/\(2, 0\).*2x2/);
});
