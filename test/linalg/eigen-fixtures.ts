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
