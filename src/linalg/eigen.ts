/**
 * Rightmost eigenvalues of the sparse pencil  J v = μ M v  (M diagonal, possibly singular).
 *
 * Used for the stability of every computed state: the sign convention of the Problem contract
 * makes a state stable when every eigenvalue μ has negative real part.
 *
 * ## API
 *
 *   rightmostEigenvalues(J, { count, mass?, warmStart?, factored?, tolerance?, ... }) → RightmostResult
 *   new EigenTracker(pattern, options).compute(values, { warmStart?, factored? }) → RightmostResult
 *   eigenvaluesDense(J, mass?) → Complex[]            (ml-matrix; reference and small-problem path)
 *   applyShiftInvert / cayleyImage / apolloniusDisc    (small helpers, exported for tests)
 *
 * An EigenTracker belongs to one Jacobian pattern (the LU's symbolic analysis is done once, each
 * call refactors numerically); it keeps the warm start between calls (`warmStart` get/set for
 * checkpoints, `reset()` for a cold start), counts its work in `totals` and frees the wasm
 * memory in `dispose()`. `count` + `guard` eigenvalues are computed (guard default
 * max(2, ⌈count/3⌉)): the extra ones seed the next warm start and widen the searched region.
 *
 * `RightmostResult.values` holds the `count` rightmost eigenvalues found, sorted by decreasing
 * real part (a conjugate pair is never split: count + 1 values come back when the pair straddles
 * the count-th place), each with its residual ‖J x − μ M x‖ (‖x‖ = 1) and the relative residual
 * ‖J x − μ M x‖ / ((‖J‖ + |μ|·‖M‖)‖x‖) (a normwise backward error). `solves` and
 * `factorisations` count the sparse work of the call; `searchedRegion` says which part of the
 * complex plane was actually searched (below); `warmStart` is a plain-array object (JSON-safe)
 * to pass to the next call along a branch.
 *
 * ## Method
 *
 * Krylov–Schur (Stewart 2001) in real arithmetic, with the ordered real Schur form of the small
 * projected matrix computed and reordered in schur.ts (Francis QR; Bai & Demmel 1993 swapping).
 * The residual block may hold more than one vector (a block Krylov decomposition), which lets us
 * start from several vectors (double eigenvalues, common on symmetric grids, are invisible to a
 * single-vector Krylov space) and inject vectors (locking, verification) without breaking the
 * Krylov relation  T V = V S + F B.
 *
 * The operator is always the shift-invert operator  T = (J − σM)⁻¹ M  for a real shift σ: one
 * sparse LU of J − σM per shift (KLU in wasm, refactored with kept pivots when healthy), one
 * solve per Krylov vector. Its eigenvalues are θ = 1/(μ − σ); infinite eigenvalues of a
 * singular M map to θ = 0.
 *
 * The Cayley transform  C = (J − σM)⁻¹(J − τM) = I + (σ − τ)T  (Garratt, Moore & Spence 1991)
 * has the same Krylov spaces as T, so we use it through T: it changes which Ritz values are kept
 * at a restart, not the solves. Its eigenvalues (μ − τ)/(μ − σ) lie outside the unit circle
 * exactly when Re μ > α = (σ + τ)/2, whatever the imaginary part: ordering Ritz values by
 * |1 + (σ − τ)θ| ranks every eigenvalue right of the line Re μ = α ahead of every eigenvalue left
 * of it, and far-away eigenvalues (the −4/h² end of a diffusion operator, infinite ones) sit near
 * the unit circle where they are never mistaken for wanted ones. Shift-invert ordering (by |θ|)
 * finds the eigenvalues nearest σ instead: a disc, which can miss a rightmost pair with a large
 * imaginary part (tested).
 *
 * Strategy per call (transform 'cayley', the default):
 *  1. Without a warm start, a shift-invert search about `shift` (default 0) finds the `count`
 *     eigenvalues nearest it; they fix the scale.
 *  2. From the known eigenvalues (previous point, or step 1) the line α goes between the
 *     count-th and the next real part, σ into the gap between known real parts nearest the
 *     middle of the wanted set (the unwanted spectrum then maps to a short θ-interval between
 *     wanted values at both ends, which a Krylov space separates in fewer steps: about 17
 *     instead of 22 solves per point on a 2D Bratu branch), τ = 2α − σ. Every Ritz value right
 *     of the line (|C| ≥ 1 + η, η a small margin) must converge before the search stops: a Ritz
 *     value there that has not converged is evidence of an eigenvalue in the region about to
 *     be claimed. If more of them show up than the basis can hold, the line moves right (τ
 *     changes; σ, the LU and the Krylov decomposition do not).
 *  3. Coverage: a search claims the Apollonius disc |μ − τ| ≥ (1 + η)|μ − σ| around σ when every
 *     Ritz value in it converged (otherwise only down to the last converged one); shift-invert
 *     claims the disc about σ through its last converged value. A box holding every eigenvalue
 *     comes from Bendixson's theorem (1902) after the scaling M^{-1/2} and a symmetrising
 *     positive diagonal similarity (|Im μ| ≤ ‖skew part‖, Re μ ≤ largest Gershgorin bound of the
 *     symmetric part) and from Gershgorin's discs of M⁻¹J by rows and columns (Re μ). When the
 *     discs do not cover that box down to the last returned real part, σ − α = β is enlarged
 *     (the claimed disc's right end grows like β²) and a new shift is factored, with every
 *     eigenpair found so far locked into the new Krylov decomposition and a fresh random vector
 *     exploring the rest. Up to `maxShifts` Cayley shifts; what stays uncovered is reported.
 *
 * Searched region reported: the discs, `certifiedAbove` (every eigenvalue with real part ≥ it —
 * and inside the box — is among those found), the box, `complete` (the returned list is
 * certified the rightmost: only with a positive diagonal mass, since with zero masses no box is
 * known to hold the finite eigenvalues) and a sentence saying all this in words. Krylov methods
 * can still miss an eigenvalue whose eigenvector is nearly absent from the search space; the
 * statement is the usual Krylov one and says so.
 *
 * Singular M (algebraic rows): infinite eigenvalues map to θ = 0 under T. The start vectors are
 * purified by applying T twice (Nour-Omid, Parlett, Ericsson & Jensen 1987; two applications
 * because constraint and phase-condition rows give index-2 infinite eigenvalues), and every
 * returned Ritz vector is purified once more implicitly through the Krylov relation,
 * x ← T x / θ = x + F (B y)/θ (Ericsson & Ruhe 1980; Meerbergen & Spence 1997), at no solve.
 *
 * Warm start: the orthonormal basis of the previous eigenvectors (a Schur basis of the wanted
 * invariant subspace) seeds the Krylov decomposition; with a multiple eigenvalue in it, as many
 * seed vectors as its multiplicity. After convergence, a previous direction missing from the
 * new subspace is injected and the search continued.
 *
 * Convergence: a Ritz pair (θ, y) is accepted when its Krylov residual ‖F B y‖ ≤ tol·|θ|; since
 * J x − μ M x = −(J − σM)(T x − θ x)/θ this bounds the backward error on the pencil by about
 * tol·(‖J‖ + |σ|‖M‖)/(‖J‖ + |μ|‖M‖). Residuals are recomputed on J and M and reported.
 * Non-convergence (restart limit) is reported with the values reached and their residuals.
 */
import { EigenvalueDecomposition, Matrix, inverse } from 'ml-matrix';
import { SparseLU, SparseLUError, type LUOptions } from './lu.js';
import { type CscMatrix, type CscPattern, embedPattern, entryIndex, matVec, nnz, patternUnion, transpose, validatePattern } from './sparse.js';
import { blockEigenvalue, orderSchur, realSchur, schurBlocks, schurEigenvector, type Complex } from './schur.js';
import { axpy, dot, norm2, scaleInPlace } from './vector.js';

export type { Complex } from './schur.js';

// ---------------------------------------------------------------------------------------------
// Public types

export interface EigenValue {
  re: number;
  im: number;
  /** ‖J x − μ M x‖₂ for the unit eigenvector x. */
  residual: number;
  /** residual / (‖J‖ + |μ|·max|M|): a normwise backward error. */
  relativeResidual: number;
  converged: boolean;
}

/** Plain-array warm start (JSON-safe) for the next call along a branch. */
export interface EigenWarmStart {
  /** Problem size the vectors belong to. */
  size: number;
  /** Orthonormal basis of the invariant subspace of the eigenvalues below (each length `size`). */
  vectors: number[][];
  /** The eigenvalues found at the previous point (count + guard of them), rightmost first. */
  values: { re: number; im: number }[];
  /** Last shift used. */
  shift: number;
}

export interface SearchDisc {
  transform: 'shift-invert' | 'cayley';
  /** Shift σ of the LU (J − σM). */
  shift: number;
  /** Cayley pole τ (null for shift-invert). */
  pole: number | null;
  /** The disc (centre on the real axis) inside which every eigenvalue was found. */
  center: number;
  radius: number;
}

export interface SearchedRegion {
  discs: SearchDisc[];
  /** Every eigenvalue with real part ≥ this (and inside the enclosure) is among those found; null: no such line. */
  certifiedAbove: number | null;
  /** Box holding every eigenvalue (Bendixson / Gershgorin); rigorous only for a positive diagonal mass. */
  enclosure: { realMax: number; imaginaryMax: number; rigorous: boolean } | null;
  /** Imaginary half-height the coverage was judged against. */
  imaginaryReach: number;
  /** True when the values returned are certified the rightmost (certifiedAbove ≤ last returned real part). */
  complete: boolean;
  /** Plain-words summary. */
  description: string;
}

export interface RightmostResult {
  values: EigenValue[];
  /** All returned values converged (and met the residual check). */
  converged: boolean;
  unconvergedReason?: string;
  searchedRegion: SearchedRegion;
  /** Linear solves (right-hand sides) and numeric factorisations in this call. */
  solves: number;
  factorisations: number;
  restarts: number;
  /** Shifts σ used, in order. */
  shifts: number[];
  warmStart: EigenWarmStart;
  /** 'krylov' normally; 'dense' for problems too small for a Krylov basis. */
  method: 'krylov' | 'dense';
}

export interface EigenOptions {
  /** How many rightmost eigenvalues are wanted (k). */
  count: number;
  /** Diagonal of M (undefined = identity); zeros mark algebraic unknowns. */
  mass?: Float64Array;
  /** Krylov convergence tolerance (relative, on the transformed operator); default 1e-8. */
  tolerance?: number;
  /** Maximum Krylov basis size; default max(20, 2·(count + guard) + 4). */
  basisSize?: number;
  /** Restarts allowed per search; default 60. */
  maxRestarts?: number;
  /** 'cayley' (default): rightmost with coverage checks and extra shifts; 'shift-invert': the eigenvalues nearest `shift` only. */
  transform?: 'cayley' | 'shift-invert';
  /** Shift-invert centre, and the first shift of a cold start; default 0. */
  shift?: number;
  /** Largest |Im μ| the coverage must reach (default: the Bendixson bound). */
  imaginaryReach?: number;
  /** Maximum number of Cayley shifts per call; default 3. */
  maxShifts?: number;
  /** Extra eigenvalues computed beyond `count` (they sharpen the searched region); default max(2, ⌈count/3⌉). */
  guard?: number;
  /** Seed of the pseudo-random start vectors (results are deterministic for a given seed). */
  seed?: number;
  /** Options for the sparse LU of J − σM. */
  lu?: LUOptions;
}

export interface ComputeExtras {
  /** Overrides the tracker's own warm start (null: cold start). */
  warmStart?: EigenWarmStart | null;
  /** An LU of J − shift·M already factored by the caller, used when it suits the plan. */
  factored?: { lu: SparseLU; shift: number };
}

export interface RightmostOptions extends EigenOptions, ComputeExtras {}

// ---------------------------------------------------------------------------------------------
// Small vector helpers: see vector.ts

/** Classical Gram–Schmidt with one full reorthogonalisation; returns the coefficients. */
function orthogonalize(w: Float64Array, basis: Float64Array[]): Float64Array {
  const h = new Float64Array(basis.length);
  const c = new Float64Array(basis.length);
  for (let pass = 0; pass < 2; pass++) {
    for (let i = 0; i < basis.length; i++) c[i] = dot(basis[i], w);
    for (let i = 0; i < basis.length; i++) {
      axpy(w, -c[i], basis[i]);
      h[i] += c[i];
    }
  }
  return h;
}

/** Deterministic uniform generator on [0, 1) (mulberry32). */
function makeRandom(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

function cabs(re: number, im: number): number {
  return Math.hypot(re, im);
}

/** μ = σ + 1/θ for a Ritz value θ of (J − σM)⁻¹M (θ = 0 gives an infinite μ). */
export function applyShiftInvert(theta: Complex, sigma: number): Complex {
  const d = theta.re * theta.re + theta.im * theta.im;
  if (d === 0) return { re: Infinity, im: 0 };
  return { re: sigma + theta.re / d, im: theta.im === 0 ? 0 : -theta.im / d };
}

/** Modulus of the Cayley image (μ − τ)/(μ − σ) of an eigenvalue μ. */
export function cayleyImage(mu: Complex, sigma: number, tau: number): number {
  return cabs(mu.re - tau, mu.im) / cabs(mu.re - sigma, mu.im);
}

/**
 * The closed Apollonius disc {μ : |μ − τ| ≥ ρ|μ − σ|} for ρ > 1 and real σ ≠ τ: the set of
 * eigenvalues whose Cayley image has modulus ≥ ρ. Centre on the real axis.
 */
export function apolloniusDisc(sigma: number, tau: number, rho: number): { center: number; radius: number } {
  const a = (rho * sigma + tau) / (1 + rho);
  const b = (rho * sigma - tau) / (rho - 1);
  const lo = Math.min(a, b);
  const hi = Math.max(a, b);
  return { center: 0.5 * (lo + hi), radius: 0.5 * (hi - lo) };
}

// ---------------------------------------------------------------------------------------------
// The shift-invert operator

interface ShiftOperator {
  readonly sigma: number;
  /** out = (J − σM)⁻¹ M x */
  apply(x: Float64Array, out: Float64Array): void;
}

// ---------------------------------------------------------------------------------------------
// Krylov–Schur decomposition  T V = V S + Σ_r F_r B_r  (V, F orthonormal together)

interface RitzBlock {
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

interface SchurState {
  d: number;
  T: Float64Array;
  Z: Float64Array;
  blocks: RitzBlock[];
}

class KrylovSchur {
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

  /** Ordered real Schur form of S with Ritz residual estimates. */
  schur(priority: (theta: Complex) => number): SchurState {
    const d = this.dim;
    const A = new Float64Array(d * d);
    for (let i = 0; i < d; i++) for (let j = 0; j < d; j++) A[i * d + j] = this.S[i][j];
    const { T, Z } = realSchur(A, d);
    orderSchur(T, Z, d, priority);
    const blocks: RitzBlock[] = [];
    for (const bl of schurBlocks(T, d)) {
      const ev = schurEigenvector(T, d, bl.start, bl.size);
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
      blocks.push({ start: bl.start, size: bl.size, theta: blockEigenvalue(T, d, bl.start, bl.size), residual: Math.sqrt(res2), yr, yi });
    }
    return { d, T, Z, blocks };
  }

  /** Keep the leading p Schur vectors. */
  truncate(st: SchurState, p: number): void {
    const d = st.d;
    const { T, Z } = st;
    const V: Float64Array[] = [];
    for (let j = 0; j < p; j++) {
      const v = new Float64Array(this.n);
      for (let i = 0; i < d; i++) axpy(v, Z[i * d + j], this.V[i]);
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
    for (let i = 0; i < this.dim; i++) {
      axpy(re, block.yr[i], this.V[i]);
      axpy(im, block.yi[i], this.V[i]);
    }
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

// ---------------------------------------------------------------------------------------------
// One search with a fixed shift and ordering

interface FoundValue {
  mu: Complex;
  /** Ritz vector (complex: re + i·im), not normalised. */
  xr: Float64Array;
  xi: Float64Array;
  estimate: number;
  converged: boolean;
}

interface SearchSpec {
  op: ShiftOperator;
  mode: 'nearest' | 'cayley';
  tau: number;
  /** Cayley: Ritz values with |C(μ)| ≥ 1 + eta form the primary wanted group. */
  eta: number;
  /** Values kept at a restart (at least). */
  wanted: number;
  /** Values (in priority order) that must converge before the search stops. */
  required: number;
  maxWanted: number;
  basisSize: number;
  tolerance: number;
  maxRestarts: number;
  /** Dimension the basis must reach before convergence is accepted. */
  minDim: number;
  purify: boolean;
}

interface SearchOutcome {
  converged: boolean;
  restarts: number;
  /** Wanted values (pairs as two entries), priority order. */
  values: FoundValue[];
  /** Claimed disc (null when nothing was converged in the claimable group). */
  disc: SearchDisc | null;
  /** Schur state and blocks of the wanted prefix, for injection checks. */
  state: SchurState;
  wantedBlocks: number;
}

function priorityFor(spec: { mode: 'nearest' | 'cayley'; sigma: number; tau: number; eta: number }): (theta: Complex) => number {
  if (spec.mode === 'nearest') return (th) => cabs(th.re, th.im);
  const w = spec.sigma - spec.tau;
  return (th) => {
    const c = cabs(1 + w * th.re, w * th.im);
    if (c >= 1 + spec.eta) return 2 + c;
    const a = cabs(th.re, th.im);
    return a / (1 + a);
  };
}

/**
 * For the Cayley ordering, the size of the primary group (Ritz values right of the line,
 * |1 + (σ − τ)θ| ≥ 1 + eta), capped at maxWanted; 0 for shift-invert.
 */
function primaryGroupSize(st: SchurState, spec: SearchSpec, sigma: number): number {
  if (spec.mode !== 'cayley') return 0;
  const w = sigma - spec.tau;
  let g = 0;
  for (const b of st.blocks) {
    const c = cabs(1 + w * b.theta.re, w * b.theta.im);
    if (c >= 1 + spec.eta) g += b.size;
  }
  return Math.min(g, spec.maxWanted);
}

function wantedBlockCount(st: SchurState, spec: SearchSpec, sigma: number): number {
  return blocksFor(st, Math.max(spec.wanted, primaryGroupSize(st, spec, sigma)));
}

/**
 * Leading blocks that must converge: the first `required` values in priority order and, for the
 * Cayley ordering, every Ritz value of the primary group (right of the line, |C| ≥ 1 + eta), up
 * to maxWanted — a Ritz value there that has not converged is evidence of an eigenvalue in the
 * region we are about to claim.
 */
function requiredBlockCount(st: SchurState, spec: SearchSpec, sigma: number): number {
  return blocksFor(st, Math.max(spec.required, primaryGroupSize(st, spec, sigma)));
}

/**
 * Cayley ordering with more Ritz values right of the line than the basis can hold (the line was
 * placed too far left, e.g. from a cold start that had not yet seen the rightmost values): move
 * the line right, between the `required`-th and the next converged real part. τ changes, σ and
 * the Krylov decomposition stay (they do not depend on τ).
 */
function adaptLine(st: SchurState, spec: SearchSpec, sigma: number): void {
  const w = sigma - spec.tau;
  let g = 0;
  for (const b of st.blocks) {
    const c = cabs(1 + w * b.theta.re, w * b.theta.im);
    if (c >= 1 + spec.eta) g += b.size;
  }
  if (g <= spec.maxWanted) return;
  const conv: number[] = [];
  for (const b of st.blocks) {
    if (!blockConverged(b, spec.tolerance)) continue;
    const mu = applyShiftInvert(b.theta, sigma);
    if (!Number.isFinite(mu.re)) continue;
    for (let i = 0; i < b.size; i++) conv.push(mu.re);
  }
  conv.sort((a, b) => b - a);
  if (conv.length < spec.required) return;
  const alphaOld = 0.5 * (sigma + spec.tau);
  const rk = conv[spec.required - 1];
  const next = conv.find((x) => x < rk);
  const spread = Math.max(conv[0] - conv[conv.length - 1], 1e-12 * Math.max(1, Math.abs(rk)));
  const gamma = next !== undefined ? Math.max(0.5 * (rk - next), 0.05 * spread) : 0.25 * spread;
  const alpha = rk - Math.min(gamma, 0.5 * spread);
  if (!(alpha > alphaOld) || !(alpha < sigma)) return;
  const delta = 0.5 * (rk - alpha);
  const beta = sigma - alpha;
  if (!(beta > delta)) return;
  spec.tau = alpha - beta;
  spec.eta = (2 * delta) / (beta - delta);
}

/** Number of leading blocks holding at least `count` eigenvalues. */
function blocksFor(st: SchurState, count: number): number {
  let c = 0;
  let nb = 0;
  for (const b of st.blocks) {
    if (c >= count) break;
    c += b.size;
    nb++;
  }
  return nb;
}

function blockConverged(b: RitzBlock, tol: number): boolean {
  const a = cabs(b.theta.re, b.theta.im);
  return a > 0 && b.residual <= tol * a;
}

function runSearch(ks: KrylovSchur, spec: SearchSpec, counters: { restarts: number }): SearchOutcome {
  const sigma = spec.op.sigma;
  const pr = (th: Complex) => priorityFor({ mode: spec.mode, sigma, tau: spec.tau, eta: spec.eta })(th);
  const m = Math.max(spec.basisSize, spec.minDim);
  let restarts = 0;
  let st: SchurState | null = null;
  let nb = 0;
  let converged = false;
  for (;;) {
    while (ks.dim < m) {
      ks.expand(spec.op);
      st = null;
      if (ks.dim >= spec.minDim && ks.dim >= spec.wanted + 1) {
        st = ks.schur(pr);
        nb = wantedBlockCount(st, spec, sigma);
        if (st.blocks.slice(0, requiredBlockCount(st, spec, sigma)).every((b) => blockConverged(b, spec.tolerance))) {
          converged = true;
          break;
        }
      }
    }
    if (converged) break;
    if (!st) {
      st = ks.schur(pr);
      nb = wantedBlockCount(st, spec, sigma);
    }
    if (st.blocks.slice(0, requiredBlockCount(st, spec, sigma)).every((b) => blockConverged(b, spec.tolerance)) && ks.dim >= spec.minDim) {
      converged = true;
      break;
    }
    if (restarts >= spec.maxRestarts) break;
    if (spec.mode === 'cayley') adaptLine(st, spec, sigma);
    // keep the wanted blocks and about half of the rest
    let wantedSize = 0;
    for (let i = 0; i < nb; i++) wantedSize += st.blocks[i].size;
    let target = Math.min(m - 2, wantedSize + Math.max(1, Math.floor((m - wantedSize) / 2)));
    target = Math.max(target, Math.min(wantedSize, m - 1));
    let p = 0;
    for (const b of st.blocks) {
      if (p + b.size > target) break;
      p += b.size;
    }
    if (p === 0) p = st.blocks[0].size;
    ks.truncate(st, p);
    st = null;
    restarts++;
    counters.restarts++;
  }
  const state = st!;
  const values: FoundValue[] = [];
  for (let i = 0; i < nb; i++) {
    const b = state.blocks[i];
    const mu = applyShiftInvert(b.theta, sigma);
    if (!Number.isFinite(mu.re)) continue;
    const { re, im } = ks.ritzVector(b, spec.purify);
    const conv = blockConverged(b, spec.tolerance);
    const a = cabs(b.theta.re, b.theta.im);
    const est = a > 0 ? b.residual / a : Infinity;
    values.push({ mu, xr: re, xi: im, estimate: est, converged: conv });
    if (b.size === 2) {
      const nim = new Float64Array(im.length);
      for (let k = 0; k < im.length; k++) nim[k] = -im[k];
      values.push({ mu: { re: mu.re, im: -mu.im }, xr: re, xi: nim, estimate: est, converged: conv });
    }
  }
  // claim: the longest converged prefix (in priority order) of the claimable group
  let disc: SearchDisc | null = null;
  if (spec.mode === 'nearest') {
    let last: RitzBlock | null = null;
    for (const b of state.blocks) {
      if (!blockConverged(b, spec.tolerance)) break;
      last = b;
    }
    if (last) {
      disc = { transform: 'shift-invert', shift: sigma, pole: null, center: sigma, radius: 1 / cabs(last.theta.re, last.theta.im) };
    }
  } else {
    // every primary-group Ritz value converged: claim the whole Apollonius disc of ratio 1 + eta;
    // otherwise only down to the last converged value of the leading run
    const w = sigma - spec.tau;
    let rho = Infinity;
    let whole = true;
    let g = 0;
    for (const b of state.blocks) {
      const c = cabs(1 + w * b.theta.re, w * b.theta.im);
      if (c < 1 + spec.eta) continue;
      g += b.size;
      if (!blockConverged(b, spec.tolerance)) whole = false;
    }
    if (whole && g > spec.maxWanted) whole = false;
    if (whole && converged) rho = 1 + spec.eta;
    else {
      for (const b of state.blocks) {
        const c = cabs(1 + w * b.theta.re, w * b.theta.im);
        if (c < 1 + spec.eta || !blockConverged(b, spec.tolerance)) break;
        rho = Math.min(rho, c);
      }
    }
    if (Number.isFinite(rho) && rho > 1) {
      const ad = apolloniusDisc(sigma, spec.tau, rho);
      disc = { transform: 'cayley', shift: sigma, pole: spec.tau, center: ad.center, radius: ad.radius };
    }
  }
  return { converged, restarts, values, disc, state, wantedBlocks: nb };
}

// ---------------------------------------------------------------------------------------------
// Enclosure of the spectrum (Bendixson 1902, Gershgorin 1931)

interface Enclosure {
  realMax: number;
  imaginaryMax: number;
  rigorous: boolean;
}

/**
 * Box {Re μ ≤ realMax, |Im μ| ≤ imaginaryMax} holding every eigenvalue of J v = μ M v for a
 * positive diagonal M: with W = D M^{-1/2} J M^{-1/2} D⁻¹ (D a positive diagonal chosen below),
 * Bendixson's theorem bounds Re μ by the largest eigenvalue of (W + Wᵀ)/2 and |Im μ| by
 * ‖(W − Wᵀ)/2‖₂; Gershgorin row sums bound both; Gershgorin discs of M⁻¹J bound Re μ as well.
 * Rows with zero (or negative) mass are left out and the box is then marked not rigorous.
 */
function spectrumEnclosure(J: CscMatrix, Jt: CscMatrix, mass: Float64Array | undefined): Enclosure {
  const n = J.cols;
  const s = new Float64Array(n);
  let rigorous = true;
  for (let i = 0; i < n; i++) {
    const m = mass ? mass[i] : 1;
    if (m > 0) s[i] = 1 / Math.sqrt(m);
    else {
      s[i] = 0;
      rigorous = false;
    }
  }
  // Visit the merged entries (J_ij, J_ji) of column j.
  const visit = (j: number, f: (i: number, a: number, b: number) => void) => {
    let p = J.colPtr[j];
    let q = Jt.colPtr[j];
    const pe = J.colPtr[j + 1];
    const qe = Jt.colPtr[j + 1];
    while (p < pe || q < qe) {
      const ra = p < pe ? J.rowIdx[p] : Infinity;
      const rb = q < qe ? Jt.rowIdx[q] : Infinity;
      if (ra === rb) f(ra, J.values[p++], Jt.values[q++]);
      else if (ra < rb) f(ra, J.values[p++], 0);
      else f(rb, 0, Jt.values[q++]);
    }
  };
  // A diagonal similarity D W D⁻¹ leaves the eigenvalues alone and any positive D gives valid
  // bounds; choose D to make the magnitudes of W_ij and W_ji equal along a spanning forest
  // (exactly symmetrising ghost-point Neumann rows and diffusion with unequal weights), so
  // that the Bendixson box is not inflated by a symmetrisable lack of symmetry.
  const d = new Float64Array(n).fill(0);
  const queue = new Int32Array(n);
  for (let root = 0; root < n; root++) {
    if (d[root] !== 0 || s[root] === 0) continue;
    d[root] = 1;
    let head = 0;
    let tail = 0;
    queue[tail++] = root;
    while (head < tail) {
      const j = queue[head++];
      visit(j, (i, a, b) => {
        if (i === j || d[i] !== 0 || s[i] === 0 || a === 0 || b === 0) return;
        const ratio = Math.min(Math.max(Math.sqrt(Math.abs(b / a)), 1e-2), 1e2);
        const di = d[j] * ratio;
        if (!(di > 1e-150 && di < 1e150)) return;
        d[i] = di;
        queue[tail++] = i;
      });
    }
  }
  let realMax = -Infinity;
  let imagMax = 0;
  for (let j = 0; j < n; j++) {
    if (s[j] === 0) continue;
    let diag = 0;
    let offH = 0;
    let sumK = 0;
    visit(j, (i, a, b) => {
      if (s[i] === 0) return;
      const w = s[i] * s[j];
      if (i === j) {
        diag = a * w;
        return;
      }
      // entries (i, j) and (j, i) of D W D⁻¹
      const aij = a * w * (d[i] / d[j]);
      const aji = b * w * (d[j] / d[i]);
      offH += Math.abs(0.5 * (aij + aji));
      sumK += Math.abs(0.5 * (aij - aji));
    });
    realMax = Math.max(realMax, diag + offH);
    imagMax = Math.max(imagMax, sumK);
  }
  // Gershgorin discs of M⁻¹J by rows and of J M⁻¹ by columns bound the real part too, and are
  // much tighter for operators whose rows (or columns) sum to zero, such as ghost-point Neumann
  // diffusion, where the symmetric part's discs are not: keep the smallest bound.
  const rowOff = new Float64Array(n);
  const diagOf = new Float64Array(n);
  let colMax = -Infinity;
  for (let j = 0; j < n; j++) {
    let off = 0;
    for (let p = J.colPtr[j]; p < J.colPtr[j + 1]; p++) {
      const i = J.rowIdx[p];
      if (i === j) diagOf[j] = J.values[p];
      else if (s[i] !== 0) {
        off += Math.abs(J.values[p]);
        rowOff[i] += Math.abs(J.values[p]);
      }
    }
    if (s[j] !== 0) colMax = Math.max(colMax, (diagOf[j] + off) * s[j] * s[j]);
  }
  let rowMax = -Infinity;
  for (let i = 0; i < n; i++) if (s[i] !== 0) rowMax = Math.max(rowMax, (diagOf[i] + rowOff[i]) * s[i] * s[i]);
  realMax = Math.min(realMax, rowMax, colMax);
  if (!Number.isFinite(realMax)) realMax = 0;
  return { realMax, imaginaryMax: imagMax, rigorous };
}

/** Norm estimate sqrt(‖J‖₁‖J‖∞) ≥ ‖J‖₂. */
function normEstimate(J: CscMatrix): number {
  let n1 = 0;
  const rows = new Float64Array(J.rows);
  for (let j = 0; j < J.cols; j++) {
    let s = 0;
    for (let p = J.colPtr[j]; p < J.colPtr[j + 1]; p++) {
      const a = Math.abs(J.values[p]);
      s += a;
      rows[J.rowIdx[p]] += a;
    }
    n1 = Math.max(n1, s);
  }
  let ninf = 0;
  for (let i = 0; i < J.rows; i++) ninf = Math.max(ninf, rows[i]);
  return Math.sqrt(n1 * ninf);
}

/**
 * Smallest x such that every point with x ≤ Re μ ≤ realMax and |Im μ| ≤ Y lies in the union of
 * real-centred discs; null when realMax itself is not covered.
 */
function certifiedLine(discs: { center: number; radius: number }[], realMax: number, Y: number): number | null {
  const intervals: [number, number][] = [];
  for (const d of discs) {
    if (d.radius < Y) continue;
    const h = Math.sqrt(d.radius * d.radius - Y * Y);
    intervals.push([d.center - h, d.center + h]);
  }
  intervals.sort((a, b) => b[1] - a[1]);
  // walk leftwards from realMax through overlapping intervals
  let x = realMax;
  let covered = false;
  let progress = true;
  const used = new Array<boolean>(intervals.length).fill(false);
  while (progress) {
    progress = false;
    for (let i = 0; i < intervals.length; i++) {
      if (used[i]) continue;
      const [lo, hi] = intervals[i];
      if (lo <= x && x <= hi) {
        used[i] = true;
        covered = true;
        if (lo < x) x = lo;
        progress = true;
      }
    }
  }
  return covered ? x : null;
}

// ---------------------------------------------------------------------------------------------
// Planning the Cayley parameters

interface CayleyPlan {
  sigma: number;
  tau: number;
  alpha: number;
  beta: number;
  eta: number;
  /** The claimed disc's left end sits at α + delta (between α and the count-th real part). */
  delta: number;
}

/** The plan with σ moved (α, δ kept): τ = 2α − σ and the primary-group margin recomputed. */
function withSigma(plan: CayleyPlan, sigma: number): CayleyPlan {
  const beta = sigma - plan.alpha;
  return { ...plan, sigma, beta, tau: plan.alpha - beta, eta: (2 * plan.delta) / Math.max(beta - plan.delta, 1e-300) };
}

/**
 * Cayley parameters from the eigenvalues known so far (sorted rightmost first).
 * The line α goes between the count-th and the next real part; σ a little right of the
 * rightmost; σ − α = β is then enlarged until the Apollonius disc that will be claimed (left
 * end α + δ, right end α + β²/δ) reaches the imaginary half-height Y at the count-th real part
 * and at the right edge R of the enclosure, within [minBeta, capBeta].
 */
function planCayley(known: Complex[], count: number, wantedCount: number, R: number, Y: number, scaleHint: number, floor: number, minBeta: number, capBeta: number): CayleyPlan {
  const rho1 = known[0].re;
  const ki = Math.min(count, known.length) - 1;
  const rk = known[ki].re;
  const L = known[Math.min(wantedCount, known.length) - 1].re;
  const s = Math.max(rho1 - L, scaleHint, 1e-3 * Math.max(Math.abs(rho1), Math.abs(L)), floor);
  let next: number | undefined;
  for (let i = ki + 1; i < known.length; i++) {
    if (known[i].re < rk) {
      next = known[i].re;
      break;
    }
  }
  const gap = next !== undefined ? rk - next : s;
  const gamma = Math.min(Math.max(0.5 * gap, 0.05 * s), 0.5 * s);
  const alpha = rk - gamma;
  const delta = 0.5 * gamma;
  // σ inside the wanted set, in the gap between known real parts nearest the middle of
  // [ρ_count, ρ_1]: the unwanted part of the spectrum then maps to a short interval of θ between
  // wanted values at both ends, and the Krylov space resolves the wanted ones in fewer steps
  // than with σ to the right of them all (measured: about 17 instead of 22 solves per point on a
  // 2D Bratu branch). Without a gap (one value, or all equal), σ goes a little right of ρ_1.
  let sigmaMin = rho1 + 0.1 * s;
  const mid = 0.5 * (rho1 + rk);
  let bestGap = Infinity;
  for (let i = 0; i < ki; i++) {
    const a = known[i].re;
    const b = known[i + 1].re;
    if (a - b < 0.05 * s) continue;
    const m = 0.5 * (a + b);
    if (Math.abs(m - mid) < bestGap) {
      bestGap = Math.abs(m - mid);
      sigmaMin = m;
    }
  }
  const sigmaFloor = alpha + 2 * delta + 0.05 * s;
  if (sigmaMin < sigmaFloor) sigmaMin = sigmaFloor;
  const betaMin = sigmaMin - alpha;
  const xL = alpha + delta;
  let needed = Math.max(R, sigmaMin);
  if (Y > 0) {
    needed = Math.max(needed, rk + (Y * Y) / (rk - xL));
    if (R > xL) needed = Math.max(needed, R + (Y * Y) / (R - xL));
  }
  const betaCov = Math.sqrt(Math.max(0, delta * (needed - alpha)));
  let beta = Math.max(betaMin, betaCov, minBeta);
  beta = Math.min(beta, Math.max(capBeta, betaMin));
  const sigma = alpha + beta;
  return { sigma, tau: alpha - beta, alpha, beta, eta: (2 * delta) / (beta - delta), delta };
}

// ---------------------------------------------------------------------------------------------
// Dense reference

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

// ---------------------------------------------------------------------------------------------
// Tracker

function sortRightmost<T extends { re: number; im: number }>(a: T[]): T[] {
  return a.sort((x, y) => (y.re !== x.re ? y.re - x.re : y.im - x.im));
}

interface KnownPair {
  mu: Complex;
  xr: Float64Array;
  xi: Float64Array;
  residual: number;
  relativeResidual: number;
  converged: boolean;
}

/**
 * Holds the LU of J − σM (symbolic analysis once per pattern, numeric refactorisation per call)
 * and the warm start between calls along a branch.
 */
export class EigenTracker {
  readonly n: number;
  private readonly options: Required<Omit<EigenOptions, 'mass' | 'imaginaryReach' | 'lu'>> & Pick<EigenOptions, 'mass' | 'imaginaryReach' | 'lu'>;
  private readonly pattern: CscPattern;
  private readonly shiftedPattern: CscPattern;
  private readonly embed: Int32Array;
  private readonly diagPos: Int32Array;
  private readonly transposeMap: { pattern: CscPattern; perm: Int32Array };
  private lu: SparseLU | null = null;
  private shiftedValues: Float64Array;
  private warm: EigenWarmStart | null = null;
  private random: () => number;
  readonly totals = { calls: 0, solves: 0, factorisations: 0 };

  constructor(pattern: CscPattern, options: EigenOptions) {
    validatePattern(pattern);
    if (pattern.rows !== pattern.cols) throw new RangeError(`the Jacobian must be square, got ${pattern.rows}x${pattern.cols}`);
    if (!Number.isInteger(options.count) || options.count < 1) throw new RangeError(`count must be a positive integer, got ${options.count}`);
    this.n = pattern.rows;
    if (options.mass) {
      if (options.mass.length !== this.n) throw new RangeError(`mass has length ${options.mass.length}, expected ${this.n}`);
      for (let i = 0; i < this.n; i++) {
        if (!Number.isFinite(options.mass[i])) throw new RangeError(`mass[${i}] is ${options.mass[i]}, expected a finite number`);
      }
    }
    const tol = options.tolerance ?? 1e-8;
    if (!(tol > 0 && tol < 1)) throw new RangeError(`tolerance must lie in (0, 1), got ${tol}`);
    const guard = options.guard ?? Math.max(2, Math.ceil(options.count / 3));
    if (!Number.isInteger(guard) || guard < 0) throw new RangeError(`guard must be a non-negative integer, got ${guard}`);
    const kw = options.count + guard;
    const basis = options.basisSize ?? Math.max(20, 2 * kw + 4);
    if (!Number.isInteger(basis) || basis < kw + 3) throw new RangeError(`basisSize must be an integer ≥ count + guard + 3 = ${kw + 3}, got ${basis}`);
    if (options.imaginaryReach !== undefined && !(options.imaginaryReach >= 0)) {
      throw new RangeError(`imaginaryReach must be ≥ 0, got ${options.imaginaryReach}`);
    }
    this.options = {
      count: options.count,
      mass: options.mass,
      tolerance: tol,
      basisSize: basis,
      maxRestarts: options.maxRestarts ?? 60,
      transform: options.transform ?? 'cayley',
      shift: options.shift ?? 0,
      imaginaryReach: options.imaginaryReach,
      maxShifts: options.maxShifts ?? 3,
      guard,
      seed: options.seed ?? 20240917,
      lu: options.lu,
    };
    if (this.options.transform !== 'cayley' && this.options.transform !== 'shift-invert') {
      throw new RangeError(`transform must be 'cayley' or 'shift-invert', got '${String(this.options.transform)}'`);
    }
    this.pattern = pattern;
    // J − σM lives on the pattern of J plus the full diagonal
    const diag: CscPattern = {
      rows: this.n,
      cols: this.n,
      colPtr: Int32Array.from({ length: this.n + 1 }, (_, i) => i),
      rowIdx: Int32Array.from({ length: this.n }, (_, i) => i),
    };
    this.shiftedPattern = patternUnion(pattern, diag);
    this.embed = embedPattern(pattern, this.shiftedPattern);
    this.diagPos = new Int32Array(this.n);
    for (let i = 0; i < this.n; i++) this.diagPos[i] = entryIndex(this.shiftedPattern, i, i);
    this.shiftedValues = new Float64Array(nnz(this.shiftedPattern));
    // transpose with a value permutation, for the enclosure
    const idx = new Float64Array(nnz(pattern));
    for (let p = 0; p < idx.length; p++) idx[p] = p;
    const tr = transpose({ ...pattern, values: idx });
    this.transposeMap = { pattern: tr, perm: Int32Array.from(tr.values) };
    this.random = makeRandom(this.options.seed);
  }

  /** Warm start carried to the next call (null before the first call or after `reset`). */
  get warmStart(): EigenWarmStart | null {
    return this.warm;
  }

  set warmStart(w: EigenWarmStart | null) {
    if (w) checkWarmStart(w, this.n);
    this.warm = w;
  }

  /** Forget the warm start (next call starts cold). */
  reset(): void {
    this.warm = null;
  }

  /**
   * Start afresh as a new tracker would: no factorisation kept (its pivot order), the random
   * start vectors reseeded, no warm start. After this the results depend only on the arguments
   * of the next calls (used when a continuation run writes a checkpoint, so that a run resumed
   * from it repeats the same computations bit for bit).
   */
  restart(): void {
    // keep the symbolic analysis (deterministic for a pattern); the next factorisation takes
    // fresh pivots, exactly as a new tracker's first one would
    this.freshNext = true;
    this.random = makeRandom(this.options.seed);
    this.warm = null;
  }

  /** The next factorisation takes fresh pivots (set by restart). */
  private freshNext = false;

  dispose(): void {
    this.lu?.dispose();
    this.lu = null;
  }

  /** Rightmost eigenvalues of J (values aligned with the tracker's pattern). */
  compute(values: Float64Array, extras: ComputeExtras = {}): RightmostResult {
    const o = this.options;
    const n = this.n;
    if (values.length < nnz(this.pattern)) throw new RangeError(`expected ${nnz(this.pattern)} Jacobian values, got ${values.length}`);
    for (let p = 0; p < nnz(this.pattern); p++) {
      if (!Number.isFinite(values[p])) throw new RangeError(`Jacobian value ${p} is ${values[p]}, expected a finite number`);
    }
    const J: CscMatrix = { ...this.pattern, values };
    const warm = extras.warmStart !== undefined ? extras.warmStart : this.warm;
    if (warm) checkWarmStart(warm, n);
    this.totals.calls++;
    const kw = o.count + o.guard;
    // tiny problems: dense
    if (n <= o.basisSize + 2) {
      const res = this.denseResult(J);
      this.warm = res.warmStart;
      return res;
    }
    const mass = o.mass;
    const singularMass = mass ? mass.some((m) => m === 0) : false;
    const mMax = mass ? mass.reduce((a, m) => Math.max(a, Math.abs(m)), 0) : 1;
    const jNorm = normEstimate(J);
    const Jt: CscMatrix = { ...this.transposeMap.pattern, values: Float64Array.from(this.transposeMap.perm, (p) => values[p]) };
    const enclosure = spectrumEnclosure(J, Jt, mass);
    const floor = Math.max(1e-12 * jNorm, 1e-300);
    let Y = enclosure.imaginaryMax;
    if (o.imaginaryReach !== undefined) Y = Math.min(Y, o.imaginaryReach);
    if (!enclosure.rigorous && o.imaginaryReach !== undefined) Y = o.imaginaryReach;
    // below ~1e-10 of the norm, an imaginary part is rounding
    if (Y <= 1e-10 * jNorm) Y = 0;

    const counters = { solves: 0, factorisations: 0, restarts: 0 };
    const shifts: number[] = [];
    const discs: SearchDisc[] = [];
    let known: KnownPair[] = [];
    const notes: string[] = [];
    let allConverged = true;

    const makeOp = (sigma: number): ShiftOperator => {
      let s = sigma;
      for (let attempt = 0; attempt < 4; attempt++) {
        try {
          this.factor(values, s);
          counters.factorisations++;
          break;
        } catch (e) {
          counters.factorisations++;
          if (!(e instanceof SparseLUError) || attempt === 3) throw e;
          // σ hit an eigenvalue (or nearly): move it slightly
          s = s + Math.max(1e-6 * Math.abs(s), 1e-8 * jNorm, 1e-12) * (attempt + 1) * 7.3;
        }
      }
      shifts.push(s);
      const lu = this.lu!;
      const mx = new Float64Array(n);
      return {
        sigma: s,
        apply: (x, out) => {
          if (mass) for (let i = 0; i < n; i++) mx[i] = mass[i] * x[i];
          else mx.set(x);
          lu.solve(mx, out);
          counters.solves++;
        },
      };
    };
    const externalOp = (f: { lu: SparseLU; shift: number }): ShiftOperator => {
      shifts.push(f.shift);
      const mx = new Float64Array(n);
      return {
        sigma: f.shift,
        apply: (x, out) => {
          if (mass) for (let i = 0; i < n; i++) mx[i] = mass[i] * x[i];
          else mx.set(x);
          f.lu.solve(mx, out);
          counters.solves++;
        },
      };
    };
    const purified = (op: ShiftOperator, v: Float64Array): Float64Array => {
      if (!singularMass) return v;
      const a = new Float64Array(n);
      op.apply(v, a);
      const b = new Float64Array(n);
      op.apply(a, b);
      const nb = norm2(b);
      if (nb > 0) scaleInPlace(b, 1 / nb);
      return b;
    };
    const residualOf = (mu: Complex, xr: Float64Array, xi: Float64Array) => {
      const jr = matVec(J, xr, new Float64Array(n));
      const ji = matVec(J, xi, new Float64Array(n));
      let r2 = 0;
      let x2 = 0;
      for (let i = 0; i < n; i++) {
        const m = mass ? mass[i] : 1;
        const rr = jr[i] - m * (mu.re * xr[i] - mu.im * xi[i]);
        const ri = ji[i] - m * (mu.re * xi[i] + mu.im * xr[i]);
        r2 += rr * rr + ri * ri;
        x2 += xr[i] * xr[i] + xi[i] * xi[i];
      }
      const res = x2 > 0 ? Math.sqrt(r2 / x2) : Infinity;
      return { residual: res, relativeResidual: res / (jNorm + cabs(mu.re, mu.im) * mMax) };
    };
    const residualLimit = (mu: Complex, sigma: number) =>
      Math.max(100 * o.tolerance * ((jNorm + Math.abs(sigma) * mMax) / (jNorm + cabs(mu.re, mu.im) * mMax)), 1e-12);

    const merge = (out: SearchOutcome, sigma: number) => {
      const matched = new Set<number>();
      for (const v of out.values) {
        const r = residualOf(v.mu, v.xr, v.xi);
        const ok = v.converged && r.relativeResidual <= residualLimit(v.mu, sigma);
        if (!ok) {
          if (v.converged) notes.push(`a Ritz value ${fmt(v.mu)} met the Krylov test but its residual on J, M is ${r.relativeResidual.toExponential(1)}`);
          continue;
        }
        const tolMatch = Math.max(1e3 * o.tolerance, 1e-9) * (cabs(v.mu.re, v.mu.im) + floor + Math.abs(sigma));
        let hit = -1;
        for (let i = 0; i < known.length; i++) {
          if (matched.has(i)) continue;
          if (cabs(known[i].mu.re - v.mu.re, known[i].mu.im - v.mu.im) <= tolMatch) {
            hit = i;
            break;
          }
        }
        const entry: KnownPair = { mu: v.mu, xr: v.xr, xi: v.xi, residual: r.residual, relativeResidual: r.relativeResidual, converged: true };
        if (hit >= 0) {
          matched.add(hit);
          if (r.relativeResidual < known[hit].relativeResidual) known[hit] = entry;
        } else {
          known.push(entry);
          matched.add(known.length - 1);
        }
      }
      // keep conjugate pairs exact (a member may have been replaced by a better value)
      const pairs: KnownPair[] = [];
      const taken = new Set<KnownPair>();
      for (const k of known) {
        if (k.mu.im <= 0 || taken.has(k)) continue;
        let best: KnownPair | null = null;
        let bd = Infinity;
        for (const o of known) {
          if (o.mu.im >= 0 || taken.has(o)) continue;
          const dd = cabs(o.mu.re - k.mu.re, o.mu.im + k.mu.im);
          if (dd < bd) {
            bd = dd;
            best = o;
          }
        }
        taken.add(k);
        if (best && bd <= Math.max(1e3 * o.tolerance, 1e-9) * (cabs(k.mu.re, k.mu.im) + floor)) taken.add(best);
        pairs.push(k, { ...k, mu: { re: k.mu.re, im: -k.mu.im }, xi: negated(k.xi) });
      }
      for (const k of known) {
        if (k.mu.im >= 0 || taken.has(k)) continue;
        pairs.push({ ...k, mu: { re: k.mu.re, im: -k.mu.im }, xi: negated(k.xi) }, k);
      }
      known = known.filter((k) => k.mu.im === 0).concat(pairs);
      known.sort((a, b) => (b.mu.re !== a.mu.re ? b.mu.re - a.mu.re : b.mu.im - a.mu.im));
      if (out.disc) discs.push(out.disc);
    };

    const m = o.basisSize;
    const maxWanted = Math.max(kw, Math.floor(m / 2));
    const explore = Math.max(10, Math.ceil(m / 2));
    let lastOutcome: SearchOutcome | null = null;

    const seedFromWarm = (ks: KrylovSchur, op: ShiftOperator, w: EigenWarmStart) => {
      const Q = w.vectors.map((v) => Float64Array.from(v));
      const blocks = Math.min(3, Q.length, Math.max(1, multiplicity(w.values, floor)));
      for (let b = 0; b < blocks; b++) {
        const v = new Float64Array(n);
        for (const q of Q) axpy(v, 0.5 + this.random(), q);
        if (!ks.inject(purified(op, v))) ks.inject(purified(op, ks.randomVector()));
      }
      return Q;
    };
    const injectMissing = (ks: KrylovSchur, Q: Float64Array[], op: ShiftOperator): boolean => {
      // a previous direction absent from the whole search space (e.g. the second copy of a
      // double eigenvalue, which a single Krylov sequence cannot produce)
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
      return ks.inject(purified(op, best));
    };
    const lockedStart = (ks: KrylovSchur, op: ShiftOperator, keep: KnownPair[]) => {
      const { Q, S } = invariantBasis(keep, J, mass, n);
      if (Q.length > 0) {
        const St = shiftedRayleigh(S, op.sigma);
        if (St) ks.lock(Q, St);
      }
      ks.inject(purified(op, ks.randomVector()));
      return ks.dim;
    };

    const baseSpec = (op: ShiftOperator): Omit<SearchSpec, 'mode' | 'tau' | 'eta' | 'minDim'> => ({
      op,
      wanted: kw,
      required: o.count,
      maxWanted,
      basisSize: m,
      tolerance: o.tolerance,
      maxRestarts: o.maxRestarts,
      purify: singularMass,
    });

    if (o.transform === 'shift-invert') {
      const f = extras.factored && extras.factored.shift === o.shift ? extras.factored : undefined;
      const op = f ? externalOp(f) : makeOp(o.shift);
      const ks = new KrylovSchur(n, this.random);
      let Q: Float64Array[] = [];
      if (warm) Q = seedFromWarm(ks, op, warm);
      else ks.inject(purified(op, ks.randomVector()));
      const spec: SearchSpec = { ...baseSpec(op), mode: 'nearest', tau: 0, eta: 0, minDim: kw + 2 };
      let out = runSearch(ks, spec, counters);
      if (out.converged) {
        // verification: a fresh direction (cold) or a missing previous one (warm)
        const d0 = ks.dim;
        const injected = warm ? injectMissing(ks, Q, op) : ks.inject(purified(op, ks.randomVector()));
        if (injected) out = runSearch(ks, { ...spec, minDim: Math.min(d0 + explore, m + explore) }, counters);
      }
      if (!out.converged) allConverged = false;
      merge(out, op.sigma);
      lastOutcome = out;
    } else {
      // transform 'cayley'
      let ks: KrylovSchur;
      let first = true;
      let prevBeta = 0;
      let Qwarm: Float64Array[] = [];
      let knownValues: Complex[] = warm ? sortRightmost(warm.values.map((v) => ({ re: v.re, im: v.im }))) : [];
      let scaleHint = 0;
      if (knownValues.length === 0) {
        // cold start: eigenvalues nearest the shift fix the scale
        const f = extras.factored && extras.factored.shift === o.shift ? extras.factored : undefined;
        const op = f ? externalOp(f) : makeOp(o.shift);
        ks = new KrylovSchur(n, this.random);
        ks.inject(purified(op, ks.randomVector()));
        const out = runSearch(ks, { ...baseSpec(op), mode: 'nearest', tau: 0, eta: 0, minDim: kw + 2 }, counters);
        if (!out.converged) allConverged = false;
        merge(out, op.sigma);
        lastOutcome = out;
        knownValues = known.map((k) => k.mu);
        if (out.disc) scaleHint = out.disc.radius;
        first = false;
      }
      for (let shiftNo = 0; shiftNo < o.maxShifts && knownValues.length > 0; shiftNo++) {
        const R = Math.max(enclosure.realMax, knownValues[0].re);
        const spread = Math.max(knownValues[0].re - knownValues[Math.min(kw, knownValues.length) - 1].re, scaleHint, 1e-3 * Math.max(Math.abs(knownValues[0].re), floor), floor);
        const capBeta = (shiftNo === 0 ? 32 : 2048) * spread;
        let plan = planCayley(knownValues, o.count, kw, R, Y, scaleHint, floor, shiftNo === 0 ? 0 : 2 * prevBeta, capBeta);
        let op: ShiftOperator;
        const f = extras.factored;
        if (first && f && f.shift > plan.alpha + 4 * plan.delta) {
          op = externalOp(f);
        } else {
          op = makeOp(plan.sigma);
        }
        plan = withSigma(plan, op.sigma);
        prevBeta = plan.beta;
        ks = new KrylovSchur(n, this.random);
        let minDim: number;
        const useWarm = first && warm !== null && warm !== undefined;
        if (useWarm) {
          Qwarm = seedFromWarm(ks, op, warm!);
          minDim = kw + 2;
        } else {
          const keep = known.filter((k) => k.mu.re > plan.alpha).slice(0, maxWanted);
          const d0 = lockedStart(ks, op, keep);
          minDim = Math.min(d0 + explore, m + explore);
        }
        const spec: SearchSpec = { ...baseSpec(op), mode: 'cayley', tau: plan.tau, eta: plan.eta, minDim };
        let out = runSearch(ks, spec, counters);
        if (useWarm && out.converged && injectMissing(ks, Qwarm, op)) {
          out = runSearch(ks, { ...spec, minDim: Math.min(ks.dim + explore, m + explore) }, counters);
        }
        if (!out.converged) allConverged = false;
        merge(out, op.sigma);
        lastOutcome = out;
        first = false;
        knownValues = known.map((k) => k.mu);
        // coverage
        const sel = selectRightmost(known, o.count);
        if (sel.length === 0) continue;
        const last = sel[sel.length - 1].mu.re;
        const line = certifiedLine(discs, Math.max(enclosure.realMax, knownValues[0].re), Y);
        if (line !== null && line <= last + 1e-12 * Math.max(1, Math.abs(last))) break;
        if (plan.beta >= capBeta * 0.999 && shiftNo > 0) break;
      }
    }

    // assemble the answer
    const sel = selectRightmost(known, o.count);
    let converged = allConverged && sel.length >= o.count;
    let reason: string | undefined;
    const outValues: EigenValue[] = sel.map((k) => ({ re: k.mu.re, im: k.mu.im, residual: k.residual, relativeResidual: k.relativeResidual, converged: k.converged }));
    if (sel.length < o.count) {
      // report the best unconverged approximations too
      const extra: EigenValue[] = [];
      if (lastOutcome) {
        for (const v of lastOutcome.values) {
          if (outValues.some((w) => cabs(w.re - v.mu.re, w.im - v.mu.im) <= 1e-9 * (1 + cabs(v.mu.re, v.mu.im)))) continue;
          const r = residualOf(v.mu, v.xr, v.xi);
          extra.push({ re: v.mu.re, im: v.mu.im, residual: r.residual, relativeResidual: r.relativeResidual, converged: false });
        }
      }
      sortRightmost(extra);
      while (outValues.length < o.count && extra.length > 0) outValues.push(extra.shift()!);
      sortRightmost(outValues);
      converged = false;
      reason = `only ${sel.length} of ${o.count} eigenvalues converged within ${o.maxRestarts} restarts per search (basis ${m}, tolerance ${o.tolerance})`;
    } else if (!allConverged) {
      reason = `a search hit its restart limit (${o.maxRestarts}); the values returned converged, but the region searched is smaller than planned`;
    }
    if (notes.length > 0) reason = reason ? `${reason}; ${notes[0]}` : undefined;

    const realMax = Math.max(enclosure.realMax, known.length > 0 ? known[0].mu.re : -Infinity);
    const line = discs.length > 0 ? certifiedLine(discs, realMax, Y) : null;
    const lastRe = outValues.length > 0 ? outValues[outValues.length - 1].re : Infinity;
    const covered = converged && line !== null && line <= lastRe + 1e-12 * Math.max(1, Math.abs(lastRe));
    const complete = covered && enclosure.rigorous;
    const region: SearchedRegion = {
      discs,
      certifiedAbove: line,
      enclosure: { realMax: enclosure.realMax, imaginaryMax: enclosure.imaginaryMax, rigorous: enclosure.rigorous },
      imaginaryReach: Y,
      complete,
      description: describeRegion(discs, line, enclosure, Y, covered, outValues.length, lastRe),
    };
    const warmOut = makeWarmStart(known.slice(0, Math.max(kw, sel.length)), n, shifts[shifts.length - 1] ?? 0);
    this.warm = warmOut;
    this.totals.solves += counters.solves;
    this.totals.factorisations += counters.factorisations;
    return {
      values: outValues,
      converged,
      unconvergedReason: converged ? undefined : reason ?? 'not converged',
      searchedRegion: region,
      solves: counters.solves,
      factorisations: counters.factorisations,
      restarts: counters.restarts,
      shifts,
      warmStart: warmOut,
      method: 'krylov',
    };
  }

  private factor(values: Float64Array, sigma: number): void {
    const v = this.shiftedValues;
    v.fill(0);
    for (let p = 0; p < this.embed.length; p++) v[this.embed[p]] += values[p];
    const mass = this.options.mass;
    for (let i = 0; i < this.n; i++) v[this.diagPos[i]] -= sigma * (mass ? mass[i] : 1);
    if (!this.lu) this.lu = new SparseLU(this.shiftedPattern, this.options.lu ?? {});
    this.lu.update(v, this.freshNext);
    this.freshNext = false;
  }

  private denseResult(J: CscMatrix): RightmostResult {
    const o = this.options;
    const n = this.n;
    const { values, vectors } = denseEigen(J, o.mass, true);
    const mMax = o.mass ? o.mass.reduce((a, m) => Math.max(a, Math.abs(m)), 0) : 1;
    const jNorm = normEstimate(J);
    const pairs: KnownPair[] = values.map((mu, i) => {
      const { re, im } = vectors[i];
      const jr = matVec(J, re, new Float64Array(n));
      const ji = matVec(J, im, new Float64Array(n));
      let r2 = 0;
      let x2 = 0;
      for (let k = 0; k < n; k++) {
        const m = o.mass ? o.mass[k] : 1;
        const rr = jr[k] - m * (mu.re * re[k] - mu.im * im[k]);
        const ri = ji[k] - m * (mu.re * im[k] + mu.im * re[k]);
        r2 += rr * rr + ri * ri;
        x2 += re[k] * re[k] + im[k] * im[k];
      }
      const res = Math.sqrt(r2 / x2);
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
}

function negated(x: Float64Array): Float64Array {
  const y = new Float64Array(x.length);
  for (let i = 0; i < x.length; i++) y[i] = -x[i];
  return y;
}

function checkWarmStart(w: EigenWarmStart, n: number): void {
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

/** Largest number of (nearly) equal eigenvalues in the list (conjugates count apart). */
function multiplicity(values: { re: number; im: number }[], floor: number): number {
  let best = 1;
  for (let i = 0; i < values.length; i++) {
    let c = 0;
    for (let j = 0; j < values.length; j++) {
      const a = values[i];
      const b = values[j];
      if (cabs(a.re - b.re, a.im - b.im) <= 1e-6 * (cabs(a.re, a.im) + floor)) c++;
    }
    best = Math.max(best, c);
  }
  return best;
}

/** The `count` rightmost of a sorted list, extended by one so that no conjugate pair is split. */
function selectRightmost<T extends { mu: Complex }>(sorted: T[], count: number): T[] {
  const out = sorted.slice(0, count);
  if (out.length === count && count < sorted.length) {
    const last = out[count - 1].mu;
    const next = sorted[count].mu;
    if (last.im !== 0 && next.im === -last.im && next.re === last.re) out.push(sorted[count]);
    else if (last.im !== 0) {
      // find the conjugate of the last one if it is not already included
      const hasConj = out.some((v) => v.mu.re === last.re && v.mu.im === -last.im);
      if (!hasConj) {
        const c = sorted.find((v) => v.mu.re === last.re && v.mu.im === -last.im);
        if (c) out.push(c);
      }
    }
  }
  return out;
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

function makeWarmStart(pairs: KnownPair[], n: number, shift: number): EigenWarmStart {
  const Q: Float64Array[] = [];
  for (const k of pairs) {
    if (k.mu.im < 0 && pairs.some((o) => o.mu.re === k.mu.re && o.mu.im === -k.mu.im)) continue;
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
  return {
    size: n,
    vectors: Q.map((q) => Array.from(q)),
    values: pairs.map((k) => ({ re: k.mu.re, im: k.mu.im })),
    shift,
  };
}

function fmt(mu: Complex): string {
  const r = Number(mu.re.toPrecision(6));
  if (mu.im === 0) return `${r}`;
  const i = Number(Math.abs(mu.im).toPrecision(6));
  return `${r} ${mu.im < 0 ? '−' : '+'} ${i}i`;
}

function num(x: number): string {
  return `${Number(x.toPrecision(5))}`;
}

function describeRegion(discs: SearchDisc[], line: number | null, enc: Enclosure, Y: number, covered: boolean, count: number, lastRe: number): string {
  const parts: string[] = [];
  const d = discs.map((s) =>
    s.transform === 'cayley'
      ? `|μ − ${num(s.center)}| ≤ ${num(s.radius)} (Cayley ordering, shift ${num(s.shift)}, pole ${num(s.pole!)})`
      : `|μ − ${num(s.center)}| ≤ ${num(s.radius)} (shift-invert about ${num(s.shift)})`,
  );
  parts.push(d.length > 0 ? `Searched: ${d.join('; ')}.` : 'No search converged: nothing can be claimed about where eigenvalues are absent.');
  const box = enc.rigorous
    ? `By Bendixson's and Gershgorin's theorems every eigenvalue has real part ≤ ${num(enc.realMax)} and |imaginary part| ≤ ${num(enc.imaginaryMax)}`
    : `The mass matrix is singular or not positive, so no rigorous box holds the spectrum; the differential rows alone suggest real part ≤ ${num(enc.realMax)} and |imaginary part| ≤ ${num(enc.imaginaryMax)}`;
  parts.push(`${box}; coverage was judged for |imaginary part| ≤ ${num(Y)}.`);
  if (line !== null) {
    parts.push(`Every eigenvalue with real part ≥ ${num(line)} (and |imaginary part| ≤ ${num(Y)}) lies in the searched discs and is among those found.`);
  }
  if (covered && enc.rigorous) {
    parts.push(`So the ${count} values returned are the rightmost (as far as a Krylov search can tell: an eigenvector nearly absent from the search space can still be missed).`);
  } else if (covered) {
    parts.push(`The ${count} values returned are the rightmost within that region; outside it, finite eigenvalues of a pencil with a singular mass cannot be excluded.`);
  } else if (count > 0) {
    parts.push(
      `The search does not certify the list down to real part ${num(lastRe)}: an eigenvalue with real part between ${num(lastRe)} and ${line === null ? 'the enclosure bound' : num(line)} lying outside the discs (large imaginary part) could have been missed.`,
    );
  }
  return parts.join(' ');
}

/**
 * One-shot rightmost eigenvalues of J v = μ M v (see the file header). For tracking along a
 * branch keep an `EigenTracker` instead: it keeps the LU's symbolic analysis and the warm start.
 */
export function rightmostEigenvalues(J: CscMatrix, options: RightmostOptions): RightmostResult {
  const tracker = new EigenTracker(J, options);
  try {
    return tracker.compute(J.values, { warmStart: options.warmStart ?? null, factored: options.factored });
  } finally {
    tracker.dispose();
  }
}
