/**
 * Test matrices for the eigensolver tests: sparse matrices with a spectrum chosen in advance,
 * and finite-difference Laplacians whose eigenvalues are known exactly.
 */
import { type CscMatrix, TripletBuilder, fromDense } from '../../src/linalg/sparse.js';

export interface Spectrum {
  /** Real eigenvalues. */
  reals: number[];
  /** Complex pairs a ± ib (b > 0) given as [a, b]. */
  pairs: [number, number][];
}

/** Deterministic uniform generator on [0, 1) (mulberry32). */
export function rng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

export interface ControlledOptions {
  /** Off-block upper-triangular entries per row (expected), default 2. */
  upperPerRow?: number;
  /** Magnitude of those entries, default 1. */
  upperScale?: number;
  /** Number of elementary similarity transforms (I + c e_p e_qᵀ), default 6. */
  similarities?: number;
  /** Size of c in those transforms, default 0.5. */
  similarityScale?: number;
  seed: number;
}

/**
 * A sparse matrix with exactly the given eigenvalues (up to rounding): block diagonal
 * (1×1 reals, 2×2 [[a, b], [−b, a]] pairs) plus sparse block-upper entries (which leave the
 * eigenvalues alone), then a few sparse elementary similarities and a random symmetric
 * permutation, so that nothing is triangular any more.
 */
export function controlledMatrix(spec: Spectrum, o: ControlledOptions): { J: CscMatrix; dense: number[][] } {
  const r = rng(o.seed);
  const n = spec.reals.length + 2 * spec.pairs.length;
  const A: number[][] = Array.from({ length: n }, () => new Array<number>(n).fill(0));
  const blockEnd: number[] = new Array<number>(n).fill(0);
  // interleave reals and pairs in a random order along the diagonal
  const items: ({ kind: 'r'; v: number } | { kind: 'p'; a: number; b: number })[] = [
    ...spec.reals.map((v) => ({ kind: 'r' as const, v })),
    ...spec.pairs.map(([a, b]) => ({ kind: 'p' as const, a, b })),
  ];
  for (let i = items.length - 1; i > 0; i--) {
    const j = Math.floor(r() * (i + 1));
    [items[i], items[j]] = [items[j], items[i]];
  }
  let k = 0;
  for (const it of items) {
    if (it.kind === 'r') {
      A[k][k] = it.v;
      blockEnd[k] = k + 1;
      k += 1;
    } else {
      A[k][k] = it.a;
      A[k + 1][k + 1] = it.a;
      A[k][k + 1] = it.b;
      A[k + 1][k] = -it.b;
      blockEnd[k] = k + 2;
      blockEnd[k + 1] = k + 2;
      k += 2;
    }
  }
  const upper = o.upperPerRow ?? 2;
  const us = o.upperScale ?? 1;
  for (let i = 0; i < n; i++) {
    const span = n - blockEnd[i];
    if (span <= 0) continue;
    const count = Math.floor(upper + r());
    for (let t = 0; t < count; t++) {
      const j = blockEnd[i] + Math.floor(r() * span);
      A[i][j] += us * (2 * r() - 1);
    }
  }
  const sims = o.similarities ?? 6;
  const cs = o.similarityScale ?? 0.5;
  for (let t = 0; t < sims; t++) {
    const p = Math.floor(r() * n);
    let q = Math.floor(r() * n);
    if (q === p) q = (q + 1) % n;
    const c = cs * (2 * r() - 1);
    // A ← (I + c e_p e_qᵀ) A (I − c e_p e_qᵀ): row p += c·row q, then column q −= c·column p
    for (let j = 0; j < n; j++) A[p][j] += c * A[q][j];
    for (let i = 0; i < n; i++) A[i][q] -= c * A[i][p];
  }
  const perm = Array.from({ length: n }, (_, i) => i);
  for (let i = n - 1; i > 0; i--) {
    const j = Math.floor(r() * (i + 1));
    [perm[i], perm[j]] = [perm[j], perm[i]];
  }
  const P: number[][] = Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => A[perm[i]][perm[j]]));
  return { J: fromDense(P), dense: P };
}

/**
 * Five-point Dirichlet Laplacian on an nx × ny interior grid of a lx × ly rectangle, plus a
 * diagonal term c(i, j). With c constant its eigenvalues are, exactly (LeVeque, Finite Difference Methods for ODEs and PDEs, SIAM 2007, §2.10, from memory),
 * −(4/hx²) sin²(aπhx/(2lx)) − (4/hy²) sin²(bπhy/(2ly)) + c.
 */
export function laplacian2d(nx: number, ny: number, lx: number, ly: number, c: (i: number, j: number) => number): CscMatrix {
  const hx = lx / (nx + 1);
  const hy = ly / (ny + 1);
  const n = nx * ny;
  const tb = new TripletBuilder(n, n, 5 * n);
  const id = (i: number, j: number) => j * nx + i;
  for (let j = 0; j < ny; j++) {
    for (let i = 0; i < nx; i++) {
      const k = id(i, j);
      tb.add(k, k, -2 / (hx * hx) - 2 / (hy * hy) + c(i, j));
      if (i > 0) tb.add(k, id(i - 1, j), 1 / (hx * hx));
      if (i < nx - 1) tb.add(k, id(i + 1, j), 1 / (hx * hx));
      if (j > 0) tb.add(k, id(i, j - 1), 1 / (hy * hy));
      if (j < ny - 1) tb.add(k, id(i, j + 1), 1 / (hy * hy));
    }
  }
  return tb.toCsc();
}

/** Exact eigenvalues of laplacian2d with constant c, sorted by decreasing value. */
export function laplacian2dEigenvalues(nx: number, ny: number, lx: number, ly: number, c: number): number[] {
  const hx = lx / (nx + 1);
  const hy = ly / (ny + 1);
  const out: number[] = [];
  for (let a = 1; a <= nx; a++) {
    for (let b = 1; b <= ny; b++) {
      out.push(c - (4 / (hx * hx)) * Math.sin((a * Math.PI * hx) / (2 * lx)) ** 2 - (4 / (hy * hy)) * Math.sin((b * Math.PI * hy) / (2 * ly)) ** 2);
    }
  }
  return out.sort((x, y) => y - x);
}

/** A tridiagonal Toeplitz factor tridiag(sub, diag, sup) of order m. */
export interface TridiagonalFactor {
  m: number;
  diag: number;
  sub: number;
  sup: number;
}

/**
 * Exact eigenvalues of tridiag(sub, diag, sup) of order m: diag + 2·sqrt(sub·sup)·cos(kπ/(m+1)),
 * k = 1..m, a conjugate pair family when sub·sup < 0 (the standard result for tridiagonal
 * Toeplitz matrices, e.g. G. D. Smith, Numerical Solution of Partial Differential Equations,
 * from memory). With sub·sup ≠ 0 they are distinct, so the matrix is diagonalisable.
 */
export function tridiagonalEigenvalues(f: TridiagonalFactor): { re: number; im: number }[] {
  const p = f.sub * f.sup;
  const out: { re: number; im: number }[] = [];
  for (let k = 1; k <= f.m; k++) {
    const c = 2 * Math.cos((k * Math.PI) / (f.m + 1)) * Math.sqrt(Math.abs(p));
    const re = f.diag + (p >= 0 ? c : 0);
    const im = p >= 0 ? 0 : c;
    out.push({ re, im: Math.abs(im) < 1e-15 * Math.max(1, Math.abs(f.diag)) ? 0 : im });
  }
  return out;
}

/**
 * The Kronecker sum F₁ ⊕ F₂ ⊕ … of tridiagonal factors (sparse, order Π mᵢ), scrambled by a
 * random symmetric permutation and a random positive diagonal similarity (neither changes the
 * spectrum), plus `shift`·I. Its eigenvalues are exactly the sums λ_{i₁}(F₁) + λ_{i₂}(F₂) + … +
 * shift (Horn & Johnson, Topics in Matrix Analysis, §4.4, from memory): equal factors give
 * repeated eigenvalues (2 for two equal factors, up to 6 for three), and factors with
 * sub·sup < 0 give complex pairs, repeated too.
 */
export function kroneckerSum(factors: TridiagonalFactor[], shift: number, seed: number): { J: CscMatrix; spectrum: { re: number; im: number }[] } {
  const r = rng(seed);
  const n = factors.reduce((p, f) => p * f.m, 1);
  const perm = Array.from({ length: n }, (_, i) => i);
  for (let i = n - 1; i > 0; i--) {
    const j = Math.floor(r() * (i + 1));
    [perm[i], perm[j]] = [perm[j], perm[i]];
  }
  const d = Array.from({ length: n }, () => Math.exp(r() - 0.5));
  const tb = new TripletBuilder(n, n, 3 * factors.length * n);
  const add = (i: number, j: number, v: number) => tb.add(perm[i], perm[j], (v * d[i]) / d[j]);
  let stride = 1;
  for (const f of factors) {
    // the factor acts on digit (index / stride) mod m of the multi-index
    for (let i = 0; i < n; i++) {
      const digit = Math.floor(i / stride) % f.m;
      add(i, i, f.diag);
      if (digit > 0) add(i, i - stride, f.sub);
      if (digit < f.m - 1) add(i, i + stride, f.sup);
    }
    stride *= f.m;
  }
  for (let i = 0; i < n; i++) add(i, i, shift);
  let spectrum = [{ re: shift, im: 0 }];
  for (const f of factors) {
    const ev = tridiagonalEigenvalues(f);
    spectrum = spectrum.flatMap((s) => ev.map((e) => ({ re: s.re + e.re, im: s.im + e.im })));
  }
  // conjugate parts that cancel (i·a − i·a) leave rounding: those sums are real
  const size = Math.abs(shift) + factors.reduce((t, f) => t + Math.abs(f.diag) + 2 * Math.sqrt(Math.abs(f.sub * f.sup)), 0);
  for (const v of spectrum) if (Math.abs(v.im) <= 1e-14 * size) v.im = 0;
  return { J: tb.toCsc(), spectrum: spectrum.sort((a, b) => b.re - a.re || b.im - a.im) };
}

type C = { re: number; im: number };

/** Equal to the solver's cluster rule: relative 1e-6 (the tests below avoid the borderline). */
export function sameEigenvalue(a: C, b: C, scale: number): boolean {
  return Math.hypot(a.re - b.re, a.im - b.im) <= 1e-6 * Math.max(Math.hypot(a.re, a.im), Math.hypot(b.re, b.im), 1e-3 * scale);
}

/**
 * Whether `got` is a correct answer for `count` rightmost values of the exact spectrum: at least
 * `count` values, every exact eigenvalue right of its last real part listed, and every value
 * listed with all its copies (its whole cluster, its conjugate). Values with equal real parts are
 * equally rightmost, so which of them close the list is free. Values agree to relTol·scale.
 */
export function rightmostListProblem(got: C[], sorted: C[], count: number, scale: number, relTol = 1e-8): string | null {
  const tol = relTol * scale;
  if (got.length < count) return `only ${got.length} values`;
  const last = Math.min(...got.map((v) => v.re));
  const mustHave = sorted.filter((v) => v.re > last + tol);
  if (missingFrom(mustHave, got, () => tol) > 0) return `an eigenvalue right of ${last} is missing`;
  for (const v of got) {
    const copies = (a: C[]) => a.filter((w) => sameEigenvalue(w, v, scale)).length;
    if (copies(got) !== copies(sorted)) return `${v.re} ${v.im}i listed ${copies(got)} times, multiplicity ${copies(sorted)}`;
    if (v.im !== 0 && !got.some((w) => w.re === v.re && w.im === -v.im)) return `the pair of ${v.re} ${v.im}i is split`;
  }
  return null;
}

/** How many of `values` find no distinct partner in `pool` within tol(partner). */
export function missingFrom(values: C[], pool: C[], tol: (w: C) => number): number {
  const used = new Array<boolean>(pool.length).fill(false);
  let missing = 0;
  for (const g of values) {
    let bi = -1;
    let bd = Infinity;
    pool.forEach((w, i) => {
      if (used[i]) return;
      const d = Math.hypot(g.re - w.re, g.im - w.im);
      if (d < bd) {
        bd = d;
        bi = i;
      }
    });
    if (bi < 0 || bd > tol(pool[bi])) missing++;
    else used[bi] = true;
  }
  return missing;
}

/** Whether two multisets are equal within tol. */
export function sameMultiset(got: C[], want: C[], tol: (w: C) => number): boolean {
  return got.length === want.length && missingFrom(got, want, tol) === 0;
}
