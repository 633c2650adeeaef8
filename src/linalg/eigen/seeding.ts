/**
 * Starting vectors of a Krylov–Schur decomposition: the warm start carried along a branch, and
 * the locking of eigenpairs already found into the decomposition of a new shift.
 *
 * Warm start: the orthonormal basis of the previous eigenvectors (a Schur basis of the wanted
 * invariant subspace) seeds the Krylov decomposition; with a multiple eigenvalue in it, as many
 * seed vectors as its multiplicity. After convergence, a previous direction missing from the
 * new subspace is injected and the search continued (`injectMissing`).
 *
 * Locking: for a new shift, the eigenpairs found so far enter as an invariant basis Q with
 * T Q = Q (S_μ − σI)⁻¹ (J Q = M Q S_μ by least squares), and a fresh vector explores the rest.
 *
 * Singular M (algebraic rows): every start vector is purified by the caller's `purify` (two
 * applications of T: Nour-Omid, Parlett, Ericsson & Jensen 1987; two because constraint and
 * phase-condition rows give index-2 infinite eigenvalues).
 */
import { Matrix, inverse } from 'ml-matrix';
import { type CscMatrix, matVec } from '../sparse.js';
import { axpy, dot, norm2, scaleInPlace } from '../vector.js';
import type { KrylovSchur } from './krylov-schur.js';
import { orthogonalize } from './krylov-schur.js';
import { type KnownPair, multiplicity } from './eigenpairs.js';
import type { EigenWarmStart } from './types.js';

/** Purification of a start vector against the infinite eigenvalues (the identity for a regular M). */
export type Purify = (v: Float64Array) => Float64Array;

/**
 * Seed `ks` from a warm start: random combinations of its basis, as many as the largest
 * multiplicity among its values (at most 3). Returns the basis (for `injectMissing`).
 */
export function seedFromWarm(ks: KrylovSchur, w: EigenWarmStart, purify: Purify, random: () => number, floor: number): Float64Array[] {
  const n = ks.n;
  const Q = w.vectors.map((v) => Float64Array.from(v));
  const blocks = Math.min(3, Q.length, Math.max(1, multiplicity(w.values, floor)));
  for (let b = 0; b < blocks; b++) {
    const v = new Float64Array(n);
    for (const q of Q) axpy(v, 0.5 + random(), q);
    if (!ks.inject(purify(v))) ks.inject(purify(ks.randomVector()));
  }
  return Q;
}

/**
 * Inject the previous direction most absent from the whole search space (e.g. the second copy
 * of a double eigenvalue, which a single Krylov sequence cannot produce); false when every one
 * is at least half present.
 */
export function injectMissing(ks: KrylovSchur, Q: Float64Array[], purify: Purify): boolean {
  let best: Float64Array | null = null;
  let bestNorm = 0.5;
  const basis = ks.V.concat(ks.F);
  for (const q of Q) {
    const c = Float64Array.from(q);
    orthogonalize(c, basis);
    const nc = norm2(c);
    if (nc > bestNorm) {
      bestNorm = nc;
      best = c;
    }
  }
  if (!best) return false;
  return ks.inject(purify(best));
}

/** Lock the eigenpairs `keep` into `ks` for the shift σ and add a fresh random vector; returns the dimension reached. */
export function lockedStart(ks: KrylovSchur, sigma: number, keep: KnownPair[], J: CscMatrix, mass: Float64Array | undefined, purify: Purify): number {
  const { Q, S } = invariantBasis(keep, J, mass, ks.n);
  if (Q.length > 0) {
    const St = shiftedRayleigh(S, sigma);
    if (St) ks.lock(Q, St);
  }
  ks.inject(purify(ks.randomVector()));
  return ks.dim;
}

/** Extend the orthonormal Q by the eigenvector of k (real and imaginary parts), dropping what Q already spans. */
function appendEigenvector(Q: Float64Array[], k: KnownPair): void {
  for (const x of k.mu.im !== 0 ? [k.xr, k.xi] : [k.xr]) {
    const c = Float64Array.from(x);
    const n0 = norm2(c);
    if (!(n0 > 0)) continue;
    orthogonalize(c, Q);
    const nc = norm2(c);
    if (nc > 1e-6 * n0) {
      scaleInPlace(c, 1 / nc);
      Q.push(c);
    }
  }
}

/**
 * Orthonormal basis Q of the span of the eigenvectors (real and imaginary parts), and S with
 * J Q ≈ M Q S (least squares), for locking found eigenpairs into a new Krylov decomposition.
 */
function invariantBasis(keep: KnownPair[], J: CscMatrix, mass: Float64Array | undefined, n: number): { Q: Float64Array[]; S: number[][] } {
  const Q: Float64Array[] = [];
  const seen = new Set<KnownPair>();
  for (const k of keep) {
    if (seen.has(k)) continue;
    seen.add(k);
    appendEigenvector(Q, k);
  }
  const p = Q.length;
  if (p === 0) return { Q, S: [] };
  // MQ = U R (modified Gram–Schmidt), S = R⁻¹ Uᵀ (J Q)
  const U: Float64Array[] = [];
  const Rm: number[][] = Array.from({ length: p }, () => new Array<number>(p).fill(0));
  for (let j = 0; j < p; j++) {
    const u = new Float64Array(n);
    for (let i = 0; i < n; i++) u[i] = (mass ? mass[i] : 1) * Q[j][i];
    for (let pass = 0; pass < 2; pass++) {
      for (let i = 0; i < j; i++) {
        const c = dot(U[i], u);
        Rm[i][j] += c;
        axpy(u, -c, U[i]);
      }
    }
    const nu = norm2(u);
    Rm[j][j] = nu;
    if (nu > 0) scaleInPlace(u, 1 / nu);
    U.push(u);
  }
  const JQ = Q.map((q) => matVec(J, q, new Float64Array(n)));
  const UtJQ: number[][] = U.map((u) => JQ.map((jq) => dot(u, jq)));
  // back substitution R S = UᵀJQ
  const S: number[][] = Array.from({ length: p }, () => new Array<number>(p).fill(0));
  for (let c = 0; c < p; c++) {
    for (let i = p - 1; i >= 0; i--) {
      let s = UtJQ[i][c];
      for (let k = i + 1; k < p; k++) s -= Rm[i][k] * S[k][c];
      S[i][c] = Rm[i][i] !== 0 ? s / Rm[i][i] : 0;
    }
  }
  return { Q, S };
}

/** (S_μ − σI)⁻¹: the matrix of T = (J − σM)⁻¹M on an invariant subspace where J Q = M Q S_μ. */
function shiftedRayleigh(S: number[][], sigma: number): number[][] | null {
  const p = S.length;
  const A = new Matrix(S.map((row, i) => row.map((v, j) => (i === j ? v - sigma : v))));
  try {
    const inv = inverse(A);
    const out = inv.to2DArray();
    for (const row of out) for (const v of row) if (!Number.isFinite(v)) return null;
    return out.length === p ? out : null;
  } catch {
    return null;
  }
}

/** The warm start for the next call: an orthonormal basis of the eigenvectors of `pairs` and their values. */
export function makeWarmStart(pairs: KnownPair[], n: number, shift: number): EigenWarmStart {
  const Q: Float64Array[] = [];
  for (const k of pairs) {
    if (k.mu.im < 0 && pairs.some((o) => o.mu.re === k.mu.re && o.mu.im === -k.mu.im)) continue;
    appendEigenvector(Q, k);
  }
  return {
    size: n,
    vectors: Q.map((q) => Array.from(q)),
    values: pairs.map((k) => ({ re: k.mu.re, im: k.mu.im })),
    shift,
  };
}

export function checkWarmStart(w: EigenWarmStart, n: number): void {
  if (!w || typeof w !== 'object') throw new RangeError('warmStart must be an object with size, vectors, values and shift');
  if (w.size !== n) throw new RangeError(`warmStart.size is ${w.size}, expected ${n} (the warm start belongs to another problem size)`);
  if (!Array.isArray(w.vectors) || !Array.isArray(w.values)) throw new RangeError('warmStart.vectors and warmStart.values must be arrays');
  for (const v of w.vectors) {
    if (!v || v.length !== n) throw new RangeError(`warmStart.vectors holds a vector of length ${v ? v.length : 'undefined'}, expected ${n}`);
  }
  for (const v of w.values) {
    if (!Number.isFinite(v.re) || !Number.isFinite(v.im)) throw new RangeError('warmStart.values holds a non-finite eigenvalue');
  }
}
