/**
 * Real Schur form of small dense matrices, with reordering — the dense kernel of the
 * Krylov–Schur eigensolver in eigen.ts.
 *
 * For a real n×n matrix A we compute an orthogonal Z and a quasi-upper-triangular T with
 * A = Z T Zᵀ. T has 1×1 blocks (real eigenvalues) and 2×2 blocks (complex conjugate pairs) on
 * its diagonal; every 2×2 block is in the standard form [[a, b], [c, a]] with b·c < 0, so the
 * pair is a ± i·sqrt(−b·c).
 *
 * Methods (all published, implemented here from their descriptions):
 * - Householder reduction to upper Hessenberg form, then the Francis double-shift QR iteration
 *   with deflation on negligible subdiagonal entries and exceptional shifts at the 10th and 20th
 *   iteration on a window (Francis 1961; Golub & Van Loan, *Matrix Computations*, §7.4–7.5). The
 *   shifts and the first column of the double-shift polynomial are formed without cancellation,
 *   as in LAPACK's DLAHQR, so that clusters of nearly equal eigenvalues (multiple eigenvalues of
 *   symmetric grids, seen through a Krylov space) still converge.
 * - Standardisation of 2×2 blocks by one rotation, following the case analysis of LAPACK's
 *   DLANV2 (equal diagonal for complex pairs, triangular for real pairs).
 * - Reordering by swapping adjacent 1×1/2×2 blocks with the direct method of Bai & Demmel
 *   (1993): solve the small Sylvester equation A11·X − X·A22 = A12, take the QR factorisation
 *   of [−X; I], and apply it; a swap whose result is not numerically block upper triangular is
 *   refused (the eigenvalues involved are too close to be separated stably).
 * - Eigenvectors of the quasi-triangular T by back substitution (as in LAPACK's DTREVC), with
 *   tiny pivots raised to a floor so that nearly equal eigenvalues do not overflow.
 *
 * Storage: dense matrices are row-major Float64Arrays, element (i, j) at [i·n + j].
 */

const EPS = 2.220446049250313e-16;

/** Fortran SIGN(a, b): |a| with the sign of b (b = 0 counts as positive). */
function sign(a: number, b: number): number {
  const m = Math.abs(a);
  return b >= 0 ? m : -m;
}

export interface Complex {
  re: number;
  im: number;
}

export interface RealSchurResult {
  n: number;
  /** Quasi-upper-triangular factor (row-major n×n), standardised 2×2 blocks. */
  T: Float64Array;
  /** Orthogonal factor (row-major n×n): A = Z T Zᵀ. */
  Z: Float64Array;
  /** False when the QR iteration hit its iteration limit (T is then not fully reduced). */
  converged: boolean;
}

/** Identity matrix (row-major n×n). */
export function identity(n: number): Float64Array {
  const m = new Float64Array(n * n);
  for (let i = 0; i < n; i++) m[i * n + i] = 1;
  return m;
}

/** Apply the plane rotation x' = c·x + s·y, y' = c·y − s·x to rows i, k over columns [from, to). */
function rotRows(a: Float64Array, n: number, i: number, k: number, c: number, s: number, from: number, to: number): void {
  const ri = i * n;
  const rk = k * n;
  for (let j = from; j < to; j++) {
    const x = a[ri + j];
    const y = a[rk + j];
    a[ri + j] = c * x + s * y;
    a[rk + j] = c * y - s * x;
  }
}

/** The same rotation on columns i, k over rows [from, to). */
function rotCols(a: Float64Array, n: number, i: number, k: number, c: number, s: number, from: number, to: number): void {
  for (let r = from; r < to; r++) {
    const x = a[r * n + i];
    const y = a[r * n + k];
    a[r * n + i] = c * x + s * y;
    a[r * n + k] = c * y - s * x;
  }
}

/**
 * Standardise the real 2×2 matrix [[a, b], [c, d]] (after LAPACK DLANV2): returns the rotation
 * (cs, sn) and the new entries with [[a b],[c d]] = G·[[a' b'],[c' d']]·Gᵀ, G = [[cs, −sn], [sn, cs]];
 * either c' = 0 (real eigenvalues a', d') or a' = d' and b'·c' < 0 (complex pair).
 */
export function standardise2x2(a: number, b: number, c: number, d: number): { a: number; b: number; c: number; d: number; cs: number; sn: number } {
  let cs = 1;
  let sn = 0;
  if (c === 0) {
    // already upper triangular
  } else if (b === 0) {
    // swap rows and columns
    cs = 0;
    sn = 1;
    const temp = d;
    d = a;
    a = temp;
    b = -c;
    c = 0;
  } else if (a - d === 0 && sign(1, b) !== sign(1, c)) {
    // already standard
  } else {
    let temp = a - d;
    let p = 0.5 * temp;
    const bcmax = Math.max(Math.abs(b), Math.abs(c));
    const bcmis = Math.min(Math.abs(b), Math.abs(c)) * sign(1, b) * sign(1, c);
    let scale = Math.max(Math.abs(p), bcmax);
    let z = (p / scale) * p + (bcmax / scale) * bcmis;
    if (z >= 4 * EPS) {
      // real eigenvalues
      z = p + sign(Math.sqrt(scale) * Math.sqrt(z), p);
      a = d + z;
      d = d - (bcmax / z) * bcmis;
      const tau = Math.hypot(c, z);
      cs = z / tau;
      sn = c / tau;
      b = b - c;
      c = 0;
    } else {
      // complex or nearly equal real eigenvalues: make the diagonal entries equal
      const sigma = b + c;
      scale = Math.max(Math.abs(temp), Math.abs(sigma));
      p = 0.5 * temp;
      const tau = Math.hypot(sigma, temp);
      cs = Math.sqrt(0.5 * (1 + Math.abs(sigma) / tau));
      sn = -(p / (tau * cs)) * sign(1, sigma);
      const aa = a * cs + b * sn;
      const bb = -a * sn + b * cs;
      const cc = c * cs + d * sn;
      const dd = -c * sn + d * cs;
      a = aa * cs + cc * sn;
      b = bb * cs + dd * sn;
      c = -aa * sn + cc * cs;
      d = -bb * sn + dd * cs;
      temp = 0.5 * (a + d);
      a = temp;
      d = temp;
      if (c !== 0) {
        if (b !== 0) {
          if (sign(1, b) === sign(1, c)) {
            // real eigenvalues after all: reduce to upper triangular form
            const sab = Math.sqrt(Math.abs(b));
            const sac = Math.sqrt(Math.abs(c));
            p = sign(sab * sac, c);
            const tau2 = 1 / Math.sqrt(Math.abs(b + c));
            a = temp + p;
            d = temp - p;
            b = b - c;
            c = 0;
            const cs1 = sab * tau2;
            const sn1 = sac * tau2;
            const t2 = cs * cs1 - sn * sn1;
            sn = cs * sn1 + sn * cs1;
            cs = t2;
          }
        } else {
          b = -c;
          c = 0;
          const t2 = cs;
          cs = -sn;
          sn = t2;
        }
      }
    }
  }
  return { a, b, c, d, cs, sn };
}

/**
 * Standardise the 2×2 diagonal block of T at rows/columns (j, j+1) in place, updating the rest of
 * T (rows and columns) and Z. Returns true when the block stays a complex pair.
 */
function standardiseBlock(T: Float64Array, Z: Float64Array, n: number, j: number): boolean {
  const k = j + 1;
  const r = standardise2x2(T[j * n + j], T[j * n + k], T[k * n + j], T[k * n + k]);
  T[j * n + j] = r.a;
  T[j * n + k] = r.b;
  T[k * n + j] = r.c;
  T[k * n + k] = r.d;
  if (r.sn !== 0 || r.cs !== 1) {
    rotRows(T, n, j, k, r.cs, r.sn, k + 1, n);
    rotCols(T, n, j, k, r.cs, r.sn, 0, j);
    rotCols(Z, n, j, k, r.cs, r.sn, 0, n);
  }
  return r.c !== 0;
}

/** Householder reduction to upper Hessenberg form in place: A ← Qᵀ A Q, Z ← Z Q. */
export function hessenbergReduce(A: Float64Array, n: number, Z: Float64Array): void {
  const v = new Float64Array(n);
  for (let k = 0; k < n - 2; k++) {
    let alpha = 0;
    for (let i = k + 1; i < n; i++) alpha = Math.max(alpha, Math.abs(A[i * n + k]));
    if (alpha === 0) continue;
    let norm2 = 0;
    for (let i = k + 1; i < n; i++) {
      v[i] = A[i * n + k] / alpha;
      norm2 += v[i] * v[i];
    }
    const x0 = v[k + 1];
    const nrm = Math.sqrt(norm2);
    const s = x0 >= 0 ? -nrm : nrm; // new subdiagonal (scaled)
    v[k + 1] = x0 - s;
    let vv = 0;
    for (let i = k + 1; i < n; i++) vv += v[i] * v[i];
    if (vv === 0) continue;
    const beta = 2 / vv;
    // A ← (I − β v vᵀ) A  on rows k+1..n−1, columns k..n−1
    for (let j = k; j < n; j++) {
      let t = 0;
      for (let i = k + 1; i < n; i++) t += v[i] * A[i * n + j];
      t *= beta;
      for (let i = k + 1; i < n; i++) A[i * n + j] -= t * v[i];
    }
    // A ← A (I − β v vᵀ)  on all rows, columns k+1..n−1
    for (let i = 0; i < n; i++) {
      let t = 0;
      for (let j = k + 1; j < n; j++) t += A[i * n + j] * v[j];
      t *= beta;
      for (let j = k + 1; j < n; j++) A[i * n + j] -= t * v[j];
    }
    for (let i = 0; i < n; i++) {
      let t = 0;
      for (let j = k + 1; j < n; j++) t += Z[i * n + j] * v[j];
      t *= beta;
      for (let j = k + 1; j < n; j++) Z[i * n + j] -= t * v[j];
    }
    A[(k + 1) * n + k] = s * alpha;
    for (let i = k + 2; i < n; i++) A[i * n + k] = 0;
  }
}

/**
 * Real Schur decomposition A = Z T Zᵀ of a dense n×n matrix (row-major; not modified).
 * 2×2 blocks are standardised (complex pairs only; real pairs are split).
 */
export function realSchur(A: Float64Array | ArrayLike<number>, n: number): RealSchurResult {
  const T = Float64Array.from(A as ArrayLike<number>);
  const Z = identity(n);
  if (n === 0) return { n, T, Z, converged: true };
  hessenbergReduce(T, n, Z);
  const converged = francisQR(T, Z, n);
  // clean everything below the first subdiagonal
  for (let i = 2; i < n; i++) for (let j = 0; j < i - 1; j++) T[i * n + j] = 0;
  return { n, T, Z, converged };
}

/**
 * The two shifts of a Francis step: the eigenvalues of the 2×2 matrix [[h11, h12], [h21, h22]],
 * computed after scaling and without cancellation (the discriminant as (h11 − tr)(h22 − tr) −
 * h12·h21). Two real eigenvalues give one double shift, the one nearer h22 (as LAPACK's DLAHQR):
 * for a cluster of nearly equal eigenvalues the product form s1·s2 of the shifts would lose
 * every digit that separates them, and the iteration would stagnate.
 */
function francisShifts(h11: number, h12: number, h21: number, h22: number): { r1: number; r2: number; im: number } {
  const s = Math.abs(h11) + Math.abs(h12) + Math.abs(h21) + Math.abs(h22);
  if (s === 0) return { r1: 0, r2: 0, im: 0 };
  h11 /= s;
  h12 /= s;
  h21 /= s;
  h22 /= s;
  const tr = 0.5 * (h11 + h22);
  const det = (h11 - tr) * (h22 - tr) - h12 * h21;
  const rtdisc = Math.sqrt(Math.abs(det));
  if (det >= 0) return { r1: tr * s, r2: tr * s, im: rtdisc * s };
  const a = tr + rtdisc;
  const b = tr - rtdisc;
  const r = (Math.abs(a - h22) <= Math.abs(b - h22) ? a : b) * s;
  return { r1: r, r2: r, im: 0 };
}

/**
 * Francis double-shift QR on an upper Hessenberg H (in place), accumulating into Z. Shifts from
 * the trailing 2×2 block (francisShifts), exceptional shifts at the 10th and 20th iteration on a
 * window; the first column of (H − s1)(H − s2) is formed from differences h − s (no
 * cancellation), as in LAPACK's DLAHQR. At most 30·max(10, n) iterations per deflation.
 */
function francisQR(H: Float64Array, Z: Float64Array, n: number): boolean {
  let norm = 0;
  for (let i = 0; i < n * n; i++) norm += Math.abs(H[i]);
  if (norm === 0) return true;
  let hi = n - 1;
  let iter = 0;
  const maxIter = 30 * Math.max(10, n);
  const v = [0, 0, 0];
  while (hi >= 0) {
    // look for a negligible subdiagonal entry
    let l = hi;
    while (l > 0) {
      let s = Math.abs(H[(l - 1) * n + l - 1]) + Math.abs(H[l * n + l]);
      if (s === 0) s = norm;
      if (Math.abs(H[l * n + l - 1]) < EPS * s) {
        H[l * n + l - 1] = 0;
        break;
      }
      l--;
    }
    if (l === hi) {
      hi -= 1;
      iter = 0;
      continue;
    }
    if (l === hi - 1) {
      standardiseBlock(H, Z, n, hi - 1);
      hi -= 2;
      iter = 0;
      continue;
    }
    iter++;
    if (iter > maxIter) return false;
    // shifts: eigenvalues of the trailing 2×2 block, or an exceptional shift
    let sh: { r1: number; r2: number; im: number };
    if (iter % 20 === 10) {
      const s = Math.abs(H[(l + 1) * n + l]) + Math.abs(H[(l + 2) * n + l + 1]);
      const h11 = 0.75 * s + H[l * n + l];
      sh = francisShifts(h11, -0.4375 * s, s, h11);
    } else if (iter % 20 === 0) {
      const s = Math.abs(H[hi * n + hi - 1]) + Math.abs(H[(hi - 1) * n + hi - 2]);
      const h11 = 0.75 * s + H[hi * n + hi];
      sh = francisShifts(h11, -0.4375 * s, s, h11);
    } else {
      sh = francisShifts(H[(hi - 1) * n + hi - 1], H[(hi - 1) * n + hi], H[hi * n + hi - 1], H[hi * n + hi]);
    }
    // first column of (H − s1 I)(H − s2 I), scaled, from the window's top rows
    const h00 = H[l * n + l];
    const h01 = H[l * n + l + 1];
    const h10 = H[(l + 1) * n + l];
    const h11v = H[(l + 1) * n + l + 1];
    const h21 = H[(l + 2) * n + l + 1];
    const sc = Math.abs(h00 - sh.r2) + Math.abs(sh.im) + Math.abs(h10);
    const h10s = sc > 0 ? h10 / sc : 0;
    let x = h10s * h01 + (h00 - sh.r1) * ((h00 - sh.r2) / sc) + sh.im * (sh.im / sc);
    let y = h10s * (h00 + h11v - sh.r1 - sh.r2);
    let z = h10s * h21;
    for (let k = l; k <= hi - 2; k++) {
      // Householder reflector P = I − β v vᵀ with P·[x, y, z]ᵀ = [*, 0, 0]ᵀ
      const nrm = Math.hypot(x, y, z);
      if (nrm !== 0 && (y !== 0 || z !== 0)) {
        const alpha = x >= 0 ? -nrm : nrm;
        v[0] = x - alpha;
        v[1] = y;
        v[2] = z;
        const beta = 2 / (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]);
        const r = Math.max(l, k - 1);
        for (let j = r; j < n; j++) {
          const t = beta * (v[0] * H[k * n + j] + v[1] * H[(k + 1) * n + j] + v[2] * H[(k + 2) * n + j]);
          H[k * n + j] -= t * v[0];
          H[(k + 1) * n + j] -= t * v[1];
          H[(k + 2) * n + j] -= t * v[2];
        }
        const rEnd = Math.min(k + 3, hi);
        for (let i = 0; i <= rEnd; i++) {
          const t = beta * (v[0] * H[i * n + k] + v[1] * H[i * n + k + 1] + v[2] * H[i * n + k + 2]);
          H[i * n + k] -= t * v[0];
          H[i * n + k + 1] -= t * v[1];
          H[i * n + k + 2] -= t * v[2];
        }
        for (let i = 0; i < n; i++) {
          const t = beta * (v[0] * Z[i * n + k] + v[1] * Z[i * n + k + 1] + v[2] * Z[i * n + k + 2]);
          Z[i * n + k] -= t * v[0];
          Z[i * n + k + 1] -= t * v[1];
          Z[i * n + k + 2] -= t * v[2];
        }
        if (k > l) {
          H[(k + 1) * n + k - 1] = 0;
          H[(k + 2) * n + k - 1] = 0;
        }
      }
      x = H[(k + 1) * n + k];
      y = H[(k + 2) * n + k];
      if (k < hi - 2) z = H[(k + 3) * n + k];
    }
    // final 2-vector rotation on rows hi−1, hi
    const nrm = Math.hypot(x, y);
    if (nrm !== 0 && y !== 0) {
      const c = x / nrm;
      const s = y / nrm;
      rotRows(H, n, hi - 1, hi, c, s, hi - 2, n);
      rotCols(H, n, hi - 1, hi, c, s, 0, hi + 1);
      rotCols(Z, n, hi - 1, hi, c, s, 0, n);
      H[hi * n + hi - 2] = 0;
    }
  }
  return true;
}

/** Diagonal blocks of a quasi-triangular T: start index and size (1 or 2) of each. */
export function schurBlocks(T: Float64Array, n: number): { start: number; size: 1 | 2 }[] {
  const blocks: { start: number; size: 1 | 2 }[] = [];
  let i = 0;
  while (i < n) {
    if (i + 1 < n && T[(i + 1) * n + i] !== 0) {
      blocks.push({ start: i, size: 2 });
      i += 2;
    } else {
      blocks.push({ start: i, size: 1 });
      i += 1;
    }
  }
  return blocks;
}

/** Eigenvalue of the block at `start` (for a 2×2 block, the one with positive imaginary part). */
export function blockEigenvalue(T: Float64Array, n: number, start: number, size: 1 | 2): Complex {
  if (size === 1) return { re: T[start * n + start], im: 0 };
  const a = T[start * n + start];
  const d = T[(start + 1) * n + start + 1];
  const b = T[start * n + start + 1];
  const c = T[(start + 1) * n + start];
  // standardised blocks have a = d and b·c < 0; be tolerant of tiny departures
  const p = 0.5 * (a - d);
  const disc = p * p + b * c;
  if (disc >= 0) return { re: 0.5 * (a + d) + Math.sqrt(disc), im: 0 };
  return { re: 0.5 * (a + d), im: Math.sqrt(-disc) };
}

/**
 * Split the 2×2 blocks whose eigenvalues are real to working accuracy — a pair a ± i·s with
 * s ≤ relTol·|a + i·s| is two (nearly) equal real eigenvalues that the standardisation left as
 * a pair — into two 1×1 blocks, by dropping the smaller off-diagonal entry of the standardised
 * block [[a, b], [c, a]] (a backward error of at most s, since min(|b|, |c|)² ≤ |b·c| = s²).
 * Returns the number of blocks split.
 */
export function splitNearlyReal(T: Float64Array, Z: Float64Array, n: number, relTol: number): number {
  let split = 0;
  for (const bl of schurBlocks(T, n)) {
    if (bl.size !== 2) continue;
    const j = bl.start;
    const k = j + 1;
    const ev = blockEigenvalue(T, n, j, 2);
    if (!(ev.im <= relTol * Math.hypot(ev.re, ev.im))) continue;
    if (Math.abs(T[k * n + j]) > Math.abs(T[j * n + k])) {
      // rotate by 90° first: [[a, b], [c, d]] → [[d, −c], [−b, a]]
      const a = T[j * n + j];
      const b = T[j * n + k];
      const c = T[k * n + j];
      const d = T[k * n + k];
      T[j * n + j] = d;
      T[j * n + k] = -c;
      T[k * n + j] = -b;
      T[k * n + k] = a;
      rotRows(T, n, j, k, 0, 1, k + 1, n);
      rotCols(T, n, j, k, 0, 1, 0, j);
      rotCols(Z, n, j, k, 0, 1, 0, n);
    }
    T[k * n + j] = 0;
    split++;
  }
  return split;
}

/** All eigenvalues of a quasi-triangular T in diagonal order (pairs as +im, −im). */
export function schurEigenvalues(T: Float64Array, n: number): Complex[] {
  const out: Complex[] = [];
  for (const b of schurBlocks(T, n)) {
    const ev = blockEigenvalue(T, n, b.start, b.size);
    out.push(ev);
    if (b.size === 2) out.push({ re: ev.re, im: -ev.im });
  }
  return out;
}

/** Solve the tiny Sylvester equation A X − X B = C (A p×p, B q×q, row-major; p, q ≤ 2). */
function solveSylvester(A: number[], p: number, B: number[], q: number, C: number[]): number[] | null {
  // unknown vec(X) in row-major order: x[i*q + j] = X(i, j)
  const m = p * q;
  const K = new Array<number>(m * m).fill(0);
  const rhs = C.slice();
  for (let i = 0; i < p; i++) {
    for (let j = 0; j < q; j++) {
      const row = i * q + j;
      // (A X)(i, j) = Σ_k A(i, k) X(k, j)
      for (let k = 0; k < p; k++) K[row * m + k * q + j] += A[i * p + k];
      // (X B)(i, j) = Σ_k X(i, k) B(k, j)
      for (let k = 0; k < q; k++) K[row * m + i * q + k] -= B[k * q + j];
    }
  }
  // Gaussian elimination with complete pivoting
  let kmax = 0;
  for (let i = 0; i < m * m; i++) kmax = Math.max(kmax, Math.abs(K[i]));
  const smin = Math.max(EPS * kmax, 1e-300);
  const colPerm = Array.from({ length: m }, (_, i) => i);
  for (let k = 0; k < m; k++) {
    let best = -1;
    let bi = k;
    let bj = k;
    for (let i = k; i < m; i++) {
      for (let j = k; j < m; j++) {
        const a = Math.abs(K[i * m + j]);
        if (a > best) {
          best = a;
          bi = i;
          bj = j;
        }
      }
    }
    if (bi !== k) {
      for (let j = 0; j < m; j++) {
        const t = K[k * m + j];
        K[k * m + j] = K[bi * m + j];
        K[bi * m + j] = t;
      }
      const t = rhs[k];
      rhs[k] = rhs[bi];
      rhs[bi] = t;
    }
    if (bj !== k) {
      for (let i = 0; i < m; i++) {
        const t = K[i * m + k];
        K[i * m + k] = K[i * m + bj];
        K[i * m + bj] = t;
      }
      const t = colPerm[k];
      colPerm[k] = colPerm[bj];
      colPerm[bj] = t;
    }
    if (Math.abs(K[k * m + k]) < smin) return null;
    for (let i = k + 1; i < m; i++) {
      const f = K[i * m + k] / K[k * m + k];
      if (f === 0) continue;
      for (let j = k; j < m; j++) K[i * m + j] -= f * K[k * m + j];
      rhs[i] -= f * rhs[k];
    }
  }
  const y = new Array<number>(m).fill(0);
  for (let i = m - 1; i >= 0; i--) {
    let s = rhs[i];
    for (let j = i + 1; j < m; j++) s -= K[i * m + j] * y[j];
    y[i] = s / K[i * m + i];
  }
  const x = new Array<number>(m).fill(0);
  for (let i = 0; i < m; i++) x[colPerm[i]] = y[i];
  for (const v of x) if (!Number.isFinite(v)) return null;
  return x;
}

/**
 * Swap the adjacent diagonal blocks of T starting at j (sizes p then q) by the direct method of
 * Bai & Demmel (1993), updating T and Z. Returns false (T, Z unchanged) when the swap would be
 * unstable (eigenvalues too close).
 */
export function swapBlocks(T: Float64Array, Z: Float64Array, n: number, j: number, p: number, q: number): boolean {
  const s = p + q;
  const D: number[] = [];
  let dnorm = 0;
  for (let i = 0; i < s; i++) {
    for (let k = 0; k < s; k++) {
      const v = T[(j + i) * n + j + k];
      D.push(v);
      dnorm = Math.max(dnorm, Math.abs(v));
    }
  }
  const A: number[] = [];
  for (let i = 0; i < p; i++) for (let k = 0; k < p; k++) A.push(D[i * s + k]);
  const B: number[] = [];
  for (let i = 0; i < q; i++) for (let k = 0; k < q; k++) B.push(D[(p + i) * s + p + k]);
  const C: number[] = [];
  for (let i = 0; i < p; i++) for (let k = 0; k < q; k++) C.push(D[i * s + p + k]);
  const X = solveSylvester(A, p, B, q, C);
  if (!X) return false;
  // W = [−X; I_q] (s×q); its columns span the invariant subspace of B's eigenvalues
  const W: number[] = new Array<number>(s * q).fill(0);
  for (let i = 0; i < p; i++) for (let k = 0; k < q; k++) W[i * q + k] = -X[i * q + k];
  for (let k = 0; k < q; k++) W[(p + k) * q + k] = 1;
  // Householder QR of W, accumulating Q (s×s)
  const Q: number[] = new Array<number>(s * s).fill(0);
  for (let i = 0; i < s; i++) Q[i * s + i] = 1;
  for (let k = 0; k < q; k++) {
    let nrm = 0;
    for (let i = k; i < s; i++) nrm += W[i * q + k] * W[i * q + k];
    nrm = Math.sqrt(nrm);
    if (nrm === 0) continue;
    const alpha = W[k * q + k] >= 0 ? -nrm : nrm;
    const v = new Array<number>(s).fill(0);
    for (let i = k; i < s; i++) v[i] = W[i * q + k];
    v[k] -= alpha;
    let vv = 0;
    for (let i = k; i < s; i++) vv += v[i] * v[i];
    if (vv === 0) continue;
    const beta = 2 / vv;
    for (let c = k; c < q; c++) {
      let t = 0;
      for (let i = k; i < s; i++) t += v[i] * W[i * q + c];
      t *= beta;
      for (let i = k; i < s; i++) W[i * q + c] -= t * v[i];
    }
    // Q ← Q (I − β v vᵀ)
    for (let r = 0; r < s; r++) {
      let t = 0;
      for (let i = k; i < s; i++) t += Q[r * s + i] * v[i];
      t *= beta;
      for (let i = k; i < s; i++) Q[r * s + i] -= t * v[i];
    }
  }
  // D' = Qᵀ D Q, stability test on its (2,1) block
  const DQ: number[] = new Array<number>(s * s).fill(0);
  for (let r = 0; r < s; r++) for (let c = 0; c < s; c++) {
    let t = 0;
    for (let i = 0; i < s; i++) t += D[r * s + i] * Q[i * s + c];
    DQ[r * s + c] = t;
  }
  const Dn: number[] = new Array<number>(s * s).fill(0);
  for (let r = 0; r < s; r++) for (let c = 0; c < s; c++) {
    let t = 0;
    for (let i = 0; i < s; i++) t += Q[i * s + r] * DQ[i * s + c];
    Dn[r * s + c] = t;
  }
  const thresh = Math.max(10 * EPS * dnorm, 1e-300);
  for (let r = q; r < s; r++) for (let c = 0; c < q; c++) if (Math.abs(Dn[r * s + c]) > thresh) return false;
  // apply Q to T (rows j..j+s−1 from column j on, columns j..j+s−1 for rows 0..j+s−1) and Z
  const tmp = new Float64Array(s);
  for (let c = j + s; c < n; c++) {
    for (let r = 0; r < s; r++) {
      let t = 0;
      for (let i = 0; i < s; i++) t += Q[i * s + r] * T[(j + i) * n + c];
      tmp[r] = t;
    }
    for (let r = 0; r < s; r++) T[(j + r) * n + c] = tmp[r];
  }
  for (let r = 0; r < j; r++) {
    for (let c = 0; c < s; c++) {
      let t = 0;
      for (let i = 0; i < s; i++) t += T[r * n + j + i] * Q[i * s + c];
      tmp[c] = t;
    }
    for (let c = 0; c < s; c++) T[r * n + j + c] = tmp[c];
  }
  for (let r = 0; r < n; r++) {
    for (let c = 0; c < s; c++) {
      let t = 0;
      for (let i = 0; i < s; i++) t += Z[r * n + j + i] * Q[i * s + c];
      tmp[c] = t;
    }
    for (let c = 0; c < s; c++) Z[r * n + j + c] = tmp[c];
  }
  for (let r = 0; r < s; r++) for (let c = 0; c < s; c++) T[(j + r) * n + j + c] = r >= q && c < q ? 0 : Dn[r * s + c];
  // new blocks: size q at j, size p at j+q; restandardise 2×2 ones
  if (q === 2) standardiseBlock(T, Z, n, j);
  if (p === 2) standardiseBlock(T, Z, n, j + q);
  return true;
}

/**
 * Reorder the real Schur form so that blocks appear in decreasing `priority` of their
 * eigenvalue (for a pair, the member with positive imaginary part is passed). Pairs stay together.
 * Selection sort by adjacent swaps; a refused swap leaves that block where it is.
 * Returns false when some swap was refused.
 */
export function orderSchur(T: Float64Array, Z: Float64Array, n: number, priority: (ev: Complex) => number, count = n): boolean {
  let ok = true;
  let pos = 0; // row index where the next best block goes
  let restarts = 0;
  const keyOf = (b: { start: number; size: 1 | 2 }) => {
    const k = priority(blockEigenvalue(T, n, b.start, b.size));
    return Number.isNaN(k) ? -Infinity : k;
  };
  const from = (p: number) => schurBlocks(T, n).filter((b) => b.start >= p);
  while (pos < n && pos < count) {
    let blocks = from(pos);
    if (blocks.length === 0) break;
    let best = 0;
    let bestKey = keyOf(blocks[0]);
    for (let i = 1; i < blocks.length; i++) {
      const k = keyOf(blocks[i]);
      if (k > bestKey) {
        bestKey = k;
        best = i;
      }
    }
    // bubble the best block up to position pos by adjacent swaps
    let idx = best;
    let changed = false;
    while (idx > 0) {
      const above = blocks[idx - 1];
      const cur = blocks[idx];
      if (!swapBlocks(T, Z, n, above.start, above.size, cur.size)) {
        ok = false;
        break;
      }
      blocks = from(pos);
      idx = blocks.findIndex((b) => b.start === above.start);
      if (idx < 0 || blocks[idx].size !== cur.size) {
        changed = true; // a nearly real pair split on restandardisation: rescan
        break;
      }
    }
    if (changed && restarts++ < 4 * n) continue;
    const first = from(pos)[0];
    pos = first.start + first.size;
  }
  return ok;
}

/**
 * Eigenvector of the quasi-triangular T for the block at `start` (for a 2×2 block, the
 * eigenvalue with positive imaginary part), by back substitution. Returns real and imaginary
 * parts (length n, zero below the block), normalised to unit 2-norm.
 *
 * A block above with the same eigenvalue to within `cluster`·|λ| (another copy of a multiple
 * eigenvalue) is not divided by its tiny pivot: a 1×1 copy gets a zero component, a 2×2 copy
 * (B − λI of rank one) the rank-one pseudo-inverse solution. The vector is then the copy's own
 * eigenvector, independent of the copies above it, rather than one dominated by the first copy
 * (what the tiny pivot would make of it). For a semisimple cluster the residual this leaves is
 * the coupling inside the cluster, as small as its spread.
 */
export function schurEigenvector(T: Float64Array, n: number, start: number, size: 1 | 2, cluster = 0): { re: Float64Array; im: Float64Array; value: Complex } {
  const xr = new Float64Array(n);
  const xi = new Float64Array(n);
  const lam = blockEigenvalue(T, n, start, size);
  let tnorm = 0;
  for (let i = 0; i < n; i++) for (let j = Math.max(0, i - 1); j < n; j++) tnorm = Math.max(tnorm, Math.abs(T[i * n + j]));
  const smin = Math.max(EPS * tnorm, 1e-300);
  if (size === 1) {
    xr[start] = 1;
  } else {
    // [[a, b], [c, a]] with eigenvalue a + i·s: eigenvector (b, i·s) (scaled)
    const b = T[start * n + start + 1];
    const s = lam.im;
    xr[start] = b;
    xi[start + 1] = s;
    if (b === 0 && s === 0) xr[start] = 1;
  }
  // back substitution upward through the blocks above
  const blocks = schurBlocks(T, n).filter((bl) => bl.start < start);
  for (let bi = blocks.length - 1; bi >= 0; bi--) {
    const bl = blocks[bi];
    const r0 = bl.start;
    const end = start + size;
    // rhs = −Σ_{c > block} T(r, c) x(c)
    const rr = [0, 0];
    const ri = [0, 0];
    for (let k = 0; k < bl.size; k++) {
      const r = r0 + k;
      let sr = 0;
      let si = 0;
      for (let c = r0 + bl.size; c < end; c++) {
        sr += T[r * n + c] * xr[c];
        si += T[r * n + c] * xi[c];
      }
      rr[k] = -sr;
      ri[k] = -si;
    }
    const ev = blockEigenvalue(T, n, r0, bl.size);
    const copy = cluster > 0 && Math.hypot(ev.re - lam.re, ev.im - lam.im) <= cluster * Math.hypot(lam.re, lam.im);
    if (copy && bl.size === 1) continue;
    if (copy) {
      // another copy of a complex pair: B − λI has rank one, and for a semisimple cluster the
      // rhs lies in its range; take the rank-one pseudo-inverse solution y = (B − λI)ᴴ rhs / ‖B − λI‖²_F
      const a11r = T[r0 * n + r0] - lam.re;
      const a12 = T[r0 * n + r0 + 1];
      const a21 = T[(r0 + 1) * n + r0];
      const a22r = T[(r0 + 1) * n + r0 + 1] - lam.re;
      const ai = -lam.im;
      const f = a11r * a11r + a22r * a22r + 2 * ai * ai + a12 * a12 + a21 * a21;
      // conj(a11)·r1 + a21·r2 and a12·r1 + conj(a22)·r2
      xr[r0] = (a11r * rr[0] + ai * ri[0] + a21 * rr[1]) / f;
      xi[r0] = (a11r * ri[0] - ai * rr[0] + a21 * ri[1]) / f;
      xr[r0 + 1] = (a12 * rr[0] + a22r * rr[1] + ai * ri[1]) / f;
      xi[r0 + 1] = (a12 * ri[0] + a22r * ri[1] - ai * rr[1]) / f;
      continue;
    }
    if (bl.size === 1) {
      let dr = T[r0 * n + r0] - lam.re;
      let di = -lam.im;
      if (Math.hypot(dr, di) < smin) {
        dr = smin;
        di = 0;
      }
      const den = dr * dr + di * di;
      xr[r0] = (rr[0] * dr + ri[0] * di) / den;
      xi[r0] = (ri[0] * dr - rr[0] * di) / den;
    } else {
      // complex 2×2 solve: (B − λI) y = rhs
      const a11r = T[r0 * n + r0] - lam.re;
      const a11i = -lam.im;
      const a12 = T[r0 * n + r0 + 1];
      const a21 = T[(r0 + 1) * n + r0];
      const a22r = T[(r0 + 1) * n + r0 + 1] - lam.re;
      const a22i = -lam.im;
      // det = a11·a22 − a12·a21
      let detr = a11r * a22r - a11i * a22i - a12 * a21;
      let deti = a11r * a22i + a11i * a22r;
      if (Math.hypot(detr, deti) < smin * smin) {
        detr = smin * smin;
        deti = 0;
      }
      // y1 = (a22·r1 − a12·r2)/det, y2 = (a11·r2 − a21·r1)/det
      const n1r = a22r * rr[0] - a22i * ri[0] - a12 * rr[1];
      const n1i = a22r * ri[0] + a22i * rr[0] - a12 * ri[1];
      const n2r = a11r * rr[1] - a11i * ri[1] - a21 * rr[0];
      const n2i = a11r * ri[1] + a11i * rr[1] - a21 * ri[0];
      const den = detr * detr + deti * deti;
      xr[r0] = (n1r * detr + n1i * deti) / den;
      xi[r0] = (n1i * detr - n1r * deti) / den;
      xr[r0 + 1] = (n2r * detr + n2i * deti) / den;
      xi[r0 + 1] = (n2i * detr - n2r * deti) / den;
    }
    // guard against growth
    let mx = 0;
    for (let i = r0; i < end; i++) mx = Math.max(mx, Math.abs(xr[i]), Math.abs(xi[i]));
    if (mx > 1e150) {
      for (let i = r0; i < end; i++) {
        xr[i] /= mx;
        xi[i] /= mx;
      }
    }
  }
  let nrm = 0;
  for (let i = 0; i < n; i++) nrm += xr[i] * xr[i] + xi[i] * xi[i];
  nrm = Math.sqrt(nrm);
  if (nrm > 0) {
    for (let i = 0; i < n; i++) {
      xr[i] /= nrm;
      xi[i] /= nrm;
    }
  }
  return { re: xr, im: xi, value: lam };
}
