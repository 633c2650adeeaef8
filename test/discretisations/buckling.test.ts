/**
 * Buckling models against handbook results.
 *  - elastica: the straight strut's stability from the generalised eigenproblem J v = μ M v
 *    (M = diag(1, …, 1, 0)) with the algebraic constraint row eliminated; the discrete Euler
 *    loads λ_n = (4/h²) sin²(nπh/2) (LeVeque, Finite Difference Methods for ODEs and PDEs, SIAM 2007, §2.10, from memory; continuum n²π², Euler); and the
 *    post-buckled state: θ(0) = α at λ = (2K(k))², k = sin(α/2), with midspan deflection
 *    2 sin(α/2)/√λ (Timoshenko & Gere, Theory of Elastic Stability; the deflection from the
 *    first integral θ'² = 2λ(cos θ − cos α)).
 *  - beam on a foundation, pinned ends: w = 0 loses stability at P_n = EI μ_n + kf/μ_n with the
 *    discrete μ_n = (4/h²) sin²(nπh/(2L)) (Timoshenko & Gere, with the discrete μ_n); clamped
 *    ends without foundation: Euler load 4π² EI/L² (Timoshenko & Gere), approached at order 2.
 */
import { describe, expect, it } from 'vitest';
import { EigenvalueDecomposition, Matrix, solve } from 'ml-matrix';
import { elastica } from '../../discretisations/models/elastica.js';
import { beamFoundation } from '../../discretisations/models/beam-foundation.js';
import { denseJacobian, newtonDense } from './helpers.js';
import type { Problem } from '../../src/problem/problem.js';

/** Finite eigenvalues of J v = μ M v where the last unknown is algebraic (M = diag(1..1, 0)). */
function constrainedEigenvalues(J: number[][]): { re: number[]; im: number[] } {
  const n = J.length - 1; // grid unknowns
  // J = [[A, b], [cᵀ, 0]]: eigenvectors satisfy cᵀφ = 0, A φ + b s = μ φ.
  // Project with P = I − b cᵀ/(cᵀb) and parametrise φ = Z y, Z = [I; −c_{0..n−2}ᵀ/c_{n−1}].
  const A = new Matrix(J.slice(0, n).map((row) => row.slice(0, n)));
  const b = J.slice(0, n).map((row) => row[n]);
  const c = J[n].slice(0, n);
  const cb = c.reduce((s, ci, i) => s + ci * b[i], 0);
  const P = Matrix.eye(n, n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) P.set(i, j, P.get(i, j) - (b[i] * c[j]) / cb);
  const Z = Matrix.zeros(n, n - 1);
  for (let i = 0; i < n - 1; i++) {
    Z.set(i, i, 1);
    Z.set(n - 1, i, -c[i] / c[n - 1]);
  }
  const PAZ = P.mmul(A).mmul(Z).subMatrix(0, n - 2, 0, n - 2);
  const e = new EigenvalueDecomposition(PAZ);
  return { re: e.realEigenvalues, im: e.imaginaryEigenvalues };
}

function agm(a: number, b: number): number {
  for (let k = 0; k < 60 && Math.abs(a - b) > 1e-16 * a; k++) [a, b] = [(a + b) / 2, Math.sqrt(a * b)];
  return a;
}
/** Complete elliptic integral of the first kind K(k) (modulus k) via the AGM. */
const ellipticK = (k: number) => Math.PI / (2 * agm(1, Math.sqrt(1 - k * k)));

describe('elastica', () => {
  const N = 24;
  const h = 1 / N;
  const mu = (n: number) => (4 / h ** 2) * Math.sin((n * Math.PI * h) / 2) ** 2;
  const pr = elastica({ grid: { intervals: [N] } });
  const straight = new Float64Array(pr.size);

  it('zero mass on the multiplier, trapezoid weights, caution', () => {
    expect(pr.massDiagonal![pr.size - 1]).toBe(0);
    expect(pr.massDiagonal![0]).toBe(1);
    expect(pr.weights[0]).toBeCloseTo(h / 2, 15);
    expect(pr.weights[1]).toBeCloseTo(h, 15);
    expect(pr.weights.slice(0, N + 1).reduce((a, b) => a + b, 0)).toBeCloseTo(1, 14);
    expect(pr.describe().caution).toMatch(/buckling.*not a substitute for design codes/);
  });

  it('straight strut: finite eigenvalues are λ − μ_n, n = 1..N (discrete Euler loads); stable below μ_1', () => {
    for (const lambda of [0.5 * mu(1), 0.5 * (mu(1) + mu(2))]) {
      const { re, im } = constrainedEigenvalues(denseJacobian(pr, straight, { lambda }));
      expect(Math.max(...im.map(Math.abs))).toBeLessThan(1e-8);
      const expected = Array.from({ length: N }, (_, k) => lambda - mu(k + 1)).sort((a, b) => a - b);
      const got = re.slice().sort((a, b) => a - b);
      expect(got.length).toBe(N);
      for (let k = 0; k < N; k++) expect(Math.abs(got[k] - expected[k])).toBeLessThan(1e-8 * mu(N));
      const unstable = got.filter((x) => x > 0).length;
      expect(unstable).toBe(lambda < mu(1) ? 0 : 1);
    }
    // the continuum limit of the first load is Euler's π² (Euler; Timoshenko & Gere)
    expect(Math.abs(mu(1) - Math.PI ** 2)).toBeLessThan(0.02);
  });

  it('without the constraint the rigid rotation would look unstable: the θθ block has eigenvalue +λ', () => {
    const lambda = 2;
    const J = denseJacobian(pr, straight, { lambda });
    const A = new Matrix(J.slice(0, N + 1).map((row) => row.slice(0, N + 1)));
    const e = new EigenvalueDecomposition(A).realEigenvalues;
    expect(Math.max(...e)).toBeCloseTo(lambda, 8);
  });

  it('post-buckled state: θ(0) → α and midspan deflection → 2 sin(α/2)/√λ at order 2', () => {
    const alpha = 1;
    const k = Math.sin(alpha / 2);
    const lambda = (2 * ellipticK(k)) ** 2;
    const errA: number[] = [];
    const errY: number[] = [];
    for (const n of [16, 32, 64]) {
      const q = elastica({ grid: { intervals: [n] } });
      const u0 = new Float64Array(q.size);
      for (let i = 0; i <= n; i++) u0[i] = alpha * Math.cos((Math.PI * i) / n);
      const u = newtonDense(q, u0, { lambda });
      expect(Math.abs(u[q.size - 1])).toBeLessThan(1e-9); // no end reaction by symmetry
      const mon = (name: string) => q.monitors.find((m) => m.name === name)!.evaluate(u, { lambda });
      errA.push(Math.abs(mon('end-rotation') - alpha));
      errY.push(Math.abs(mon('centre') - (2 * Math.sin(alpha / 2)) / Math.sqrt(lambda)));
    }
    for (const e of [errA, errY]) {
      for (let i = 0; i + 1 < e.length; i++) {
        const order = Math.log2(e[i] / e[i + 1]);
        expect(order).toBeGreaterThan(1.8);
        expect(order).toBeLessThan(2.2);
      }
    }
    expect(errA[2]).toBeLessThan(1e-3);
  });

  it('refuses a length other than 1 and 2D grids', () => {
    expect(() => elastica({ grid: { intervals: [10], length: [2] } })).toThrow(/grid.length must be 1/);
    expect(() => elastica({ grid: { intervals: [10, 10] } })).toThrow(/supports 1D/);
  });
});

function eigs(pr: Problem, p: Record<string, number>): number[] {
  const J = new Matrix(denseJacobian(pr, new Float64Array(pr.size), p));
  return new EigenvalueDecomposition(J).realEigenvalues.slice().sort((a, b) => a - b);
}

describe('beam-foundation', () => {
  const N = 20;
  const L = 2;
  const h = L / N;
  const mu = (n: number) => (4 / h ** 2) * Math.sin((n * Math.PI * h) / (2 * L)) ** 2;
  const EI = 1.3;
  const kf = 40;
  const pinned = beamFoundation({ grid: { intervals: [N], length: [L] } });

  it('pinned: eigenvalues of F_w at w = 0 are −(EI μ_n² − P μ_n + kf)', () => {
    const P = 7;
    const got = eigs(pinned, { P, EI, kf, k3: 5 });
    const expected = Array.from({ length: N - 1 }, (_, k) => -(EI * mu(k + 1) ** 2 - P * mu(k + 1) + kf)).sort((a, b) => a - b);
    for (let k = 0; k < N - 1; k++) expect(Math.abs(got[k] - expected[k])).toBeLessThan(1e-9 * Math.abs(expected[0]));
  });

  it('pinned: w = 0 is stable below the smallest P_n = EI μ_n + kf/μ_n and singular at each P_n', () => {
    // Timoshenko & Gere, Theory of Elastic Stability: P_n = EI μ_n + kf/μ_n, exact with the discrete μ_n
    const Pn = Array.from({ length: 4 }, (_, k) => EI * mu(k + 1) + kf / mu(k + 1));
    const Pmin = Math.min(...Pn);
    expect(Math.max(...eigs(pinned, { P: 0.99 * Pmin, EI, kf, k3: 5 }))).toBeLessThan(0);
    expect(Math.max(...eigs(pinned, { P: 1.01 * Pmin, EI, kf, k3: 5 }))).toBeGreaterThan(0);
    for (const P of Pn) {
      const e = eigs(pinned, { P, EI, kf, k3: 5 });
      expect(Math.min(...e.map(Math.abs))).toBeLessThan(1e-8 * Math.max(...e.map(Math.abs)));
    }
  });

  it('clamped, no foundation: the first buckling load tends to 4π²EI/L² at order 2', () => {
    // Euler load of a strut clamped at both ends, 4π²EI/L² (Timoshenko & Gere, Theory of Elastic Stability)
    const errs: number[] = [];
    for (const n of [16, 32, 64]) {
      const pr = beamFoundation({ grid: { intervals: [n], length: [L] }, ends: 'clamped' });
      // at w = 0, kf = k3 = 0: −J(P) = EI D4 + P D2, so A = −J(0) = EI D4 and B = A + J(1) = −D2;
      // the load where J first becomes singular solves EI D4 w = P (−D2) w
      const zero = new Float64Array(pr.size);
      const A = new Matrix(denseJacobian(pr, zero, { P: 0, EI, kf: 0, k3: 0 })).neg();
      const B = A.clone().add(new Matrix(denseJacobian(pr, zero, { P: 1, EI, kf: 0, k3: 0 })));
      const e = new EigenvalueDecomposition(solve(B, A)).realEigenvalues;
      const Pcr = Math.min(...e.filter((x) => x > 0));
      errs.push(Math.abs(Pcr - (4 * Math.PI ** 2 * EI) / L ** 2));
    }
    for (let i = 0; i + 1 < errs.length; i++) {
      const order = Math.log2(errs[i] / errs[i + 1]);
      expect(order).toBeGreaterThan(1.8);
      expect(order).toBeLessThan(2.2);
    }
  });

  it('pinned fourth difference is the square of the dirichlet second difference', () => {
    // −J(P = 0, kf = 0, k3 = 0)/EI = D4 and −∂J/∂P = D2
    const J4 = new Matrix(denseJacobian(pinned, new Float64Array(pinned.size), { P: 0, EI: 1, kf: 0, k3: 0 })).neg();
    const J2 = new Matrix(denseJacobian(pinned, new Float64Array(pinned.size), { P: 1, EI: 0, kf: 0, k3: 0 })).neg();
    const diff = J2.mmul(J2).sub(J4);
    expect(Math.max(...diff.to1DArray().map(Math.abs))).toBeLessThan(1e-6 * Math.max(...J4.to1DArray().map(Math.abs)));
  });
});
