import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { EigenvalueDecomposition, Matrix, inverse } from 'ml-matrix';
import { EigenTracker, type EigenValue, apolloniusDisc, cayleyImage, eigenvaluesDense, rightmostEigenvalues } from '../../src/linalg/eigen.js';
import { fromDense } from '../../src/linalg/sparse.js';
import { SparseLU } from '../../src/linalg/lu.js';
import { controlledMatrix, laplacian2d, laplacian2dEigenvalues, rng } from './eigen-fixtures.js';
import { brusselator } from '../../discretisations/models/brusselator.js';

type C = { re: number; im: number };
const byRightmost = (a: C, b: C) => (b.re !== a.re ? b.re - a.re : b.im - a.im);

/** Every returned value matches a distinct reference value within tol(i); returns the worst distance. */
function expectMatches(got: C[], ref: C[], tol: (ref: C) => number): void {
  const used = new Array<boolean>(ref.length).fill(false);
  for (const g of got) {
    let bi = -1;
    let bd = Infinity;
    ref.forEach((r, i) => {
      if (used[i]) return;
      const d = Math.hypot(g.re - r.re, g.im - r.im);
      if (d < bd) {
        bd = d;
        bi = i;
      }
    });
    expect(bi, `no reference value left for ${g.re} ${g.im}`).toBeGreaterThanOrEqual(0);
    used[bi] = true;
    expect(bd, `value ${g.re} ${g.im}i vs reference ${ref[bi].re} ${ref[bi].im}i`).toBeLessThanOrEqual(tol(ref[bi]));
  }
}

function expectConjugateClosed(values: C[]): void {
  for (const v of values) {
    if (v.im === 0) continue;
    expect(values.some((w) => w.re === v.re && w.im === -v.im), `pair of ${v.re} ${v.im}i is split`).toBe(true);
  }
}

/** Dense eigen-decomposition with a per-eigenvalue condition estimate ‖x_i‖·‖y_i‖ (y_i rows of X⁻¹). */
function denseWithCondition(rows: number[][]): { values: (C & { cond: number })[] } {
  const e = new EigenvalueDecomposition(new Matrix(rows));
  const X = e.eigenvectorMatrix;
  const Xi = inverse(X);
  const n = rows.length;
  const values = e.realEigenvalues.map((re, i) => {
    const im = e.imaginaryEigenvalues[i];
    // a pair occupies two columns (real and imaginary parts): estimate over the block
    const cols = im === 0 ? [i] : im > 0 ? [i, i + 1] : [i - 1, i];
    let xn = 0;
    let yn = 0;
    for (const c of cols) {
      for (let r = 0; r < n; r++) {
        xn += X.get(r, c) ** 2;
        yn += Xi.get(c, r) ** 2;
      }
    }
    return { re, im, cond: Math.sqrt(xn * yn) };
  });
  return { values };
}

describe('rightmost eigenvalues: exact finite-difference oracle', () => {
  // Dirichlet five-point Laplacian: eigenvalues −(4/hx²)sin²(aπhx/2lx) − (4/hy²)sin²(bπhy/2ly) (LeVeque, Finite Difference Methods for ODEs and PDEs, SIAM 2007, §2.10, from memory)
  it('rectangle 60×50 (3000 unknowns), shifted so that one eigenvalue is positive', () => {
    const c = 30;
    const J = laplacian2d(60, 50, 1, 0.83, () => c);
    const exact = laplacian2dEigenvalues(60, 50, 1, 0.83, c);
    const res = rightmostEigenvalues(J, { count: 6 });
    expect(res.converged).toBe(true);
    expect(res.values.map((v) => v.re)).toHaveLength(6);
    res.values.forEach((v, i) => {
      expect(v.im).toBe(0);
      expect(Math.abs(v.re - exact[i])).toBeLessThan(1e-8 * Math.abs(exact[exact.length - 1]));
      expect(v.relativeResidual).toBeLessThan(1e-9);
    });
    expect(res.searchedRegion.complete).toBe(true);
    expect(res.searchedRegion.enclosure?.rigorous).toBe(true);
    expect(res.searchedRegion.certifiedAbove!).toBeLessThanOrEqual(res.values[5].re);
    expect(res.solves).toBeGreaterThan(0);
    expect(res.factorisations).toBeGreaterThanOrEqual(1);
  });

  it('square 50×50: double eigenvalues are found twice', () => {
    const c = 30;
    const J = laplacian2d(50, 50, 1, 1, () => c);
    const exact = laplacian2dEigenvalues(50, 50, 1, 1, c);
    // (1,2)/(2,1) and (1,3)/(3,1) are exact doubles
    expect(exact[1]).toBeCloseTo(exact[2], 9);
    const res = rightmostEigenvalues(J, { count: 6 });
    expect(res.converged).toBe(true);
    res.values.forEach((v, i) => expect(Math.abs(v.re - exact[i])).toBeLessThan(1e-7));
  });
});

describe('rightmost eigenvalues against ml-matrix (property, controlled spectra)', () => {
  it('the k rightmost match the dense decomposition, pairs are never split', () => {
    // reference: ml-matrix EigenvalueDecomposition of the same matrix (general-purpose library)
    fc.assert(
      fc.property(
        fc.record({
          seed: fc.integer({ min: 1, max: 2 ** 30 }),
          n: fc.integer({ min: 25, max: 200 }),
          pairShare: fc.integer({ min: 0, max: 45 }).map((i) => i / 100),
          k: fc.integer({ min: 1, max: 8 }),
          upper: fc.integer({ min: 0, max: 15 }).map((i) => i / 10),
          spread: fc.constantFrom(10, 100, 1000),
        }),
        ({ seed, n, pairShare, k, upper, spread }) => {
          const r = rng(seed);
          const np = Math.floor((pairShare * n) / 2);
          const reals = Array.from({ length: n - 2 * np }, () => -spread * r() + 0.05 * spread * r());
          const pairs: [number, number][] = Array.from({ length: np }, () => [-spread * r() + 0.05 * spread * r(), 0.01 * spread + 0.3 * spread * r()]);
          const { J, dense } = controlledMatrix({ reals, pairs }, { seed, upperScale: upper * Math.sqrt(spread) });
          const res = rightmostEigenvalues(J, { count: k, seed: seed ^ 0x5bd1e995 });
          expect(res.converged, res.unconvergedReason).toBe(true);
          expect(res.values.length === k || res.values.length === k + 1).toBe(true);
          expectConjugateClosed(res.values);
          if (res.values.length === k + 1) expect(res.values[k - 1].im).not.toBe(0);
          const ref = denseWithCondition(dense).values.sort(byRightmost);
          const scale = Math.max(...ref.map((v) => Math.hypot(v.re, v.im)));
          const tol = (v: C) => 1e-7 * scale * Math.max(1, (v as C & { cond: number }).cond);
          // the values returned are eigenvalues ...
          expectMatches(res.values, ref.slice(0, res.values.length + 2), tol);
          // ... and none further right was missed
          const lastRe = res.values[res.values.length - 1].re;
          const slack = tol(ref[res.values.length - 1]);
          expect(lastRe).toBeGreaterThanOrEqual(ref[res.values.length - 1].re - slack);
          expect(res.searchedRegion.complete).toBe(true);
        },
      ),
      { numRuns: 40, seed: 20250101 },
    );
  });
});

describe('generalised problems J v = μ M v', () => {
  it('positive diagonal mass matches the dense answer', () => {
    const r = rng(11);
    const reals = Array.from({ length: 110 }, () => -40 * r() + 3 * r());
    const pairs: [number, number][] = Array.from({ length: 20 }, () => [-40 * r() + 3 * r(), 0.5 + 8 * r()]);
    const { J } = controlledMatrix({ reals, pairs }, { seed: 11, upperScale: 1 });
    const mass = Float64Array.from({ length: 150 }, () => 0.2 + 2 * r());
    const ref = eigenvaluesDense(J, mass).sort(byRightmost);
    const res = rightmostEigenvalues(J, { count: 7, mass });
    expect(res.converged).toBe(true);
    expectMatches(res.values, ref.slice(0, res.values.length + 1), () => 1e-7 * 40);
    expect(res.values[res.values.length - 1].re).toBeGreaterThanOrEqual(ref[res.values.length - 1].re - 1e-6);
    expect(res.searchedRegion.complete).toBe(true);
    for (const v of res.values) expect(v.relativeResidual).toBeLessThan(1e-8);
  });

  /**
   * Constrained system: M u' = A u + M c λ + e z,  0 = cᵀ u (index 2),  0 = gᵀ u − z (index 1).
   * Its finite eigenvalues are those of A' = A + e gᵀ compressed to cᵀu = 0 with the oblique
   * projection below (a reference built without the solver's shift-invert machinery).
   */
  function constrained(seed: number) {
    const r = rng(seed);
    const n0 = 90;
    const reals = Array.from({ length: n0 - 12 }, () => -30 * r() + 2 * r());
    const pairs: [number, number][] = Array.from({ length: 6 }, () => [-30 * r() + 2 * r(), 1 + 10 * r()]);
    const { dense: A } = controlledMatrix({ reals, pairs }, { seed, upperScale: 0.5 });
    const mass0 = Array.from({ length: n0 }, () => 0.5 + r());
    const n = n0 + 2;
    const Jd: number[][] = Array.from({ length: n }, () => new Array<number>(n).fill(0));
    for (let i = 0; i < n0; i++) for (let j = 0; j < n0; j++) Jd[i][j] = A[i][j];
    const c = Array.from({ length: n0 }, (_, i) => (i % 7 === 0 || r() < 0.1 ? 2 * r() - 1 : 0));
    const g = Array.from({ length: n0 }, (_, i) => (i === 5 || r() < 0.1 ? r() : 0));
    const e = Array.from({ length: n0 }, (_, i) => (i === 7 || r() < 0.1 ? r() : 0));
    for (let i = 0; i < n0; i++) {
      Jd[i][n0] = mass0[i] * c[i];
      Jd[n0][i] = c[i];
      Jd[i][n0 + 1] = e[i];
      Jd[n0 + 1][i] = g[i];
    }
    Jd[n0 + 1][n0 + 1] = -1;
    const mass = new Float64Array(n);
    for (let i = 0; i < n0; i++) mass[i] = mass0[i];
    // reference: with u = Z w (cᵀZ = 0) and rows projected by Yᵀ (Yᵀ M c = 0):
    // Yᵀ A' Z w = μ Yᵀ M Z w
    const orthComplement = (v: number[]) => {
      const basis: number[][] = [];
      const add = (x: number[]) => {
        const w = x.slice();
        for (let pass = 0; pass < 2; pass++) {
          for (const b of basis) {
            const d = b.reduce((s, bi, i) => s + bi * w[i], 0);
            for (let i = 0; i < n0; i++) w[i] -= d * b[i];
          }
        }
        const nw = Math.hypot(...w);
        if (nw > 0.3) basis.push(w.map((x) => x / nw));
      };
      const nv = Math.hypot(...v);
      add(v.map((x) => x / nv));
      for (let i = 0; i < n0 && basis.length < n0; i++) add(Array.from({ length: n0 }, (_, j) => (j === i ? 1 : 0)));
      return new Matrix(basis.slice(1)).transpose();
    };
    const Z = orthComplement(c);
    const Y = orthComplement(c.map((ci, i) => mass0[i] * ci));
    const Ap = new Matrix(A.map((row, i) => row.map((v, j) => v + e[i] * g[j])));
    const lhs = Y.transpose().mmul(Ap).mmul(Z);
    const rhs = Y.transpose().mmul(Matrix.diag(mass0)).mmul(Z);
    const ev = new EigenvalueDecomposition(inverse(rhs).mmul(lhs));
    const ref = ev.realEigenvalues.map((re, i) => ({ re, im: ev.imaginaryEigenvalues[i] })).sort(byRightmost);
    return { J: fromDense(Jd), mass, ref };
  }

  it('singular mass (constraint and algebraic rows) matches the dense answer, no spurious values', () => {
    for (const seed of [1, 2, 5]) {
      const { J, mass, ref } = constrained(seed);
      expect(ref).toHaveLength(89); // 92 unknowns − 3 infinite eigenvalues
      const dense = eigenvaluesDense(J, mass).sort(byRightmost);
      expect(dense).toHaveLength(89);
      expectMatches(dense.slice(0, 10), ref.slice(0, 12), () => 1e-6);
      const res = rightmostEigenvalues(J, { count: 6, mass });
      expect(res.converged, res.unconvergedReason).toBe(true);
      expectMatches(res.values, ref.slice(0, res.values.length + 1), () => 1e-6);
      expect(res.values[res.values.length - 1].re).toBeGreaterThanOrEqual(ref[res.values.length - 1].re - 1e-6);
      for (const v of res.values) expect(v.relativeResidual).toBeLessThan(1e-8);
      // with a singular mass no box is known to hold the spectrum: never claimed complete
      expect(res.searchedRegion.enclosure?.rigorous).toBe(false);
      expect(res.searchedRegion.complete).toBe(false);
      // warm start on a perturbed pencil (J − 0.05·M: every finite eigenvalue moves by −0.05)
      const J2 = { ...J, values: J.values.slice() };
      for (let j = 0; j < J2.cols; j++) {
        for (let p = J2.colPtr[j]; p < J2.colPtr[j + 1]; p++) if (J2.rowIdx[p] === j) J2.values[p] -= 0.05 * mass[j];
      }
      const res2 = rightmostEigenvalues(J2, { count: 6, mass, warmStart: res.warmStart });
      expect(res2.converged).toBe(true);
      expectMatches(res2.values, ref.slice(0, res2.values.length + 1).map((v) => ({ re: v.re - 0.05, im: v.im })), () => 1e-6);
      expect(res2.solves).toBeLessThan(res.solves);
    }
  });
});

describe('a rightmost pair with a large imaginary part', () => {
  // 118 real eigenvalues in [−50, −0.1] and the pair 0.5 ± 40i: the pair is the rightmost,
  // but 40 away from 0 while many real eigenvalues lie within 1 of it.
  const r = rng(5);
  const reals = Array.from({ length: 118 }, () => -0.1 - 50 * r());
  const { J } = controlledMatrix({ reals, pairs: [[0.5, 40]] }, { seed: 7, upperScale: 0.3 });

  it('shift-invert about 0 alone misses it, and its searched disc says so', () => {
    const res = rightmostEigenvalues(J, { count: 4, transform: 'shift-invert', shift: 0 });
    expect(res.values.some((v) => Math.abs(v.im) > 1)).toBe(false);
    const disc = res.searchedRegion.discs[0];
    expect(Math.hypot(0.5 - disc.center, 40)).toBeGreaterThan(disc.radius);
    expect(res.searchedRegion.complete).toBe(false);
  });

  it('the Cayley ordering with a widened second shift finds it and certifies the list', () => {
    const res = rightmostEigenvalues(J, { count: 4 });
    expect(res.converged).toBe(true);
    expect(res.values[0].re).toBeCloseTo(0.5, 7);
    expect(Math.abs(res.values[0].im)).toBeCloseTo(40, 7);
    expect(res.values[1].im).toBeCloseTo(-res.values[0].im, 12);
    expect(res.shifts.length).toBeGreaterThan(1);
    expect(res.searchedRegion.complete).toBe(true);
    // the pair lies inside a claimed Cayley disc: |μ − τ| ≥ ρ|μ − σ| region
    const inside = res.searchedRegion.discs.some((d) => Math.hypot(0.5 - d.center, 40) <= d.radius);
    expect(inside).toBe(true);
  });
});

describe('tracking along a branch', () => {
  // 2D Laplacian on a 20×20 grid plus a slowly growing potential s·exp(sin·sin): a stand-in for
  // a reaction–diffusion Jacobian along a branch. Reference: ml-matrix on the dense matrix.
  const N = 20;
  const mk = (s: number) => laplacian2d(N, N, 1, 1, (i, j) => s * Math.exp(Math.sin((Math.PI * (i + 1)) / (N + 1)) * Math.sin((Math.PI * (j + 1)) / (N + 1))));
  const denseRight = (J: ReturnType<typeof mk>) => eigenvaluesDense(J).sort(byRightmost);

  it('warm starts cost fewer solves than cold starts and give the same eigenvalues', () => {
    const J0 = mk(10);
    const tracker = new EigenTracker(J0, { count: 6 });
    const cold: number[] = [];
    const warm: number[] = [];
    for (let step = 0; step < 5; step++) {
      const J = mk(10 + 0.5 * step);
      const res = tracker.compute(J.values);
      expect(res.converged).toBe(true);
      const ref = denseRight(J);
      res.values.forEach((v, i) => expect(Math.abs(v.re - ref[i].re)).toBeLessThan(1e-7 * 3200));
      (step === 0 ? cold : warm).push(res.solves);
      const coldRes = rightmostEigenvalues(J, { count: 6 });
      if (step > 0) cold.push(coldRes.solves);
    }
    expect(Math.max(...warm)).toBeLessThan(Math.min(...cold));
    expect(tracker.totals.calls).toBe(5);
    expect(tracker.totals.solves).toBe(cold[0] + warm.reduce((a, b) => a + b, 0));
    tracker.dispose();
  });

  it('the warm start survives a JSON round trip (checkpointing) and gives the same answer', () => {
    const a = rightmostEigenvalues(mk(12), { count: 4 });
    const saved = JSON.parse(JSON.stringify(a.warmStart));
    const b1 = rightmostEigenvalues(mk(12.3), { count: 4, warmStart: a.warmStart });
    const b2 = rightmostEigenvalues(mk(12.3), { count: 4, warmStart: saved });
    expect(b2.values).toEqual(b1.values);
    expect(b2.solves).toBe(b1.solves);
  });
});

describe('Brusselator uniform state across its Hopf point', () => {
  // Uniform state (a, b/a): each cosine mode with discrete Laplacian eigenvalue −κ (ghost-point
  // Neumann, κ = (4/h²)(sin²(iπ/2N) + sin²(jπ/2N)); the closed forms are checked against ml-matrix in test/discretisations/laplacian.test.ts) has the 2×2 Jacobian
  // [[b − 1 − Du κ, a²], [−b, −a² − Dv κ]]; the κ = 0 pair crosses at b = 1 + a² with frequency a
  // (Prigogine & Lefever 1968).
  const N = 30;
  const a = 2;
  const Du = 1;
  const Dv = 8;
  const h = 1 / N;
  const exact = (b: number): C[] => {
    const out: C[] = [];
    for (let i = 0; i <= N; i++) {
      for (let j = 0; j <= N; j++) {
        const k = (4 / (h * h)) * (Math.sin((i * Math.PI) / (2 * N)) ** 2 + Math.sin((j * Math.PI) / (2 * N)) ** 2);
        const A = b - 1 - Du * k;
        const D = -a * a - Dv * k;
        const tr = A + D;
        const disc = (tr * tr) / 4 - (A * D + a * a * b);
        if (disc >= 0) out.push({ re: tr / 2 + Math.sqrt(disc), im: 0 }, { re: tr / 2 - Math.sqrt(disc), im: 0 });
        else out.push({ re: tr / 2, im: Math.sqrt(-disc) }, { re: tr / 2, im: -Math.sqrt(-disc) });
      }
    }
    return out.sort(byRightmost);
  };

  it('tracks the leading pair through b = 1 + a² with certified, warm-started searches', () => {
    const p = brusselator({ grid: { intervals: [N, N] } });
    const pattern = p.pattern();
    const values = new Float64Array(pattern.colPtr[pattern.cols]);
    const tracker = new EigenTracker(pattern, { count: 4, mass: p.massDiagonal });
    const signs: number[] = [];
    for (const b of [4.6, 4.8, 5.0, 5.2, 5.4]) {
      const par = { a, b, Du, Dv };
      p.jacobian(p.initialGuess(par), par, values);
      const res = tracker.compute(values);
      expect(res.converged).toBe(true);
      expect(res.searchedRegion.complete).toBe(true);
      expectMatches(res.values, exact(b).slice(0, res.values.length + 2), () => 1e-8);
      expect(Math.abs(res.values[0].im)).toBeGreaterThan(1.9);
      signs.push(Math.sign(res.values[0].re));
      if (b > 4.6) expect(res.shifts).toHaveLength(1); // the warm start plans one shift that suffices
    }
    expect(signs[0]).toBe(-1);
    expect(signs[signs.length - 1]).toBe(1);
    tracker.dispose();
  });
});

describe('honest reporting and bad input', () => {
  const J = laplacian2d(20, 15, 1, 0.7, () => 0);

  it('uses a caller-factored LU of J − σM for the first shift', () => {
    const lu = new SparseLU(J);
    lu.factor(J.values);
    const own = rightmostEigenvalues(J, { count: 4 });
    const shared = rightmostEigenvalues(J, { count: 4, factored: { lu, shift: 0 } });
    expect(shared.factorisations).toBe(own.factorisations - 1);
    shared.values.forEach((v, i) => expect(v.re).toBeCloseTo(own.values[i].re, 9));
    lu.dispose();
  });

  it('non-convergence is reported with the values reached and their residuals', () => {
    const res = rightmostEigenvalues(J, { count: 6, tolerance: 1e-15, maxRestarts: 0, maxShifts: 1 });
    expect(res.converged).toBe(false);
    expect(res.unconvergedReason).toMatch(/restart/);
    expect(res.values.length).toBeGreaterThan(0);
    expect(res.values.some((v: EigenValue) => !v.converged) || res.searchedRegion.complete === false).toBe(true);
  });

  it('problems too small for a Krylov basis are solved densely', () => {
    const small = laplacian2d(4, 4, 1, 1, () => 0);
    const res = rightmostEigenvalues(small, { count: 3 });
    expect(res.method).toBe('dense');
    const exact = laplacian2dEigenvalues(4, 4, 1, 1, 0);
    res.values.forEach((v, i) => expect(v.re).toBeCloseTo(exact[i], 9));
    expect(res.solves).toBe(0);
  });

  it('one-line errors name the problem', () => {
    expect(() => rightmostEigenvalues(J, { count: 0 })).toThrow(/count must be a positive integer, got 0/);
    expect(() => rightmostEigenvalues(J, { count: 2, mass: new Float64Array(3) })).toThrow(/mass has length 3, expected 300/);
    expect(() => rightmostEigenvalues(J, { count: 2, warmStart: { size: 10, vectors: [], values: [], shift: 0 } })).toThrow(/warmStart.size is 10, expected 300/);
    expect(() => rightmostEigenvalues(J, { count: 2, tolerance: 2 })).toThrow(/tolerance must lie in \(0, 1\), got 2/);
    expect(() => rightmostEigenvalues(J, { count: 2, transform: 'qr' as 'cayley' })).toThrow(/transform must be 'cayley' or 'shift-invert'/);
  });

  it('helpers: the Cayley image exceeds 1 exactly right of (σ + τ)/2, and the Apollonius disc holds |C| ≥ ρ', () => {
    const sigma = 5;
    const tau = -9;
    expect(cayleyImage({ re: -1.999, im: 300 }, sigma, tau)).toBeGreaterThan(1);
    expect(cayleyImage({ re: -2.001, im: 300 }, sigma, tau)).toBeLessThan(1);
    const { center, radius } = apolloniusDisc(sigma, tau, 1.5);
    for (const t of [0, 1, 2, 3]) {
      const mu = { re: center + radius * Math.cos(t), im: radius * Math.sin(t) };
      expect(cayleyImage(mu, sigma, tau)).toBeCloseTo(1.5, 10);
    }
  });
});
