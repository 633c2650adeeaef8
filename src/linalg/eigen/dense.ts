/**
 * The dense path: every finite eigenvalue of J v = μ M v by dense methods (ml-matrix
 * EigenvalueDecomposition), for problems too small for a Krylov basis and as a reference.
 */
import { EigenvalueDecomposition, Matrix, inverse } from 'ml-matrix';
import type { Complex } from '../schur.js';
import type { CscMatrix } from '../sparse.js';
import { normEstimate } from './certification.js';
import { type KnownPair, pencilResidual, selectRightmost } from './eigenpairs.js';
import { makeWarmStart } from './seeding.js';
import { applyShiftInvert, cabs } from './transform.js';
import type { RightmostResult } from './types.js';


/**
 * All finite eigenvalues of J v = μ M v by dense methods (ml-matrix EigenvalueDecomposition),
 * for small problems and as a reference. Nonsingular M: eigenvalues of M⁻¹J. Singular M: the
 * nonzero eigenvalues θ of (J − σM)⁻¹M for a shift σ that is not an eigenvalue, μ = σ + 1/θ;
 * θ with |θ| ≤ 1e-7·max|θ| are taken as infinite eigenvalues (index-2 infinite eigenvalues
 * perturb to about sqrt(ε)·‖T‖), so finite eigenvalues more than ~10⁷ times farther from σ than
 * the nearest one are lost — fine for references, documented for users.
 */
export function eigenvaluesDense(J: CscMatrix | ArrayLike<ArrayLike<number>>, mass?: ArrayLike<number>): Complex[] {
  return denseEigen(J, mass, false).values;
}

function toDenseRows(J: CscMatrix | ArrayLike<ArrayLike<number>>): number[][] {
  if ((J as CscMatrix).colPtr !== undefined) {
    const a = J as CscMatrix;
    const d: number[][] = Array.from({ length: a.rows }, () => new Array<number>(a.cols).fill(0));
    for (let j = 0; j < a.cols; j++) for (let p = a.colPtr[j]; p < a.colPtr[j + 1]; p++) d[a.rowIdx[p]][j] += a.values[p];
    return d;
  }
  const rows = J as ArrayLike<ArrayLike<number>>;
  return Array.from({ length: rows.length }, (_, i) => Array.from(rows[i]));
}

function denseEigen(
  J: CscMatrix | ArrayLike<ArrayLike<number>>,
  mass: ArrayLike<number> | undefined,
  wantVectors: boolean,
): { values: Complex[]; vectors: { re: Float64Array; im: Float64Array }[] } {
  const A = toDenseRows(J);
  const n = A.length;
  if (mass && mass.length !== n) throw new RangeError(`mass has length ${mass.length}, expected ${n}`);
  const singular = mass ? Array.from(mass).some((m) => m === 0) : false;
  let values: Complex[] = [];
  let X: Matrix;
  let keep: boolean[];
  if (!singular) {
    const B = new Matrix(A.map((row, i) => row.map((v) => v / (mass ? mass[i] : 1))));
    const e = new EigenvalueDecomposition(B);
    values = e.realEigenvalues.map((re, i) => ({ re, im: e.imaginaryEigenvalues[i] }));
    X = e.eigenvectorMatrix;
    keep = values.map(() => true);
  } else {
    let nrm = 0;
    for (const row of A) nrm = Math.max(nrm, row.reduce((s, v) => s + Math.abs(v), 0));
    const candidates = [0.3183098861837907, -0.5772156649015329, 1.2345678901234567, -2.718281828459045].map((c) => c * Math.max(nrm, 1) * 1e-2);
    let best: { sigma: number; Tm: Matrix; rc: number } | null = null;
    for (const sigma of candidates) {
      const K = new Matrix(A.map((row, i) => row.map((v, j) => (i === j ? v - sigma * mass![i] : v))));
      let Ki: Matrix;
      try {
        Ki = inverse(K);
      } catch {
        continue;
      }
      let kin = 0;
      for (let i = 0; i < n; i++) kin = Math.max(kin, Ki.getRow(i).reduce((s, v) => s + Math.abs(v), 0));
      let kn = 0;
      for (let i = 0; i < n; i++) kn = Math.max(kn, K.getRow(i).reduce((s, v) => s + Math.abs(v), 0));
      const rc = 1 / (kin * kn);
      if (!Number.isFinite(rc)) continue;
      if (!best || rc > best.rc) {
        const Tm = new Matrix(n, n);
        for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) Tm.set(i, j, Ki.get(i, j) * mass![j]);
        best = { sigma, Tm, rc };
      }
      if (rc > 1e-8) break;
    }
    if (!best) throw new Error('eigenvaluesDense: no usable shift (J − σM singular for every trial σ)');
    const e = new EigenvalueDecomposition(best.Tm);
    const th = e.realEigenvalues.map((re, i) => ({ re, im: e.imaginaryEigenvalues[i] }));
    const tmax = th.reduce((m, t) => Math.max(m, cabs(t.re, t.im)), 0);
    keep = th.map((t) => cabs(t.re, t.im) > 1e-7 * tmax);
    values = th.map((t) => applyShiftInvert(t, best!.sigma));
    X = e.eigenvectorMatrix;
  }
  const outValues: Complex[] = [];
  const vectors: { re: Float64Array; im: Float64Array }[] = [];
  for (let i = 0; i < n; i++) {
    if (!keep[i]) continue;
    outValues.push(values[i]);
    if (wantVectors) {
      const re = new Float64Array(n);
      const im = new Float64Array(n);
      const v = values[i];
      // ml-matrix (JAMA layout): a pair occupies columns i (real part) and i+1 (imaginary part)
      if (v.im === 0) for (let r = 0; r < n; r++) re[r] = X.get(r, i);
      else if (i + 1 < n && values[i + 1] && values[i + 1].im === -v.im && v.im > 0) {
        for (let r = 0; r < n; r++) {
          re[r] = X.get(r, i);
          im[r] = X.get(r, i + 1);
        }
      } else {
        for (let r = 0; r < n; r++) {
          re[r] = X.get(r, i - 1);
          im[r] = -X.get(r, i);
        }
      }
      vectors.push({ re, im });
    }
  }
  return { values: outValues, vectors };
}

/** The result of a call answered densely (the `count` rightmost of every finite eigenvalue; certified by construction). */
export function denseResult(J: CscMatrix, o: { count: number; guard: number; mass?: Float64Array }): RightmostResult {
  const n = J.cols;
  const { values, vectors } = denseEigen(J, o.mass, true);
  const mMax = o.mass ? o.mass.reduce((a, m) => Math.max(a, Math.abs(m)), 0) : 1;
  const jNorm = normEstimate(J);
  const pairs: KnownPair[] = values.map((mu, i) => {
    const { re, im } = vectors[i];
    const res = pencilResidual(J, o.mass, mu, re, im);
    return { mu, xr: re, xi: im, residual: res, relativeResidual: res / (jNorm + cabs(mu.re, mu.im) * mMax), converged: true };
  });
  pairs.sort((a, b) => (b.mu.re !== a.mu.re ? b.mu.re - a.mu.re : b.mu.im - a.mu.im));
  const sel = selectRightmost(pairs, o.count);
  const kw = o.count + o.guard;
  const lastRe = sel.length > 0 ? sel[sel.length - 1].mu.re : -Infinity;
  return {
    values: sel.map((k) => ({ re: k.mu.re, im: k.mu.im, residual: k.residual, relativeResidual: k.relativeResidual, converged: true })),
    converged: sel.length >= Math.min(o.count, values.length),
    searchedRegion: {
      discs: [],
      certifiedAbove: Number.isFinite(lastRe) ? lastRe : null,
      enclosure: null,
      imaginaryReach: 0,
      complete: true,
      description: `Dense computation of every finite eigenvalue (problem of ${n} unknowns, too small for a Krylov basis): the ${sel.length} values returned are the rightmost.`,
    },
    solves: 0,
    factorisations: 0,
    restarts: 0,
    shifts: [],
    warmStart: makeWarmStart(pairs.slice(0, kw), n, 0),
    method: 'dense',
  };
}
