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
import type { CscMatrix } from '../sparse.js';
import type { SearchDisc, SearchedRegion } from './types.js';

export interface Enclosure {
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
export function spectrumEnclosure(J: CscMatrix, Jt: CscMatrix, mass: Float64Array | undefined): Enclosure {
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
 * `values` the list returned (rightmost first), `converged` whether every search converged and
 * the list is full.
 */
export function searchedRegion(discs: SearchDisc[], enclosure: Enclosure, Y: number, rightmost: number, converged: boolean, values: { re: number }[]): SearchedRegion {
  const realMax = Math.max(enclosure.realMax, rightmost);
  const line = discs.length > 0 ? certifiedLine(discs, realMax, Y) : null;
  const lastRe = values.length > 0 ? values[values.length - 1].re : Infinity;
  const covered = converged && reaches(line, lastRe);
  return {
    discs,
    certifiedAbove: line,
    enclosure: { realMax: enclosure.realMax, imaginaryMax: enclosure.imaginaryMax, rigorous: enclosure.rigorous },
    imaginaryReach: Y,
    complete: covered && enclosure.rigorous,
    description: describeRegion(discs, line, enclosure, Y, covered, values.length, lastRe),
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
