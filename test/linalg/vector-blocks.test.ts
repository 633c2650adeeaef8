/**
 * The blocked kernels of the Krylov basis work against the textbook one-vector loops: a dot
 * product Σ a_i x_i summed with i ascending, and y ← y + c·v one vector after another. They must
 * agree bit for bit (not just to rounding): the eigenvalue solver's results, and so every saved
 * run, must not change when the kernels do. Checked on random sizes, block counts that exercise
 * the groups of four, two and one, zero coefficients, signed zeros and wide exponent ranges.
 */
import { describe, expect, test } from 'vitest';
import fc from 'fast-check';
import { axpys, dotsInto } from '../../src/linalg/vector-blocks.js';
import { orthogonalize } from '../../src/linalg/eigen/krylov-schur.js';

const naiveDot = (a: Float64Array, x: Float64Array): number => {
  let s = 0;
  for (let i = 0; i < x.length; i++) s += a[i] * x[i];
  return s;
};
const naiveAxpys = (y: Float64Array, c: ArrayLike<number>, basis: Float64Array[], count: number): void => {
  for (let j = 0; j < count; j++) {
    if (c[j] === 0) continue;
    for (let i = 0; i < y.length; i++) y[i] += c[j] * basis[j][i];
  }
};

// entries of very different sizes (and exact zeros of both signs), so that a changed summation order shows
const entry = fc.oneof(fc.double({ min: -1e6, max: 1e6, noNaN: true }), fc.double({ min: -1e-6, max: 1e-6, noNaN: true }), fc.constantFrom(0, -0, 1, -1));
const blocks = fc
  .record({ n: fc.integer({ min: 0, max: 37 }), k: fc.integer({ min: 0, max: 11 }) })
  .chain(({ n, k }) =>
    fc.record({
      basis: fc.array(fc.array(entry, { minLength: n, maxLength: n }), { minLength: k, maxLength: k }),
      x: fc.array(entry, { minLength: n, maxLength: n }),
      coeffs: fc.array(fc.oneof(entry, fc.constant(0)), { minLength: k, maxLength: k }),
      count: fc.integer({ min: 0, max: k }),
    }),
  )
  .map((r) => ({ basis: r.basis.map((v) => Float64Array.from(v)), x: Float64Array.from(r.x), coeffs: r.coeffs, count: r.count }));

const same = (a: Float64Array, b: Float64Array) => {
  expect(a.length).toBe(b.length);
  for (let i = 0; i < a.length; i++) expect(Object.is(a[i], b[i]), `entry ${i}: ${a[i]} against ${b[i]}`).toBe(true);
};

describe('blocked vector kernels are bitwise the one-vector loops', () => {
  test('dotsInto', () => {
    fc.assert(
      fc.property(blocks, ({ basis, x, count }) => {
        const out = new Float64Array(basis.length).fill(NaN);
        dotsInto(out, basis, x, count);
        same(out.subarray(0, count), Float64Array.from(basis.slice(0, count), (a) => naiveDot(a, x)));
        for (let j = count; j < basis.length; j++) expect(out[j]).toBeNaN(); // untouched
      }),
    );
  });

  test('axpys', () => {
    fc.assert(
      fc.property(blocks, ({ basis, x, coeffs, count }) => {
        const y = Float64Array.from(x);
        const z = Float64Array.from(x);
        axpys(y, coeffs, basis, count);
        naiveAxpys(z, coeffs, basis, count);
        same(y, z);
      }),
    );
  });

  test('Gram–Schmidt with them: w ends orthogonal to an orthonormal basis, coefficients are the projections', () => {
    // classical Gram–Schmidt with one reorthogonalisation (textbook); basis: the first k unit vectors, so the
    // projections are w's first k entries and what is left is w with those entries zeroed — exact in floating point
    const n = 9;
    const basis = [0, 1, 2, 3, 4].map((j) => Float64Array.from({ length: n }, (_, i) => (i === j ? 1 : 0)));
    const w = Float64Array.from({ length: n }, (_, i) => i + 0.5);
    const h = orthogonalize(w, basis);
    same(h, Float64Array.from([0.5, 1.5, 2.5, 3.5, 4.5]));
    same(w, Float64Array.from([0, 0, 0, 0, 0, 5.5, 6.5, 7.5, 8.5]));
  });
});
