/**
 * Stability along a branch: the rightmost eigenvalues of J v = μ M v at every point (Krylov–Schur
 * with a Cayley transform, src/linalg/eigen.ts), the count of unstable eigenvalues, and the
 * location of Hopf points — where a complex pair crosses the imaginary axis, which no determinant
 * can see. Hopf points are located along the arc by the Illinois regula falsi on the real part of
 * the crossing pair, to the requested tolerance in the parameter.
 */
import { performance } from 'node:perf_hooks';
import { EigenTracker, type EigenWarmStart, type FactoredShift, type RightmostResult } from '../linalg/eigen.js';
import { arcPoint } from './branch-point.js';
import type { ContinuationSystem } from './system.js';
import type { NewtonSettings, PointStability } from './types.js';
import { matchPairs, valuesNearAxis } from './crossings.js';

/** Imaginary parts below this fraction of the spectrum's scale count as real. */
const REAL_TOLERANCE = 1e-8;

/** Eigen-solver tolerance while locating Hopf points (the crossing pair's real part decides). */
const LOCATION_TOLERANCE = 1e-11;

export class StabilityAnalyser {
  private readonly tracker: EigenTracker;
  /** A tighter solver for locating Hopf points, made on first use. */
  private precise: EigenTracker | undefined;
  private readonly values: Float64Array;

  constructor(
    private readonly sys: ContinuationSystem,
    readonly count: number,
  ) {
    const problem = sys.problem;
    const pattern = problem.pattern();
    this.tracker = new EigenTracker(pattern, { count, mass: problem.massDiagonal, certifyAbove: 0, lu: sys.luOptions });
    this.values = new Float64Array(pattern.colPtr[pattern.cols]);
  }

  /** Seconds spent in eigenvalue computations (Jacobian evaluation included). */
  seconds = 0;

  get totals(): { calls: number; solves: number; factorisations: number } {
    const a = this.tracker.totals;
    const b = this.precise?.totals ?? { calls: 0, solves: 0, factorisations: 0 };
    return { calls: a.calls + b.calls, solves: a.solves + b.solves, factorisations: a.factorisations + b.factorisations };
  }

  /**
   * Rightmost eigenvalues at x = (u, λ), warm-started from `warm` (null: cold start); `precise`
   * uses a tolerance of 1e-11 (for locating Hopf points); `shared`: solves with J at x that the
   * caller already has (see ContinuationSystem.jacobianSolver), used when shift 0 suits the search.
   */
  analyse(x: Float64Array, warm: EigenWarmStart | null, precise = false, shared?: FactoredShift): { stability: PointStability; warm: EigenWarmStart } {
    const n = this.sys.n;
    const t0 = performance.now();
    this.sys.problem.jacobian(x.subarray(0, n), this.sys.params(x[n]), this.values);
    let tracker = this.tracker;
    if (precise) {
      const problem = this.sys.problem;
      this.precise ??= new EigenTracker(problem.pattern(), { count: this.count, mass: problem.massDiagonal, tolerance: LOCATION_TOLERANCE, certifyAbove: 0, lu: this.sys.luOptions });
      tracker = this.precise;
    }
    const r = tracker.compute(this.values, { warmStart: warm, factored: shared });
    this.seconds += (performance.now() - t0) / 1000;
    return { stability: summarise(r, this.count), warm: r.warmStart };
  }

  /** Start the eigen solver afresh, as a new analyser would (see EigenTracker.restart). */
  restart(): void {
    this.tracker.restart();
    this.precise?.restart();
  }

  dispose(): void {
    this.tracker.dispose();
    this.precise?.dispose();
  }
}

/** The size of the eigenvalues found (at least 1): imaginary parts below REAL_TOLERANCE of it count as real. */
function spectralScale(values: readonly { re: number; im: number }[]): number {
  let m = 1;
  for (const v of values) m = Math.max(m, Math.hypot(v.re, v.im));
  return m;
}

/**
 * Stability of a point from its eigenvalue search. The unstable count is the number of
 * eigenvalues with positive real part found right of the imaginary axis (all of them, also
 * beyond `count`: the tracker certifies Re μ ≥ 0); `complete` says that list is certified
 * complete, and only then is a point with no unstable eigenvalue called stable.
 */
export function summarise(r: RightmostResult, count: number): PointStability {
  const vals = r.values;
  const right = r.rightOf?.values ?? vals;
  const scale = spectralScale([...vals, ...right]);
  let unstable = 0;
  let unstableComplex = 0;
  for (const v of right) {
    if (v.re > 0) {
      unstable++;
      if (Math.abs(v.im) > REAL_TOLERANCE * scale) unstableComplex++;
    }
  }
  const lead = vals[0] ?? { re: NaN, im: NaN };
  const complete = r.rightOf ? r.rightOf.certified : r.converged && r.searchedRegion.certifiedAbove !== null && r.searchedRegion.certifiedAbove <= 0;
  let stable: boolean | null;
  if (lead.re > 0) stable = false;
  else if (complete) stable = true;
  else stable = null;
  return {
    stable,
    unstableCount: unstable,
    unstableComplex,
    leadingReal: lead.re,
    leadingImag: Math.abs(lead.im) <= REAL_TOLERANCE * scale ? 0 : lead.im,
    eigenvalues: vals.slice(0, Math.max(count, vals.length)).map((v) => ({ re: v.re, im: v.im, residual: v.residual })),
    complete,
    searched: r.searchedRegion.description,
    ...(r.rightOf ? { nearAxis: nearAxis(r.rightOf.values, vals, r.rightOf.next) } : {}),
  };
}

/** The values right of the axis, then those listed or found next left of it, each once. */
function nearAxis(...lists: { re: number; im: number }[][]): { re: number; im: number }[] {
  const out: { re: number; im: number }[] = [];
  for (const list of lists) for (const v of list) if (!out.some((w) => w.re === v.re && w.im === v.im)) out.push({ re: v.re, im: v.im });
  return out;
}

/** The complex eigenvalue (Im > 0) found near the axis at `s` nearest to `target`, or undefined. */
export function pairNear(s: PointStability, target: { re: number; im: number }): { re: number; im: number } | undefined {
  let best: { re: number; im: number } | undefined;
  let bestDistance = Infinity;
  const values = valuesNearAxis(s);
  const scale = spectralScale(values);
  for (const v of values) {
    if (v.im <= REAL_TOLERANCE * scale) continue;
    const d = Math.hypot(v.re - target.re, v.im - target.im);
    if (d < bestDistance) {
      best = v;
      bestDistance = d;
    }
  }
  return best;
}

/**
 * The complex pair that crossed between a and b: of the pairs matched between the two points
 * (crossings.ts, over every value found near the axis — the pair crossing may lie beyond the
 * listed ones when more are unstable than listed), the one whose real part changed sign with the
 * least move.
 */
export function crossingPair(a: PointStability, b: PointStability): { a: { re: number; im: number }; b: { re: number; im: number } } | undefined {
  let best: { a: { re: number; im: number }; b: { re: number; im: number }; gap: number } | undefined;
  for (const m of matchPairs(valuesNearAxis(a), valuesNearAxis(b))) {
    if (Math.sign(m.a.re) === Math.sign(m.b.re)) continue;
    const gap = Math.hypot(m.b.re - m.a.re, m.b.im - m.a.im);
    if (!best || gap < best.gap) best = { a: m.a, b: m.b, gap };
  }
  return best ? { a: best.a, b: best.b } : undefined;
}

export interface HopfLocation {
  converged: boolean;
  x: Float64Array;
  frequency: number;
  stability: PointStability;
  s: number;
  message?: string;
}

/**
 * Locate a Hopf point between xa (step 0) and the point at step sEnd along the tangent ta.
 * `reA` and `reB` are the real parts of the crossing pair at the two ends, `im` its imaginary part.
 */
export function locateHopf(
  sys: ContinuationSystem,
  analyser: StabilityAnalyser,
  xa: Float64Array,
  ta: Float64Array,
  sEnd: number,
  pair: { a: { re: number; im: number }; b: { re: number; im: number } },
  warm: EigenWarmStart | null,
  newton: NewtonSettings,
  tolerance: number,
  maxIterations = 50,
): HopfLocation {
  const n = sys.n;
  type End = { s: number; f: number; x: Float64Array; im: number };
  let lo: End = { s: 0, f: pair.a.re, x: xa.slice(), im: pair.a.im };
  let hi: End = { s: sEnd, f: pair.b.re, x: xa.slice(), im: pair.b.im };
  for (let i = 0; i <= n; i++) hi.x[i] = xa[i] + sEnd * ta[i];
  let side = 0;
  let last: { x: Float64Array; stability: PointStability; im: number } | undefined;
  let w = warm;
  let fLo = lo.f;
  let fHi = hi.f;
  for (let it = 0; it < maxIterations; it++) {
    let s = (lo.s * fHi - hi.s * fLo) / (fHi - fLo);
    const span = hi.s - lo.s;
    if (!(s > lo.s + 1e-3 * span && s < hi.s - 1e-3 * span)) s = lo.s + 0.5 * span;
    const x = arcPoint(sys, xa, ta, s, newton);
    if (!x) return { converged: false, x: lo.x, frequency: lo.im, stability: last?.stability ?? emptyStability(), s: lo.s, message: 'a point on the arc did not converge while locating a Hopf point' };
    const a = analyser.analyse(x, w, true);
    w = a.warm;
    // follow the pair: the eigenvalue nearest to the interpolation between the bracket's ends
    const theta = (s - lo.s) / (hi.s - lo.s);
    const v = pairNear(a.stability, { re: lo.f + theta * (hi.f - lo.f), im: lo.im + theta * (hi.im - lo.im) });
    if (!v) return { converged: false, x, frequency: lo.im, stability: a.stability, s, message: 'the crossing pair was lost while locating a Hopf point' };
    last = { x, stability: a.stability, im: v.im };
    const t: End = { s, f: v.re, x, im: v.im };
    if (Math.sign(t.f) === Math.sign(lo.f)) {
      lo = t;
      fLo = t.f;
      if (side === -1) fHi /= 2;
      side = -1;
    } else {
      hi = t;
      fHi = t.f;
      if (side === 1) fLo /= 2;
      side = 1;
    }
    if (t.f === 0 || Math.abs(hi.x[n] - lo.x[n]) <= tolerance * Math.max(1, Math.abs(x[n]))) {
      const best = Math.abs(lo.f) < Math.abs(hi.f) ? lo : hi;
      const x2 = best.x;
      return { converged: true, x: x2, frequency: best.im, stability: last.stability, s: best.s };
    }
  }
  return { converged: false, x: last?.x ?? lo.x, frequency: last?.im ?? lo.im, stability: last?.stability ?? emptyStability(), s: lo.s, message: `Hopf location stopped after ${maxIterations} iterations` };
}

function emptyStability(): PointStability {
  return { stable: null, unstableCount: 0, unstableComplex: 0, leadingReal: NaN, leadingImag: NaN, eigenvalues: [], complete: false, searched: '' };
}

/**
 * Locate where the number of unstable real eigenvalues changes between the arc's start (step 0)
 * and step sEnd, by bisection on the count (for crossings the determinant cannot see).
 */
export function locateCountChange(
  sys: ContinuationSystem,
  analyser: StabilityAnalyser,
  xa: Float64Array,
  ta: Float64Array,
  sEnd: number,
  countA: number,
  warm: EigenWarmStart | null,
  newton: NewtonSettings,
  tolerance: number,
  maxIterations = 60,
): { converged: boolean; x: Float64Array; s: number } {
  const n = sys.n;
  let lo = 0;
  let hi = sEnd;
  let xLo = xa;
  let xHi: Float64Array | undefined;
  let w = warm;
  for (let it = 0; it < maxIterations; it++) {
    const mid = 0.5 * (lo + hi);
    const x = arcPoint(sys, xa, ta, mid, newton);
    if (!x) break;
    const a = analyser.analyse(x, w);
    w = a.warm;
    const real = a.stability.unstableCount - a.stability.unstableComplex;
    if (real === countA) {
      lo = mid;
      xLo = x;
    } else {
      hi = mid;
      xHi = x;
    }
    if (xHi && Math.abs(xHi[n] - xLo[n]) <= tolerance * Math.max(1, Math.abs(xLo[n]))) {
      const x2 = new Float64Array(n + 1);
      for (let i = 0; i <= n; i++) x2[i] = 0.5 * (xLo[i] + xHi[i]);
      return { converged: true, x: x2, s: 0.5 * (lo + hi) };
    }
  }
  return { converged: false, x: xHi ?? xLo, s: hi };
}
