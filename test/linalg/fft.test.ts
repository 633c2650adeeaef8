/**
 * The FFT against the defining sum of the discrete Fourier transform, X_k = Σ_j x_j e^{−2πi jk/n}
 * (evaluated directly, O(n²)), for power-of-two lengths (radix 2) and every other length
 * (Bluestein), forward and inverse, and along chosen axes of a 3-index array.
 */
import fc from 'fast-check';
import { expect, test } from 'vitest';
import { fft, fftAxes, signedWavenumber } from '../../src/linalg/fft.js';

function directDft(re: number[], im: number[], inverse: boolean): [number[], number[]] {
  const n = re.length;
  const outRe = new Array<number>(n).fill(0);
  const outIm = new Array<number>(n).fill(0);
  const s = inverse ? 1 : -1;
  for (let k = 0; k < n; k++) {
    for (let j = 0; j < n; j++) {
      const a = (s * 2 * Math.PI * ((j * k) % n)) / n;
      outRe[k] += re[j] * Math.cos(a) - im[j] * Math.sin(a);
      outIm[k] += re[j] * Math.sin(a) + im[j] * Math.cos(a);
    }
    if (inverse) {
      outRe[k] /= n;
      outIm[k] /= n;
    }
  }
  return [outRe, outIm];
}

const vector = fc.integer({ min: 1, max: 70 }).chain((n) =>
  fc.tuple(fc.array(fc.double({ min: -10, max: 10, noNaN: true }), { minLength: n, maxLength: n }), fc.array(fc.double({ min: -10, max: 10, noNaN: true }), { minLength: n, maxLength: n })),
);

test('fft equals the defining sum for every length, forward and inverse', () => {
  fc.assert(
    fc.property(vector, fc.boolean(), ([re, im], inverse) => {
      const r = Float64Array.from(re);
      const i = Float64Array.from(im);
      fft(r, i, inverse);
      const [er, ei] = directDft(re, im, inverse);
      const scale = 1 + Math.max(...re.map(Math.abs), ...im.map(Math.abs)) * re.length;
      for (let k = 0; k < re.length; k++) {
        expect(Math.abs(r[k] - er[k])).toBeLessThan(1e-12 * scale);
        expect(Math.abs(i[k] - ei[k])).toBeLessThan(1e-12 * scale);
      }
    }),
    { numRuns: 120 },
  );
});

test('inverse after forward gives the vector back (lengths 1 to 130)', () => {
  for (let n = 1; n <= 130; n++) {
    const re = Float64Array.from({ length: n }, (_, j) => Math.sin(3 * j + 1) + j / n);
    const im = Float64Array.from({ length: n }, (_, j) => Math.cos(j * j));
    const r = re.slice();
    const i = im.slice();
    fft(r, i);
    fft(r, i, true);
    for (let j = 0; j < n; j++) {
      expect(Math.abs(r[j] - re[j])).toBeLessThan(1e-12);
      expect(Math.abs(i[j] - im[j])).toBeLessThan(1e-12);
    }
  }
});

test('fftAxes transforms along the chosen axes only (a 3 × 6 × 5 array along axes 1 and 2)', () => {
  const shape = [3, 6, 5];
  const total = 90;
  const re = Float64Array.from({ length: total }, (_, j) => Math.sin(j * 0.7));
  const im = new Float64Array(total);
  const r = re.slice();
  const i = im.slice();
  fftAxes(r, i, shape, [1, 2]);
  // the 2D transform of each of the 3 slices, by the defining double sum
  for (let a = 0; a < 3; a++) {
    for (let k1 = 0; k1 < 6; k1++) {
      for (let k2 = 0; k2 < 5; k2++) {
        let sr = 0;
        let si = 0;
        for (let j1 = 0; j1 < 6; j1++) {
          for (let j2 = 0; j2 < 5; j2++) {
            const ang = -2 * Math.PI * ((j1 * k1) / 6 + (j2 * k2) / 5);
            const x = re[a * 30 + j1 * 5 + j2];
            sr += x * Math.cos(ang);
            si += x * Math.sin(ang);
          }
        }
        expect(Math.abs(r[a * 30 + k1 * 5 + k2] - sr)).toBeLessThan(1e-12);
        expect(Math.abs(i[a * 30 + k1 * 5 + k2] - si)).toBeLessThan(1e-12);
      }
    }
  }
});

test('signed wavenumbers', () => {
  expect([0, 1, 2, 3, 4, 5].map((k) => signedWavenumber(k, 6))).toEqual([0, 1, 2, 3, -2, -1]);
  expect([0, 1, 2, 3, 4].map((k) => signedWavenumber(k, 5))).toEqual([0, 1, 2, -2, -1]);
});
