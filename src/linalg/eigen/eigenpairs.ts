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
  return x2 > 0 ? Math.sqrt(r2 / x2) : Infinity;
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

/** Largest number of (nearly) equal eigenvalues in the list (conjugates count apart). */
export function multiplicity(values: { re: number; im: number }[], floor: number): number {
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
export function selectRightmost<T extends { mu: Complex }>(sorted: T[], count: number): T[] {
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
