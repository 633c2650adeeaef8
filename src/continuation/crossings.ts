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

type C = { re: number; im: number };

/** The values to match between neighbouring points: all found near the axis when reported. */
export function valuesNearAxis(s: PointStability): C[] {
  return s.nearAxis ?? s.eigenvalues;
}

/**
 * The eigenvalues with Im > 0 of a and b matched one to one (as many as the shorter list has) so
 * that the sum of squared distances is least (an assignment problem, solved exactly by the
 * Hungarian method). Matching each value of a to its nearest in b instead fails where pairs lie
 * closer to one another than a step moves them: on the gel-spots trace every pair moves ~6e-4
 * per step, more than the ~5.5e-4 between the crossing pair and its stable neighbour's next
 * value, and the pair crossing the axis was matched to that neighbour (no Hopf point located). The least sum of squares is
 * unchanged by a common drift of all values (Σ|a_i + t − a_π(i)|² is least for π = identity), the
 * usual motion along a branch.
 */
export function matchPairs(a: readonly C[], b: readonly C[]): { a: C; b: C }[] {
  const ua = a.filter((v) => v.im > REAL_TOLERANCE * scaleOf(a));
  const ub = b.filter((v) => v.im > REAL_TOLERANCE * scaleOf(b));
  if (ua.length === 0 || ub.length === 0) return [];
  const flip = ua.length > ub.length;
  const rows = flip ? ub : ua;
  const cols = flip ? ua : ub;
  const cost = rows.map((r) => cols.map((c) => (r.re - c.re) ** 2 + (r.im - c.im) ** 2));
  return assignment(cost).map((j, i) => (flip ? { a: cols[j], b: rows[i] } : { a: rows[i], b: cols[j] }));
}

/**
 * The least-cost assignment of each row to a distinct column (rows ≤ columns): the Hungarian
 * method with potentials, O(rows² · columns) (Kuhn–Munkres, as in the usual textbook form, from
 * memory). Returns the column of each row.
 */
function assignment(cost: number[][]): number[] {
  const n = cost.length;
  const m = cost[0].length;
  const u = new Float64Array(n + 1);
  const v = new Float64Array(m + 1);
  const p = new Int32Array(m + 1);
  const way = new Int32Array(m + 1);
  for (let i = 1; i <= n; i++) {
    p[0] = i;
    let j0 = 0;
    const minv = new Float64Array(m + 1).fill(Infinity);
    const used = new Uint8Array(m + 1);
    do {
      used[j0] = 1;
      const i0 = p[j0];
      let delta = Infinity;
      let j1 = 0;
      for (let j = 1; j <= m; j++) {
        if (used[j]) continue;
        const cur = cost[i0 - 1][j - 1] - u[i0] - v[j];
        if (cur < minv[j]) {
          minv[j] = cur;
          way[j] = j0;
        }
        if (minv[j] < delta) {
          delta = minv[j];
          j1 = j;
        }
      }
      for (let j = 0; j <= m; j++) {
        if (used[j]) {
          u[p[j]] += delta;
          v[j] -= delta;
        } else minv[j] -= delta;
      }
      j0 = j1;
    } while (p[j0] !== 0);
    do {
      const j1 = way[j0];
      p[j0] = p[j1];
      j0 = j1;
    } while (j0 !== 0);
  }
  const out = new Array<number>(n);
  for (let j = 1; j <= m; j++) if (p[j] !== 0) out[p[j] - 1] = j - 1;
  return out;
}

/**
 * Signed count change from complex pairs crossing the imaginary axis between a and b: the values
 * with Im > 0 found near the axis at both points, matched (matchPairs); a pair whose real part
 * changes sign contributes +2 (into the right half-plane) or −2.
 */
export function pairCrossings(a: PointStability, b: PointStability): number {
  let change = 0;
  for (const m of matchPairs(valuesNearAxis(a), valuesNearAxis(b))) if (m.a.re > 0 !== m.b.re > 0) change += m.b.re > 0 ? 2 : -2;
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
