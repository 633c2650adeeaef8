/**
 * Certification of the searched region: which part of the complex plane a call has searched,
 * and whether the list returned is certified the rightmost.
 *
 * Each converged search claims a disc (search.ts). A box holding every eigenvalue comes from
 * Bendixson's theorem (1902) after the scaling M^{-1/2} and a symmetrising positive diagonal
 * similarity (|Im μ| ≤ ‖skew part‖, Re μ ≤ largest Gershgorin bound of the symmetric part) and
 * from Gershgorin's discs of M⁻¹J by rows and columns (Re μ). The union of the claimed discs,
 * walked leftwards from the box's right edge at the box's imaginary half-height, gives the line
 * `certifiedAbove`: every eigenvalue with real part ≥ it (and inside the box) is among those
 * found. When that line does not reach the last returned real part, the strategy (strategy.ts)
 * widens its next Cayley shift.
 *
 * Searched region reported: the discs, `certifiedAbove`, the box, `complete` (the returned list
 * is certified the rightmost: only with a positive diagonal mass, since with zero masses no box
 * is known to hold the finite eigenvalues) and a sentence saying all this in words. Krylov
 * methods can still miss an eigenvalue whose eigenvector is nearly absent from the search space;
 * the statement is the usual Krylov one and says so.
 */
import { Matrix, inverse } from 'ml-matrix';
import type { CscMatrix } from '../sparse.js';
import { axpy, dot } from '../vector.js';
import type { SearchDisc, SearchedRegion } from './types.js';

export interface Enclosure {
  realMax: number;
  imaginaryMax: number;
  rigorous: boolean;
}

/**
 * Box {Re μ ≤ realMax, |Im μ| ≤ imaginaryMax} holding every finite eigenvalue of J v = μ M v
 * for a non-negative diagonal M: with W = D M^{-1/2} J M^{-1/2} D⁻¹ on the unknowns of positive
 * mass (D a positive diagonal chosen below), Bendixson's theorem bounds Re μ by the largest
 * eigenvalue of (W + Wᵀ)/2 and |Im μ| by ‖(W − Wᵀ)/2‖₂; Gershgorin row sums bound both;
 * Gershgorin discs of M⁻¹J bound Re μ as well (positive M only). With zero masses (algebraic
 * unknowns: multipliers, phase conditions) the finite eigenvalues lie in the field of values of
 * W compressed to the constraints, widened by `algebraicRadius` (below); the box is rigorous
 * when that radius can be computed. A negative mass leaves the box not rigorous.
 */
export function spectrumEnclosure(J: CscMatrix, Jt: CscMatrix, mass: Float64Array | undefined): Enclosure {
  const n = J.cols;
  const s = new Float64Array(n);
  let rigorous = true;
  const algebraic: number[] = [];
  for (let i = 0; i < n; i++) {
    const m = mass ? mass[i] : 1;
    if (m > 0) s[i] = 1 / Math.sqrt(m);
    else {
      s[i] = 0;
      if (m === 0) algebraic.push(i);
      else rigorous = false;
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
  if (algebraic.length > 0) {
    // only the field-of-values bounds hold for the compression to the constraints
    const rho = rigorous ? algebraicRadius(J, algebraic, s, d) : null;
    if (!Number.isFinite(realMax)) realMax = 0;
    if (rho === null) return { realMax, imaginaryMax: imagMax, rigorous: false };
    return { realMax: realMax + rho, imaginaryMax: imagMax + rho, rigorous };
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

/** Most algebraic unknowns handled by `algebraicRadius` (their algebra is dense). */
const MAX_ALGEBRAIC = 16;

/**
 * The finite eigenvalues of a pencil with k algebraic unknowns y (zero mass): with x the scaled
 * differential unknowns, A = W as in spectrumEnclosure and B, C, E the scaled coupling blocks,
 *
 *     A x + B y = μ x,   C x + E y = 0.
 *
 * Algebraic unknowns with E_SS nonsingular (index 1) are eliminated: A' = A − B_S E_SS⁻¹ C_S,
 * whose field of values lies within ρ₁ = ‖B_S‖·‖E_SS⁻¹C_S‖ of A's. The rest must then have
 * E' = 0 (index 2: constraints C' x = 0 on the differential unknowns, multipliers y entering
 * through B'); for an eigenpair with ‖x‖ = 1, y = −(C'B')⁻¹C'A'x and
 *
 *     μ = xᴴA'x − xᴴ B'⊥ (C'B')⁻¹ C'A' x,    B'⊥ = B' − C'ᵀ(C'C'ᵀ)⁻¹C'B'  (xᴴC'ᵀ = 0),
 *
 * so μ lies within ρ₂ = ‖B'⊥(C'B')⁻¹‖·‖C'A'‖ of the field of values of A' (Frobenius norms
 * bound the 2-norms). When the multipliers enter along the constraint directions (B' ∥ C'ᵀ,
 * as for a variational constraint in the inner product D symmetrises) B'⊥ and ρ₂ vanish and
 * the finite spectrum keeps A's box. Returns ρ₁ + ρ₂, or null when the structure is not of
 * this kind (then no rigorous box is claimed).
 */
function algebraicRadius(J: CscMatrix, alg: number[], s: Float64Array, d: Float64Array): number | null {
  const n = J.cols;
  const k = alg.length;
  if (k > MAX_ALGEBRAIC) return null;
  const pos = new Int32Array(n).fill(-1);
  alg.forEach((a, i) => (pos[a] = i));
  const B = alg.map(() => new Float64Array(n));
  const C = alg.map(() => new Float64Array(n));
  const E = alg.map(() => new Array<number>(k).fill(0));
  for (let j = 0; j < n; j++) {
    const cj = pos[j];
    for (let p = J.colPtr[j]; p < J.colPtr[j + 1]; p++) {
      const i = J.rowIdx[p];
      const ri = pos[i];
      const v = J.values[p];
      if (cj >= 0 && ri >= 0) E[ri][cj] += v;
      else if (cj >= 0) B[cj][i] += d[i] * s[i] * v;
      else if (ri >= 0) C[ri][j] += (v * s[j]) / d[j];
    }
  }
  const S: number[] = [];
  const R: number[] = [];
  for (let a = 0; a < k; a++) (E[a][a] !== 0 ? S : R).push(a);
  let eNorm = 0;
  for (const row of E) for (const v of row) eNorm = Math.max(eNorm, Math.abs(v));
  // index 1: eliminate S
  let Einv: number[][] = [];
  if (S.length > 0) {
    const inv = smallInverse(S.map((a) => S.map((b) => E[a][b])));
    if (!inv) return null;
    Einv = inv;
  }
  // V = E_SS⁻¹ C_S (|S| rows), B' = B_R − B_S E_SS⁻¹ E_SR, C' = C_R − E_RS E_SS⁻¹ C_S, E' = E_RR − E_RS E_SS⁻¹ E_SR
  const V = S.map((_, r) => combine(S.map((_, c) => Einv[r][c]), S.map((a) => C[a]), n));
  const Bp = R.map((b) => {
    const coef = S.map((_, r) => -S.reduce((acc, _a, c) => acc + Einv[r][c] * E[S[c]][b], 0));
    const out = combine(coef, S.map((a) => B[a]), n);
    for (let i = 0; i < n; i++) out[i] += B[b][i];
    return out;
  });
  const Cp = R.map((a) => {
    const coef = S.map((_, c) => -S.reduce((acc, _s, r) => acc + E[a][S[r]] * Einv[r][c], 0));
    const out = combine(coef, S.map((b) => C[b]), n);
    for (let i = 0; i < n; i++) out[i] += C[a][i];
    return out;
  });
  for (const a of R) {
    for (const b of R) {
      let e = E[a][b];
      for (let r = 0; r < S.length; r++) for (let c = 0; c < S.length; c++) e -= E[a][S[r]] * Einv[r][c] * E[S[c]][b];
      if (Math.abs(e) > 1e-12 * Math.max(eNorm, 1e-300)) return null;
    }
  }
  let rho = S.length > 0 ? frobenius(S.map((a) => B[a])) * frobenius(V) : 0;
  if (R.length > 0) {
    const G = Cp.map((c) => Bp.map((b) => dot(c, b)));
    const Ginv = smallInverse(G);
    const Pinv = smallInverse(Cp.map((c) => Cp.map((c2) => dot(c, c2))));
    if (!Ginv || !Pinv) return null;
    // B'⊥ = B' − C'ᵀ P⁻¹ G, then X = B'⊥ G⁻¹
    const PG = Pinv.map((row) => G[0].map((_, c) => row.reduce((acc, v, t) => acc + v * G[t][c], 0)));
    const Bperp = Bp.map((b, c) => {
      const out = Float64Array.from(b);
      for (let t = 0; t < R.length; t++) axpy(out, -PG[t][c], Cp[t]);
      return out;
    });
    const X = R.map((_, c) => combine(R.map((_, t) => Ginv[t][c]), Bperp, n));
    // C'A' = C'A − (C'B_S) V, with (C'A)_j = Σ_i C'_i A_ij over the differential entries of column j
    const CA = Cp.map((c) => {
      const out = new Float64Array(n);
      for (let j = 0; j < n; j++) {
        if (s[j] === 0) continue;
        let acc = 0;
        for (let p = J.colPtr[j]; p < J.colPtr[j + 1]; p++) {
          const i = J.rowIdx[p];
          if (s[i] !== 0) acc += c[i] * d[i] * s[i] * J.values[p];
        }
        out[j] = (acc * s[j]) / d[j];
      }
      S.forEach((a, r) => axpy(out, -dot(c, B[a]), V[r]));
      return out;
    });
    rho += frobenius(X) * frobenius(CA);
  }
  return Number.isFinite(rho) ? rho : null;
}

/** Σ_t coef[t]·rows[t] (a new vector of length n). */
function combine(coef: number[], rows: Float64Array[], n: number): Float64Array {
  const out = new Float64Array(n);
  coef.forEach((c, t) => axpy(out, c, rows[t]));
  return out;
}

function frobenius(rows: Float64Array[]): number {
  let s2 = 0;
  for (const r of rows) s2 += dot(r, r);
  return Math.sqrt(s2);
}

/** Inverse of a small dense matrix (ml-matrix), or null when it is singular or not finite. */
function smallInverse(a: number[][]): number[][] | null {
  if (a.length === 0) return [];
  try {
    const inv = inverse(new Matrix(a)).to2DArray();
    for (const row of inv) for (const v of row) if (!Number.isFinite(v)) return null;
    return inv;
  } catch {
    return null;
  }
}

/** Norm estimate sqrt(‖J‖₁‖J‖∞) ≥ ‖J‖₂. */
export function normEstimate(J: CscMatrix): number {
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
export function certifiedLine(discs: { center: number; radius: number }[], realMax: number, Y: number): number | null {
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

/**
 * Imaginary half-height Y the coverage is judged against: the enclosure's, or the caller's
 * `imaginaryReach` when smaller (or when the enclosure is not rigorous); below ~1e-10 of the
 * norm, an imaginary part is rounding.
 */
export function coverageHeight(enclosure: Enclosure, imaginaryReach: number | undefined, jNorm: number): number {
  let Y = enclosure.imaginaryMax;
  if (imaginaryReach !== undefined) Y = Math.min(Y, imaginaryReach);
  if (!enclosure.rigorous && imaginaryReach !== undefined) Y = imaginaryReach;
  if (Y <= 1e-10 * jNorm) Y = 0;
  return Y;
}

/** Whether a certified line (from certifiedLine) reaches down to the real part x. */
export function reaches(line: number | null, x: number): boolean {
  return line !== null && line <= x + 1e-12 * Math.max(1, Math.abs(x));
}

/**
 * The searched region of a call: `rightmost` is the largest real part found (−∞ for none),
 * `target` the real part down to which the list returned (`count` values) must be certified to
 * be complete (Infinity when the searches did not converge).
 */
export function searchedRegion(discs: SearchDisc[], enclosure: Enclosure, Y: number, rightmost: number, target: number, count: number): SearchedRegion {
  const realMax = Math.max(enclosure.realMax, rightmost);
  const line = discs.length > 0 ? certifiedLine(discs, realMax, Y) : null;
  const covered = Number.isFinite(target) && reaches(line, target);
  return {
    discs,
    certifiedAbove: line,
    enclosure: { realMax: enclosure.realMax, imaginaryMax: enclosure.imaginaryMax, rigorous: enclosure.rigorous },
    imaginaryReach: Y,
    complete: covered && enclosure.rigorous,
    description: describeRegion(discs, line, enclosure, Y, covered, count, target),
  };
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
    ? `By Bendixson's and Gershgorin's theorems every finite eigenvalue has real part ≤ ${num(enc.realMax)} and |imaginary part| ≤ ${num(enc.imaginaryMax)}`
    : `No rigorous box is known to hold the spectrum (a negative mass, or zero-mass rows of a kind the bound does not cover); the rows of positive mass alone suggest real part ≤ ${num(enc.realMax)} and |imaginary part| ≤ ${num(enc.imaginaryMax)}`;
  parts.push(`${box}; coverage was judged for |imaginary part| ≤ ${num(Y)}.`);
  if (line !== null) {
    parts.push(`Every eigenvalue with real part ≥ ${num(line)} (and |imaginary part| ≤ ${num(Y)}) lies in the searched discs and is among those found.`);
  }
  if (covered && enc.rigorous) {
    parts.push(`So the ${count} values returned are the rightmost (as far as a Krylov search can tell: an eigenvector nearly absent from the search space can still be missed).`);
  } else if (covered) {
    parts.push(`The ${count} values returned are the rightmost within that region; outside it, eigenvalues cannot be excluded.`);
  } else if (!Number.isFinite(lastRe)) {
    parts.push('Not every search converged, so the list is not certified.');
  } else if (count > 0) {
    parts.push(
      `The search does not certify the list down to real part ${num(lastRe)}: an eigenvalue with real part between ${num(lastRe)} and ${line === null ? 'the enclosure bound' : num(line)} lying outside the discs (large imaginary part) could have been missed.`,
    );
  }
  return parts.join(' ');
}
