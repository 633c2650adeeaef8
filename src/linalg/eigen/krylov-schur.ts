/**
 * The Krylov–Schur decomposition (Stewart 2001) in real arithmetic:
 *
 *   T V = V S + Σ_r F_r B_r     (V, F orthonormal together)
 *
 * with the ordered real Schur form of the small projected matrix S computed and reordered in
 * schur.ts (Francis QR; Bai & Demmel 1993 swapping). The residual block may hold more than one
 * vector (a block Krylov decomposition), which lets us start from several vectors (double
 * eigenvalues, common on symmetric grids, are invisible to a single-vector Krylov space) and
 * inject vectors (locking, verification) without breaking the Krylov relation.
 *
 * Operations: `expand` (one Arnoldi step on the oldest residual vector), `schur` (ordered Schur
 * form of S by a priority, with a Ritz residual estimate ‖F B y‖ per block), `truncate` (keep the
 * leading Schur vectors: the restart), `inject` (a new residual vector with zero coupling),
 * `lock` (start from a nearly invariant basis), `ritzVector`.
 *
 * Singular M: every returned Ritz vector can be purified once more implicitly through the Krylov
 * relation, x ← T x / θ = x + F (B y)/θ (Ericsson & Ruhe 1980; Meerbergen & Spence 1997), at no
 * solve, which removes the components along the infinite eigenvalues.
 */
import { blockEigenvalue, orderSchur, realSchur, schurBlocks, schurEigenvector, splitNearlyReal, type Complex } from '../schur.js';
import { axpy, dot, norm2, scaleInPlace } from '../vector.js';
import { axpys, dotsInto } from '../vector-blocks.js';
import type { ShiftOperator } from './transform.js';

/** Classical Gram–Schmidt with one full reorthogonalisation; returns the coefficients. */
export function orthogonalize(w: Float64Array, basis: Float64Array[]): Float64Array {
  const h = new Float64Array(basis.length);
  const c = new Float64Array(basis.length);
  const minus = new Float64Array(basis.length);
  for (let pass = 0; pass < 2; pass++) {
    dotsInto(c, basis, w);
    for (let i = 0; i < basis.length; i++) {
      minus[i] = -c[i];
      h[i] += c[i];
    }
    axpys(w, minus, basis);
  }
  return h;
}

/**
 * A pair whose imaginary part is below this fraction of its modulus is two equal real
 * eigenvalues (a double eigenvalue the Schur standardisation left as a pair): it is split, so
 * that no complex pair that is not there is reported. For Ritz values the threshold is at least
 * ten times the convergence tolerance, since a double eigenvalue seen through a Krylov space
 * converged to tol can split into a pair of about that size.
 */
export const REAL_PAIR = 1e-10;

export interface RitzBlock {
  start: number;
  size: 1 | 2;
  /** Ritz value (for a pair, the member with positive imaginary part). */
  theta: Complex;
  /** Krylov residual estimate ‖F B y‖ for the unit Ritz vector. */
  residual: number;
  /** Eigenvector of S (y = Z x), real and imaginary parts, length d. */
  yr: Float64Array;
  yi: Float64Array;
}

export interface SchurState {
  d: number;
  T: Float64Array;
  Z: Float64Array;
  blocks: RitzBlock[];
}

export class KrylovSchur {
  V: Float64Array[] = [];
  S: number[][] = [];
  F: Float64Array[] = [];
  B: number[][] = [];

  constructor(
    readonly n: number,
    private readonly random: () => number,
  ) {}

  get dim(): number {
    return this.V.length;
  }

  randomVector(): Float64Array {
    const v = new Float64Array(this.n);
    for (let i = 0; i < this.n; i++) v[i] = 2 * this.random() - 1;
    return v;
  }

  /** Add v (orthogonalised against V and F) as a residual vector with zero coupling. */
  inject(v: Float64Array): boolean {
    const w = Float64Array.from(v);
    const n0 = norm2(w);
    if (!(n0 > 0) || !Number.isFinite(n0)) return false;
    orthogonalize(w, this.V.concat(this.F));
    const n1 = norm2(w);
    if (!(n1 > 1e-8 * n0)) return false;
    scaleInPlace(w, 1 / n1);
    this.F.push(w);
    this.B.push(new Array<number>(this.dim).fill(0));
    return true;
  }

  /** Start from a (nearly) invariant orthonormal basis Q with T Q ≈ Q S (zero coupling). */
  lock(Q: Float64Array[], S: number[][]): void {
    this.V = Q.slice();
    this.S = S.map((r) => r.slice());
    this.F = [];
    this.B = [];
  }

  /** One Arnoldi step on the oldest residual vector. */
  expand(op: ShiftOperator): void {
    if (this.F.length === 0) this.inject(this.randomVector());
    const f = this.F.shift()!;
    const b = this.B.shift()!;
    const d = this.dim;
    for (let i = 0; i < d; i++) this.S[i].push(0);
    this.V.push(f);
    this.S.push([...b, 0]);
    const w = new Float64Array(this.n);
    op.apply(f, w);
    const w0 = norm2(w);
    const basis = this.V.concat(this.F);
    const h = orthogonalize(w, basis);
    for (let i = 0; i <= d; i++) this.S[i][d] = h[i];
    for (let r = 0; r < this.F.length; r++) this.B[r].push(h[d + 1 + r]);
    const wn = norm2(w);
    const row = new Array<number>(d + 1).fill(0);
    if (wn > 1e-12 * w0 && wn > 0) {
      scaleInPlace(w, 1 / wn);
      row[d] = wn;
      this.F.push(w);
      this.B.push(row);
    } else {
      // invariant subspace found: continue with a fresh direction (zero coupling)
      for (let attempt = 0; attempt < 5; attempt++) {
        const r = this.randomVector();
        orthogonalize(r, basis);
        const rn = norm2(r);
        if (rn > 1e-8) {
          scaleInPlace(r, 1 / rn);
          this.F.push(r);
          this.B.push(row);
          break;
        }
      }
    }
  }

  /** Ordered real Schur form of S with Ritz residual estimates; pairs with |Im θ| ≤ realPair·|θ| split as two reals. */
  schur(priority: (theta: Complex) => number, realPair = REAL_PAIR): SchurState {
    const d = this.dim;
    const A = new Float64Array(d * d);
    for (let i = 0; i < d; i++) for (let j = 0; j < d; j++) A[i * d + j] = this.S[i][j];
    const { T, Z, converged } = realSchur(A, d);
    splitNearlyReal(T, Z, d, realPair);
    orderSchur(T, Z, d, priority);
    const blocks: RitzBlock[] = [];
    for (const bl of schurBlocks(T, d)) {
      const ev = schurEigenvector(T, d, bl.start, bl.size, realPair);
      const yr = new Float64Array(d);
      const yi = new Float64Array(d);
      for (let i = 0; i < d; i++) {
        let sr = 0;
        let si = 0;
        for (let k = 0; k <= Math.min(d - 1, bl.start + bl.size - 1); k++) {
          sr += Z[i * d + k] * ev.re[k];
          si += Z[i * d + k] * ev.im[k];
        }
        yr[i] = sr;
        yi[i] = si;
      }
      let res2 = 0;
      for (const brow of this.B) {
        let cr = 0;
        let ci = 0;
        for (let i = 0; i < d; i++) {
          cr += brow[i] * yr[i];
          ci += brow[i] * yi[i];
        }
        res2 += cr * cr + ci * ci;
      }
      // an unreduced Schur form (the QR iteration gave up) proves nothing: no block has converged
      blocks.push({ start: bl.start, size: bl.size, theta: blockEigenvalue(T, d, bl.start, bl.size), residual: converged ? Math.sqrt(res2) : Infinity, yr, yi });
    }
    return { d, T, Z, blocks };
  }

  /** Keep the leading p Schur vectors. */
  truncate(st: SchurState, p: number): void {
    const d = st.d;
    const { T, Z } = st;
    const V: Float64Array[] = [];
    const column = new Float64Array(d);
    for (let j = 0; j < p; j++) {
      const v = new Float64Array(this.n);
      for (let i = 0; i < d; i++) column[i] = Z[i * d + j];
      axpys(v, column, this.V, d);
      V.push(v);
    }
    this.V = V;
    const S: number[][] = [];
    for (let i = 0; i < p; i++) {
      const row: number[] = [];
      for (let j = 0; j < p; j++) row.push(T[i * d + j]);
      S.push(row);
    }
    this.S = S;
    this.B = this.B.map((brow) => {
      const out = new Array<number>(p).fill(0);
      for (let j = 0; j < p; j++) {
        let s = 0;
        for (let i = 0; i < d; i++) s += brow[i] * Z[i * d + j];
        out[j] = s;
      }
      return out;
    });
  }

  /** Ritz vector V y, purified once through the Krylov relation (x + F (B y)/θ). */
  ritzVector(block: RitzBlock, purify: boolean): { re: Float64Array; im: Float64Array } {
    const re = new Float64Array(this.n);
    const im = new Float64Array(this.n);
    axpys(re, block.yr, this.V, this.dim);
    axpys(im, block.yi, this.V, this.dim);
    const th = block.theta;
    const t2 = th.re * th.re + th.im * th.im;
    if (purify && t2 > 0) {
      for (let r = 0; r < this.F.length; r++) {
        let cr = 0;
        let ci = 0;
        for (let i = 0; i < this.dim; i++) {
          cr += this.B[r][i] * block.yr[i];
          ci += this.B[r][i] * block.yi[i];
        }
        // (cr + i ci)/(θr + i θi)
        const qr = (cr * th.re + ci * th.im) / t2;
        const qi = (ci * th.re - cr * th.im) / t2;
        axpy(re, qr, this.F[r]);
        axpy(im, qi, this.F[r]);
      }
    }
    return { re, im };
  }
}
