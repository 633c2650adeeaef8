/**
 * The eigenpairs found during one call: the bookkeeping shared by the strategy and the result —
 * sorting rightmost first, selecting the `count` rightmost without splitting a conjugate pair,
 * keeping conjugate pairs exact, and measuring multiplicity.
 */
import type { Complex } from '../schur.js';
import { type CscMatrix, matVec } from '../sparse.js';
import { cabs } from './transform.js';

/** A converged eigenpair μ, x = xr + i·xi with its residuals on J and M. */
export interface KnownPair {
  mu: Complex;
  xr: Float64Array;
  xi: Float64Array;
  residual: number;
  relativeResidual: number;
  converged: boolean;
}

/** ‖J x − μ M x‖ / ‖x‖ for the complex vector x = xr + i·xi (M diagonal, undefined = identity). */
export function pencilResidual(J: CscMatrix, mass: Float64Array | undefined, mu: Complex, xr: Float64Array, xi: Float64Array): number {
  const n = J.cols;
  return residualFromProducts(matVec(J, xr, new Float64Array(n)), matVec(J, xi, new Float64Array(n)), mass, mu, xr, xi);
}

/** ‖J x − μ M x‖ / ‖x‖ from J xr = jr and J xi = ji. */
function residualFromProducts(jr: Float64Array, ji: Float64Array, mass: Float64Array | undefined, mu: Complex, xr: Float64Array, xi: Float64Array): number {
  let r2 = 0;
  let x2 = 0;
  for (let i = 0; i < xr.length; i++) {
    const m = mass ? mass[i] : 1;
    const rr = jr[i] - m * (mu.re * xr[i] - mu.im * xi[i]);
    const ri = ji[i] - m * (mu.re * xi[i] + mu.im * xr[i]);
    r2 += rr * rr + ri * ri;
    x2 += xr[i] * xr[i] + xi[i] * xi[i];
  }
  return x2 > 0 ? Math.sqrt(r2 / x2) : Infinity;
}

/**
 * The value for the vector x = xr + i·xi with the least residual ‖J x − μ M x‖: μ* = (Mx)ᴴJx / ‖Mx‖²
 * (the Rayleigh quotient when M = I), kept only if its residual is below that of `mu`; a real μ
 * stays real. A Ritz value of a shift-invert or Cayley search is accurate relative to the
 * transformed operator: with the shift far from it (a Cayley shift ~1000 to certify the right
 * half-plane of an elastica whose eigenvalues of interest lie near −10) its error was ~1e-7
 * relative where its vector gives ~1e-9 this way.
 */
export function leastResidualValue(J: CscMatrix, mass: Float64Array | undefined, mu: Complex, xr: Float64Array, xi: Float64Array): { mu: Complex; residual: number } {
  const n = J.cols;
  const jr = matVec(J, xr, new Float64Array(n));
  const ji = matVec(J, xi, new Float64Array(n));
  let pr = 0;
  let pi = 0;
  let mm = 0;
  for (let i = 0; i < n; i++) {
    const m = mass ? mass[i] : 1;
    pr += m * (xr[i] * jr[i] + xi[i] * ji[i]);
    pi += m * (xr[i] * ji[i] - xi[i] * jr[i]);
    mm += m * m * (xr[i] * xr[i] + xi[i] * xi[i]);
  }
  const given = residualFromProducts(jr, ji, mass, mu, xr, xi);
  if (!(mm > 0)) return { mu, residual: given };
  const best = { re: pr / mm, im: mu.im === 0 ? 0 : pi / mm };
  const better = residualFromProducts(jr, ji, mass, best, xr, xi);
  return better < given ? { mu: best, residual: better } : { mu, residual: given };
}

/** Sort in place by decreasing real part, then decreasing imaginary part. */
export function sortRightmost<T extends { re: number; im: number }>(a: T[]): T[] {
  return a.sort((x, y) => (y.re !== x.re ? y.re - x.re : y.im - x.im));
}

/** −x (a new array). */
export function negated(x: Float64Array): Float64Array {
  const y = new Float64Array(x.length);
  for (let i = 0; i < x.length; i++) y[i] = -x[i];
  return y;
}

/**
 * Eigenvalues closer than this, relative to their modulus (plus an absolute floor), count as
 * equal: one cluster, listed whole. Multiple eigenvalues of symmetric grids come out of a Krylov
 * search equal to ~1e-10; distinct eigenvalues this close are listed together too, which is
 * harmless.
 */
export const CLUSTER_TOLERANCE = 1e-6;

/** Whether a and b belong to one cluster (see CLUSTER_TOLERANCE). */
export function sameCluster(a: Complex, b: Complex, floor: number): boolean {
  return cabs(a.re - b.re, a.im - b.im) <= CLUSTER_TOLERANCE * (Math.max(cabs(a.re, a.im), cabs(b.re, b.im)) + floor);
}

/** Largest number of equal eigenvalues in the list (conjugates count apart). */
export function multiplicity(values: Complex[], floor: number): number {
  let best = 1;
  for (const a of values) {
    let c = 0;
    for (const b of values) if (sameCluster(a, b, floor)) c++;
    best = Math.max(best, c);
  }
  return best;
}

/**
 * The `count` rightmost of a sorted list, extended so that neither a conjugate pair nor a
 * cluster of equal eigenvalues is split at the count-th place.
 */
export function selectRightmost<T extends { mu: Complex }>(sorted: T[], count: number, floor: number): T[] {
  const out = sorted.slice(0, count);
  if (out.length < count || count >= sorted.length) return out;
  const ref = out[count - 1].mu;
  const conj = { re: ref.re, im: -ref.im };
  const reach = CLUSTER_TOLERANCE * (cabs(ref.re, ref.im) + floor);
  for (let i = count; i < sorted.length && sorted[i].mu.re >= ref.re - 2 * reach; i++) {
    const v = sorted[i].mu;
    if (sameCluster(v, ref, floor) || (ref.im !== 0 && sameCluster(v, conj, floor))) out.push(sorted[i]);
  }
  return out;
}

/**
 * The real part down to which a search must be certified for the list `sel` (rightmost first)
 * to be complete: below its last value by the cluster tolerance, so that a missing member of
 * the cluster at its end would lie inside the certified region.
 */
export function listFloor(sel: { mu: Complex }[], floor: number): number {
  let low = Infinity;
  let size = 0;
  for (const k of sel) {
    low = Math.min(low, k.mu.re);
    size = Math.max(size, cabs(k.mu.re, k.mu.im));
  }
  return low - 2 * CLUSTER_TOLERANCE * (size + floor);
}

/** Groups of equal eigenvalues (sameCluster with the group's first member) in a sorted list. */
export function clusters<T extends { mu: Complex }>(sorted: T[], floor: number): T[][] {
  const out: T[][] = [];
  const used = new Set<number>();
  for (let i = 0; i < sorted.length; i++) {
    if (used.has(i)) continue;
    const group = [sorted[i]];
    used.add(i);
    for (let j = i + 1; j < sorted.length; j++) {
      if (used.has(j)) continue;
      if (sorted[j].mu.re < sorted[i].mu.re - 2 * CLUSTER_TOLERANCE * (cabs(sorted[i].mu.re, sorted[i].mu.im) + floor)) break;
      if (sameCluster(sorted[j].mu, sorted[i].mu, floor)) {
        group.push(sorted[j]);
        used.add(j);
      }
    }
    out.push(group);
  }
  return out;
}

/**
 * Close the list under conjugation: every member with Im μ > 0 comes with its exact conjugate
 * (re-made from it; the nearest member with Im μ < 0, when within the matching tolerance, is dropped), a member with
 * Im μ < 0 left over gets its conjugate too; sorted rightmost first.
 */
export function closeConjugates(known: KnownPair[], tolerance: number, floor: number): KnownPair[] {
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
    if (best && bd <= Math.max(1e3 * tolerance, 1e-9) * (cabs(k.mu.re, k.mu.im) + floor)) taken.add(best);
    pairs.push(k, { ...k, mu: { re: k.mu.re, im: -k.mu.im }, xi: negated(k.xi) });
  }
  for (const k of known) {
    if (k.mu.im >= 0 || taken.has(k)) continue;
    pairs.push({ ...k, mu: { re: k.mu.re, im: -k.mu.im }, xi: negated(k.xi) }, k);
  }
  const out = known.filter((k) => k.mu.im === 0).concat(pairs);
  out.sort((a, b) => (b.mu.re !== a.mu.re ? b.mu.re - a.mu.re : b.mu.im - a.mu.im));
  return out;
}

export function fmt(mu: Complex): string {
  const r = Number(mu.re.toPrecision(6));
  if (mu.im === 0) return `${r}`;
  const i = Number(Math.abs(mu.im).toPrecision(6));
  return `${r} ${mu.im < 0 ? '−' : '+'} ${i}i`;
}
