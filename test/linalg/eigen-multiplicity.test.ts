/**
 * Multiplicities, unstable counts and the searched-region claim of the rightmost-eigenvalue
 * solver on sparse matrices whose spectra are known exactly and full of repeated and clustered
 * eigenvalues: Kronecker sums of tridiagonal Toeplitz factors (eigen-fixtures.ts; exact
 * eigenvalues from the tridiagonal formula and the Kronecker-sum rule, from memory).
 */
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { rightmostEigenvalues } from '../../src/linalg/eigen.js';
import { leastResidualValue, pencilResidual } from '../../src/linalg/eigen/eigenpairs.js';
import { fromDense } from '../../src/linalg/sparse.js';
import { type TridiagonalFactor, kroneckerSum, missingFrom, rightmostListProblem, sameMultiset } from './eigen-fixtures.js';

type C = { re: number; im: number };
const byRightmost = (a: C, b: C) => b.re - a.re || b.im - a.im;


const factorArb = fc.record({
  m: fc.integer({ min: 3, max: 7 }),
  diag: fc.double({ min: -3, max: 0, noNaN: true }),
  sub: fc.double({ min: 0.3, max: 2, noNaN: true }),
  // sup/sub near 1: mildly non-normal factors (the eigenvalue condition grows like that ratio to the power m/2)
  ratio: fc.double({ min: 0.8, max: 1.25, noNaN: true }),
  oscillating: fc.boolean(),
});

describe('multiple eigenvalues on Kronecker sums with exact spectra (property)', () => {
  it('lists every copy, splits no cluster, invents no pair; unstable count and searched region are right', () => {
    let certified = 0;
    let certifiedLists = 0;
    let runs = 0;
    fc.assert(
      fc.property(
        fc.array(factorArb, { minLength: 2, maxLength: 3 }),
        fc.constantFrom('all-equal', 'two-equal', 'free'),
        fc.integer({ min: 1, max: 7 }),
        fc.double({ min: 0.4, max: 1.05, noNaN: true }),
        fc.integer({ min: 1, max: 1_000_000 }),
        (raw, pattern, count, shiftFraction, seed) => {
          let factors: TridiagonalFactor[] = raw.map((f) => ({ m: f.m, diag: f.diag, sub: f.oscillating ? -f.sub : f.sub, sup: f.sub * f.ratio }));
          if (pattern === 'all-equal') factors = factors.map(() => factors[0]);
          if (pattern === 'two-equal') factors = [factors[0], factors[0], ...factors.slice(2)];
          const n = factors.reduce((p, f) => p * f.m, 1);
          fc.pre(n >= 30 && n <= 120);
          // a shift that puts the line Re μ = 0 somewhere inside the spectrum
          const base = kroneckerSum(factors, 0, seed).spectrum;
          // (a spectrum on one vertical line, from oscillating factors only, has no inside)
          fc.pre(base[0].re - base[base.length - 1].re > 0.05 * Math.max(...base.map((v) => Math.hypot(v.re, v.im))));
          const shift = -(base[base.length - 1].re + shiftFraction * (base[0].re - base[base.length - 1].re)) + 0.0123;
          const { J, spectrum } = kroneckerSum(factors, shift, seed);
          const scale = Math.max(...spectrum.map((v) => Math.hypot(v.re, v.im)));
          const sorted = spectrum.slice().sort(byRightmost);
          const r = rightmostEigenvalues(J, { count, certifyAbove: 0 });
          runs++;
          expect(r.method).toBe('krylov');
          expect(r.converged, r.unconvergedReason).toBe(true);
          // factors with sub ≠ sup are non-normal (eigenvector condition up to ~(sub/sup)^(m/2) per
          // factor, and products of those for the sum): eigenvalues agree to cond × the backward
          // error, so to 1e-7 of the spectral radius, still far inside the 1e-6 cluster rule
          const relTol = 1e-7;
          const tol = () => relTol * scale;
          const show = (a: C[]) => JSON.stringify(a.map((v) => [v.re, v.im]));
          // every value listed is an eigenvalue, no copy more than there are (no false duplicate)
          expect(missingFrom(r.values, sorted, tol), `got ${show(r.values)}`).toBe(0);
          // multiplicities: a certified list is the count rightmost, whole clusters at the cut
          if (r.searchedRegion.complete) expect(rightmostListProblem(r.values, sorted, count, scale, relTol), `got ${show(r.values)}`).toBeNull();
          // the searched-region claim: every exact eigenvalue with real part ≥ certifiedAbove
          // (within the imaginary reach) and right of the list's last value is listed
          const line = r.searchedRegion.certifiedAbove;
          const last = Math.min(...r.values.map((v) => v.re));
          if (line !== null) {
            const claimed = sorted.filter((v) => v.re >= line + tol() && v.re > last + tol() && Math.abs(v.im) <= r.searchedRegion.imaginaryReach);
            expect(missingFrom(claimed, r.values, tol), `claimed down to ${line}: ${show(claimed)}, listed ${show(r.values)}`).toBe(0);
          }
          // unstable count: every eigenvalue right of the imaginary axis, however many
          expect(r.rightOf).toBeDefined();
          if (r.rightOf!.certified) {
            certified++;
            const right = sorted.filter((v) => v.re >= 0);
            expect(sameMultiset(r.rightOf!.values, right, tol), `right of 0: ${show(r.rightOf!.values)} want ${show(right)}`).toBe(true);
            expect(r.rightOf!.values.filter((v) => v.re > 0).length).toBe(sorted.filter((v) => v.re > 0).length);
          }
          if (r.searchedRegion.complete) certifiedLists++;
        },
      ),
      { numRuns: 12, seed: 31337, endOnFailure: true },
    );
    // the certificate is the point of the search: it must be given (nearly) always
    expect(certified).toBeGreaterThanOrEqual(Math.ceil(0.9 * runs));
    expect(certifiedLists).toBeGreaterThanOrEqual(Math.ceil(0.9 * runs));
  });
});

describe('a simple eigenvalue at zero (the Jacobian at a fold)', () => {
  // −d²/dx² on n points shifted so that its top eigenvalue is exactly 0: the exact spectrum is
  // (2/h²)(cos kπh − cos πh), k = 1..n (tridiagonal Toeplitz formula, from memory; eigen-fixtures.ts).
  // Two searches find the zero eigenvalue as, e.g., 9.2e-12 and 8.7e-12: closer together than their
  // residuals can tell apart but farther than the cluster tolerance relative to their size, they
  // were listed as two eigenvalues (the unstable count at a fold read 2 where it is 1 or 0).
  it('is listed once, with the rest of the list as the exact spectrum', () => {
    for (const n of [40, 64, 100]) {
      const h = 1 / (n + 1);
      const top = (-2 + 2 * Math.cos(Math.PI * h)) / (h * h);
      for (const count of [1, 2, 3]) {
        const { J, spectrum } = kroneckerSum([{ m: n, diag: -2 / (h * h) - top, sub: 1 / (h * h), sup: 1 / (h * h) }], 0, 7);
        const scale = Math.max(...spectrum.map((v) => Math.abs(v.re)));
        const want = spectrum.slice().sort(byRightmost).slice(0, count);
        const r = rightmostEigenvalues(J, { count, certifyAbove: 0 });
        expect(r.method).toBe('krylov');
        expect(r.values.map((v) => v.re).length, `n = ${n}, ${count} requested: ${JSON.stringify(r.values.map((v) => v.re))}`).toBe(count);
        r.values.forEach((v, i) => expect(Math.abs(v.re - want[i].re)).toBeLessThan(1e-8 * scale));
        expect(r.rightOf!.values.length).toBeLessThanOrEqual(1);
      }
    }
  });
});

describe('the value of least residual for a Ritz vector', () => {
  // 1D Laplacian on n points: eigenpairs λ_k = −(4/h²) sin²(kπh/2), x_j = sin(jkπh) (exact
  // discrete formula, from memory). A vector 1e-4 off the eigenvector: its Rayleigh quotient is off
  // by O((1e-4)²) of the spectrum's spread (second order, symmetric J) — the error of a value the vector would leave
  // at first order, as a far-shifted Ritz value did on the elastica (1e-7 against dense values).
  it('is second-order accurate for a symmetric J, keeps a real value real and a pair conjugate', () => {
    const n = 50;
    const h = 1 / (n + 1);
    const J = fromDense(Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => (i === j ? -2 : Math.abs(i - j) === 1 ? 1 : 0) / (h * h))));
    const k = 3;
    const exact = -(4 / (h * h)) * Math.sin((k * Math.PI * h) / 2) ** 2;
    const xr = Float64Array.from({ length: n }, (_, j) => Math.sin((j + 1) * k * Math.PI * h) + 1e-4 * Math.cos(7 * j));
    const xi = new Float64Array(n);
    const off = { re: exact * (1 + 1e-5), im: 0 };
    const r = leastResidualValue(J, undefined, off, xr, xi);
    expect(r.mu.im).toBe(0);
    // second order: (1e-4)² times the spectrum's spread 4/h² (the value given was off by 1e-5 relative, 9e-4)
    expect(Math.abs(r.mu.re - exact)).toBeLessThan(1e-8 * (4 / (h * h)));
    expect(r.residual).toBeLessThan(pencilResidual(J, undefined, off, xr, xi));
    // a complex vector x and its conjugate give conjugate values
    const yr = Float64Array.from(xr);
    const yi = Float64Array.from({ length: n }, (_, j) => 0.3 * Math.sin((j + 1) * 5 * Math.PI * h));
    const a = leastResidualValue(J, undefined, { re: exact, im: 1 }, yr, yi);
    const b = leastResidualValue(J, undefined, { re: exact, im: -1 }, yr, Float64Array.from(yi, (v) => -v));
    expect(b.mu.re).toBe(a.mu.re);
    expect(b.mu.im).toBe(-a.mu.im);
  });
});
