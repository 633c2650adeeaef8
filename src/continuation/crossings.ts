/**
 * Accounting for the unstable count between neighbouring points: every change must be explained
 * by eigenvalues crossing the imaginary axis where the engine sees (and locates) them —
 *
 *   - a fold: one real eigenvalue crosses zero (the tangent's parameter component changes sign);
 *   - a branch point: an odd number of real eigenvalues cross zero (the bordered determinant
 *     changes sign);
 *   - a Hopf point: a complex pair crosses the imaginary axis (±2; the pair is followed from one
 *     point to the next by nearest eigenvalue).
 *
 * The change is split into its pair part (signed: +2 per pair moving into the right half-plane,
 * −2 per pair leaving it) and its real part, the rest. The real part must agree with the folds
 * and branch points seen in parity and not exceed them in size. Two real eigenvalues meeting and
 * leaving the real axis as a pair change neither the count nor anything here: only crossings of
 * the imaginary axis count, never collisions away from it. Two real eigenvalues crossing zero
 * together (symmetric or periodic domains) leave the determinant's sign alone: a real part of ±2
 * with nothing seen is such a double crossing once the step is small enough to rule out two
 * separate ones.
 *
 * Only certified counts (`complete`: every eigenvalue with real part ≥ 0 found) are compared;
 * an uncertified count is a lower bound and proves nothing.
 */
import type { PointStability } from './types.js';

/** Imaginary parts below this fraction of the spectrum's scale count as real (as in stability.ts). */
const REAL_TOLERANCE = 1e-8;

function scaleOf(values: readonly { re: number; im: number }[]): number {
  let m = 1;
  for (const v of values) m = Math.max(m, Math.hypot(v.re, v.im));
  return m;
}

/**
 * Signed count change from complex pairs crossing the imaginary axis between a and b: each
 * eigenvalue of a with Im > 0 is matched to the nearest unused one of b with Im > 0; a pair whose
 * real part changes sign contributes +2 (into the right half-plane) or −2.
 */
export function pairCrossings(a: PointStability, b: PointStability): number {
  const ta = REAL_TOLERANCE * scaleOf(a.eigenvalues);
  const tb = REAL_TOLERANCE * scaleOf(b.eigenvalues);
  const candidates = b.eigenvalues.filter((v) => v.im > tb);
  const used = new Set<number>();
  let change = 0;
  for (const va of a.eigenvalues) {
    if (va.im <= ta) continue;
    let best = -1;
    let distance = Infinity;
    candidates.forEach((vb, k) => {
      if (used.has(k)) return;
      const d = Math.hypot(vb.re - va.re, vb.im - va.im);
      if (d < distance) {
        best = k;
        distance = d;
      }
    });
    if (best < 0) continue;
    used.add(best);
    const vb = candidates[best];
    if (va.re > 0 !== vb.re > 0) change += vb.re > 0 ? 2 : -2;
  }
  return change;
}

export interface CountAccount {
  /** Unstable counts at the two ends. */
  from: number;
  to: number;
  /** The change not carried by complex pairs crossing the axis. */
  real: number;
  /** Signed change carried by complex pairs. */
  pairs: number;
  /** Whether folds, branch points and pair crossings account for the change (true when there is none). */
  explained: boolean;
  /** Two real eigenvalues crossed zero with no sign change seen (a double crossing, or two crossings). */
  double: boolean;
}

/**
 * The account of a step from `a` to `b` in which a fold and/or a branch point was seen (or not);
 * undefined when either count is uncertified.
 */
export function accountStep(a: PointStability, b: PointStability, seen: { fold: boolean; branchPoint: boolean }): CountAccount | undefined {
  if (!a.complete || !b.complete) return undefined;
  const pairs = pairCrossings(a, b);
  const change = b.unstableCount - a.unstableCount;
  const real = change - pairs;
  const simple = (seen.fold ? 1 : 0) + (seen.branchPoint ? 1 : 0);
  // no real change is nothing to explain (a fold or branch point with no count change is a
  // different complaint, about the eigen solve: the engine warns about it)
  const explained = real === 0 || (Math.abs(real) <= simple && (real - simple) % 2 === 0);
  return { from: a.unstableCount, to: b.unstableCount, real, pairs, explained, double: !explained && simple === 0 && Math.abs(real) === 2 };
}

/**
 * The account of the first step of a branch that starts at a branch point where `multiplicity`
 * real eigenvalues are zero (their signs there mean nothing): the count at the first point must
 * lie between the origin's count without them and that count plus `multiplicity`.
 */
export function accountFirstStep(origin: PointStability, first: PointStability, multiplicity: number): CountAccount | undefined {
  if (!origin.complete || !first.complete) return undefined;
  const tol = REAL_TOLERANCE * scaleOf(origin.eigenvalues);
  const real = origin.eigenvalues.filter((v) => Math.abs(v.im) <= tol).sort((p, q) => Math.abs(p.re) - Math.abs(q.re));
  const critical = real.slice(0, multiplicity);
  const base = origin.unstableCount - critical.filter((v) => v.re > 0).length;
  const pairs = pairCrossings(origin, first);
  const realChange = first.unstableCount - pairs - base;
  const explained = realChange >= 0 && realChange <= critical.length;
  return { from: origin.unstableCount, to: first.unstableCount, real: realChange, pairs, explained, double: false };
}

/** Words for an unexplained change, e.g. "the unstable count changed from 1 to 2". */
export function changeText(a: CountAccount): string {
  return `the unstable count changed from ${a.from} to ${a.to}`;
}
