/**
 * Branch points: location along the arc, the directions of the crossing branch, and the location
 * of double crossings (two real eigenvalues at once, which the determinant cannot see).
 *
 * Location: the determinant of the bordered matrix [[J, F_λ], [r_uᵀ, r_λ]] changes sign at a simple
 * branch point (at a fold it does not: det J and the tangent's λ component change sign together).
 * Between two points with opposite signs, the arc is parametrised by the step s from the first
 * point (pseudo-arclength corrector with the same border row r, so the test function is
 * continuous in s), and s is found by the Illinois variant of regula falsi on the scaled
 * determinant, bracketing kept at every step, then a last secant step. Each trial point starts
 * from the interpolation between the bracket's ends: near the branch point two branches cross
 * the corrector's hyperplane close together and only such a predictor stays on the old one.
 *
 * Switching: at the located point the kernel K of [J F_λ] is two-dimensional. With ψ the left
 * null vector, the algebraic bifurcation equation (Keller 1977)
 *     Q(v) = ψᵀ F_xx[v, v] = 0   for v ∈ K
 * has two roots: the old branch's tangent and the new branch's. Both are computed in an
 * orthonormal basis of K (`branchDirections`); the old one is picked as the root nearer to the
 * old tangent a step before. F_xx uses the model's exact second derivatives where it has them.
 */
import { axpy, infNorm, scaleInPlace } from '../linalg/vector.js';
import { centralDifferenceStep, derivativeEvaluator } from '../problem/derivatives.js';
import { type ContinuationSystem, allFinite } from './system.js';
import { correct, correctWork } from './newton.js';
import type { EigenWarmStart } from '../linalg/eigen.js';
import { rethrowInterrupt } from '../linalg/lu.js';
import type { NewtonSettings, PointStability } from './types.js';

export interface TrialPoint {
  s: number;
  x: Float64Array;
  sign: number;
  logAbs: number;
}

export interface BranchPointLocation {
  converged: boolean;
  x: Float64Array;
  residual: number;
  /** The final bracket (for the secant tangent). */
  lo: TrialPoint;
  hi: TrialPoint;
  message?: string;
}

/**
 * The point of the branch at step s from xa along the tangent ta, corrected in the hyperplane
 * orthogonal to ta (so the arc is parametrised by s). Undefined when Newton fails.
 *
 * The predictor is xa + s·ta, or, given two converged arc points `between` = [(s₀, x₀), (s₁, x₁)]
 * around s, their linear interpolation (which lies in the same hyperplane). Near a branch point
 * the corrector's matrix is nearly singular and two branches cross the hyperplane close together:
 * only a predictor that close keeps Newton on the branch it is meant to follow.
 */
export function arcPoint(sys: ContinuationSystem, xa: Float64Array, ta: Float64Array, s: number, newton: NewtonSettings, between?: ArcBracket): Float64Array | undefined {
  const n = sys.n;
  const ref = new Float64Array(n + 1);
  for (let i = 0; i <= n; i++) ref[i] = xa[i] + s * ta[i];
  let x = ref.slice();
  if (between && between[1].s !== between[0].s) {
    const [a, b] = between;
    const theta = (s - a.s) / (b.s - a.s);
    x = new Float64Array(n + 1);
    for (let i = 0; i <= n; i++) x[i] = a.x[i] + theta * (b.x[i] - a.x[i]);
  }
  const r = correct(sys, x, ta, ref, { ...newton, maxIterations: Math.max(newton.maxIterations, 40), fresh: true }, correctWork(n));
  return r.converged ? x : undefined;
}

/** Two converged points of an arc, at steps s (a bracket around a special point). */
export type ArcBracket = readonly [{ s: number; x: Float64Array }, { s: number; x: Float64Array }];

/**
 * The Illinois variant of regula falsi on f(s) over a bracket [lo, hi] with f of opposite signs
 * at the ends: `next()` proposes the step (kept inside the bracket, bisection when the secant
 * falls within 1 % of an end), `take(t, f, withLo)` replaces the end on t's side and halves the
 * other end's value when the same side is taken twice.
 */
export class IllinoisBracket<T extends { s: number; x: Float64Array }> {
  private side = 0;
  constructor(
    public lo: T,
    public hi: T,
    public fLo: number,
    public fHi: number,
  ) {}

  next(): number {
    const { lo, hi, fLo, fHi } = this;
    const s = (lo.s * fHi - hi.s * fLo) / (fHi - fLo);
    const span = hi.s - lo.s;
    return s > lo.s + 0.01 * span && s < hi.s - 0.01 * span ? s : lo.s + 0.5 * span;
  }

  take(t: T, f: number, withLo: boolean): void {
    if (withLo) {
      this.lo = t;
      this.fLo = f;
      if (this.side === -1) this.fHi /= 2;
      this.side = -1;
    } else {
      this.hi = t;
      this.fHi = f;
      if (this.side === 1) this.fLo /= 2;
      this.side = 1;
    }
  }

  /** Parameter width of the bracket (the last entry of the points). */
  width(): number {
    const n = this.lo.x.length - 1;
    return Math.abs(this.hi.x[n] - this.lo.x[n]);
  }

  get ends(): ArcBracket {
    return [this.lo, this.hi];
  }
}

/** Correct a point at step s from xa along ta (predictor between two bracketing points) and evaluate the determinant there. */
function trial(sys: ContinuationSystem, xa: Float64Array, ta: Float64Array, s: number, newton: NewtonSettings, between?: ArcBracket): TrialPoint | undefined {
  const n = sys.n;
  const x = arcPoint(sys, xa, ta, s, newton, between);
  if (!x) return undefined;
  sys.assemble(x.subarray(0, n), x[n]);
  sys.setTangentRow(ta);
  try {
    sys.factor(true);
  } catch (e) {
    rethrowInterrupt(e);
    return { s, x, sign: 0, logAbs: -Infinity };
  }
  const d = sys.determinant();
  return { s, x, sign: d.sign, logAbs: d.logAbs };
}

export function locateBranchPoint(
  sys: ContinuationSystem,
  xa: Float64Array,
  ta: Float64Array,
  signA: number,
  sEnd: number,
  signEnd: number,
  newton: NewtonSettings,
  tolerance: number,
  maxIterations = 60,
): BranchPointLocation {
  const n = sys.n;
  let lo = trial(sys, xa, ta, 0, newton);
  let hi = trial(sys, xa, ta, sEnd, newton);
  if (!lo || !hi) {
    const x = (hi ?? lo)?.x ?? xa.slice();
    return { converged: false, x, residual: NaN, lo: lo ?? { s: 0, x: xa.slice(), sign: signA, logAbs: 0 }, hi: hi ?? { s: sEnd, x, sign: signEnd, logAbs: 0 }, message: 'could not re-converge the bracketing points' };
  }
  if (lo.sign === 0) return { converged: true, x: lo.x, residual: sys.residual(lo.x.subarray(0, n), lo.x[n]), lo, hi };
  if (hi.sign === 0) return { converged: true, x: hi.x, residual: sys.residual(hi.x.subarray(0, n), hi.x[n]), lo, hi };
  if (lo.sign === hi.sign) {
    return { converged: false, x: hi.x, residual: NaN, lo, hi, message: 'the determinant has the same sign at both ends after re-converging (two crossings close together?)' };
  }
  const ref = Math.max(lo.logAbs, hi.logAbs);
  const value = (t: TrialPoint) => t.sign * Math.exp(t.logAbs - ref);
  const bracket = new IllinoisBracket(lo, hi, value(lo), value(hi));
  for (let it = 0; it < maxIterations; it++) {
    const span = bracket.hi.s - bracket.lo.s;
    if (bracket.width() <= tolerance * Math.max(1, Math.abs(bracket.lo.x[n])) && span <= 1e-6 * Math.max(1, Math.abs(sEnd))) break;
    if (span <= 1e-14 * Math.max(1, Math.abs(sEnd))) break;
    const t = trial(sys, xa, ta, bracket.next(), newton, bracket.ends);
    if (!t) break;
    if (t.sign === 0) {
      bracket.lo = bracket.hi = t;
      break;
    }
    bracket.take(t, value(t), t.sign === bracket.lo.sign);
  }
  ({ lo, hi } = bracket);
  const dl = bracket.width();
  let best = Math.abs(bracket.fLo) < Math.abs(bracket.fHi) ? lo : hi;
  const converged = dl <= tolerance * Math.max(1, Math.abs(best.x[n]));
  if (converged && lo !== hi) {
    // the secant root of the final bracket (its error is of the bracket's size squared)
    const vLo = value(lo);
    const vHi = value(hi);
    const s = (lo.s * vHi - hi.s * vLo) / (vHi - vLo);
    const x = s > lo.s && s < hi.s ? arcPoint(sys, xa, ta, s, newton, [lo, hi]) : undefined;
    if (x) best = { s, x, sign: 0, logAbs: -Infinity };
  }
  return {
    converged,
    x: best.x,
    residual: sys.residual(best.x.subarray(0, n), best.x[n]),
    lo,
    hi,
    message: converged ? undefined : `branch-point location stopped with a parameter bracket of ${dl.toExponential(2)}`,
  };
}

export interface BranchDirections {
  /** Unit tangent of the old branch at the point (weighted norm). */
  tau1: Float64Array;
  /** Unit kernel direction orthogonal to tau1. */
  tau2: Float64Array;
  /** Tangent of the new branch (unit). */
  direction: Float64Array;
  /** Left null vector of J (length n). */
  psi: Float64Array;
  /** Null vector of J (u only, unit weighted norm), the critical mode. */
  phi: Float64Array;
  /**
   * Sign (±1, 0 when undetermined) of the parameter side on which the old branch has the
   * critical eigenvalue positive (where the old branch is the unstable one).
   */
  unstableSide: number;
  /** The same for the new branch: the parameter side on which it has the critical eigenvalue positive. */
  newUnstableSide: number;
  /** Coefficients of the algebraic bifurcation equation in the orthonormal kernel basis (e1, e2). */
  q: { q11: number; q12: number; q22: number };
}

/**
 * ψᵀ F_xx[a, b] for x = (u, λ): F_uu[a_u, b_u] + F_uλ[a_u] b_λ + F_uλ[b_u] a_λ + F_λλ a_λ b_λ,
 * with the model's exact second derivatives where it has them (else directional differences of
 * Jacobian values, derivatives.ts) and F_λλ by a central difference of F_λ.
 */
function secondForm(sys: ContinuationSystem, x: Float64Array, psi: Float64Array): (a: Float64Array, b: Float64Array) => number {
  const n = sys.n;
  const problem = sys.problem;
  const u = x.subarray(0, n);
  const p = sys.params(x[n]);
  const d = derivativeEvaluator(problem);
  const out = new Float64Array(n);
  const dot = (v: Float64Array) => {
    let s = 0;
    for (let i = 0; i < n; i++) s += psi[i] * v[i];
    return s;
  };
  const h = centralDifferenceStep * Math.max(1, Math.abs(x[n]));
  problem.parameterDerivative(u, sys.params(x[n] + h), sys.parameter, out);
  let fll = dot(out);
  problem.parameterDerivative(u, sys.params(x[n] - h), sys.parameter, out);
  fll = (fll - dot(out)) / (2 * h);
  const mixed = (a: Float64Array): number => {
    d.mixedDerivative(u, p, sys.parameter, a.subarray(0, n), out);
    return dot(out);
  };
  return (a, b) => {
    d.secondDerivative(u, p, a.subarray(0, n), b.subarray(0, n), out);
    let q = dot(out);
    if (b[n] !== 0) q += mixed(a) * b[n];
    if (a[n] !== 0) q += mixed(b) * a[n];
    return q + fll * a[n] * b[n];
  };
}

/**
 * Directions at a located branch point x*, from the old branch's tangent `ta` at a nearby point
 * (the start of the step that crossed it). Leaves the system factored at x* with border row ta.
 *
 * The kernel K of [J F_λ] at x* is spanned by e1, the null vector of the bordered matrix B with
 * border row ta (orthogonal to ta), and e2, the part of B⁻¹e_{n+1} orthogonal to e1 (B is nearly
 * singular, but both parts of its solution lie in K). The algebraic bifurcation equation on K,
 * Q(αe1 + βe2) = α²q11 + 2αβq12 + β²q22 = 0, has the old and the new branch's tangents as its
 * roots: the old one is the root nearer to ta's projection onto K — which no more than picks a
 * root, so ta's own error (it is the tangent a step away) does not enter the directions.
 */
export function branchDirections(sys: ContinuationSystem, xStar: Float64Array, taIn: Float64Array): BranchDirections | { error: string } {
  const n = sys.n;
  const ta = taIn.slice();
  scaleInPlace(ta, 1 / sys.norm(ta));
  sys.assemble(xStar.subarray(0, n), xStar[n]);
  sys.setTangentRow(ta);
  try {
    sys.factor(true);
  } catch (e) {
    rethrowInterrupt(e);
    // exactly singular: nudge along the old branch and try again
    const nudged = xStar.slice();
    for (let i = 0; i <= n; i++) nudged[i] += 1e-9 * ta[i];
    sys.assemble(nudged.subarray(0, n), nudged[n]);
    sys.setTangentRow(ta);
    try {
      sys.factor(true);
    } catch (e) {
      rethrowInterrupt(e);
      return { error: 'the bordered matrix is exactly singular at the branch point' };
    }
  }
  // inverse iteration for the right and left null vectors of the bordered matrix
  const y = new Float64Array(n + 1);
  const z = new Float64Array(n + 1);
  let seed = 12345;
  const rand = () => ((seed = (seed * 16807) % 2147483647) / 2147483647) - 0.5;
  for (let i = 0; i <= n; i++) {
    y[i] = rand();
    z[i] = rand();
  }
  const tmp = new Float64Array(n + 1);
  for (let k = 0; k < 3; k++) {
    sys.solve(y, tmp);
    y.set(tmp);
    scaleInPlace(y, 1 / sys.norm(y));
    sys.solveTranspose(z, tmp);
    z.set(tmp);
    scaleInPlace(z, 1 / (infNorm(z) || 1));
  }
  const e1 = y;
  const e2 = new Float64Array(n + 1);
  e2[n] = 1;
  sys.solve(e2.slice(), e2);
  axpy(e2, -sys.dot(e2, e1), e1);
  scaleInPlace(e2, 1 / sys.norm(e2));
  if (!allFinite(e1) || !allFinite(e2) || !allFinite(z)) return { error: 'null vectors at the branch point are not finite' };
  const psi = z.slice(0, n);
  const Q = secondForm(sys, xStar, psi);
  const q11 = Q(e1, e1);
  const q12 = Q(e1, e2);
  const q22 = Q(e2, e2);
  // the two roots of the quadratic form as unit angles θ (direction cos θ e1 + sin θ e2):
  // q11 cos² + 2 q12 cos sin + q22 sin² = 0 ⇔ A + B cos 2θ + C sin 2θ = 0
  const A = 0.5 * (q11 + q22);
  const B = 0.5 * (q11 - q22);
  const C = q12;
  const R = Math.hypot(B, C);
  if (!(R > 0) || Math.abs(A) > R) return { error: 'the bifurcation equation has no real roots (not a simple branch point?)' };
  const phase = Math.atan2(C, B);
  const spread = Math.acos(-A / R);
  const roots = [0.5 * (phase + spread), 0.5 * (phase - spread)].map((theta) => {
    const v = new Float64Array(n + 1);
    for (let i = 0; i <= n; i++) v[i] = Math.cos(theta) * e1[i] + Math.sin(theta) * e2[i];
    return v;
  });
  const c1 = sys.dot(ta, e1);
  const c2 = sys.dot(ta, e2);
  const along = (v: Float64Array) => Math.abs(c1 * sys.dot(v, e1) + c2 * sys.dot(v, e2));
  const [old, fresh] = along(roots[0]) >= along(roots[1]) ? roots : [roots[1], roots[0]];
  const tau1 = old;
  if (sys.dot(tau1, ta) < 0) scaleInPlace(tau1, -1);
  // orientation (either way is followed): the largest entry of the new direction's state part positive
  const direction = fresh;
  let big = 0;
  for (let i = 0; i < n; i++) if (Math.abs(direction[i]) > Math.abs(direction[big])) big = i;
  if (direction[big] < 0) scaleInPlace(direction, -1);
  // τ2 ⟂ τ1 in K
  const tau2 = direction.slice();
  axpy(tau2, -sys.dot(tau2, tau1), tau1);
  scaleInPlace(tau2, 1 / sys.norm(tau2));
  // the critical mode: the kernel combination with no λ component
  const phi = new Float64Array(n);
  for (let i = 0; i < n; i++) phi[i] = e2[n] * e1[i] - e1[n] * e2[i];
  const pn = sys.normU(phi);
  if (pn > 0) scaleInPlace(phi, 1 / pn);
  // critical eigenvalue along a branch with tangent v: μ(s) ≈ s · ψᵀ F_xx[v, (φ, 0)] / ψᵀ M φ
  const phiX = new Float64Array(n + 1);
  phiX.set(phi);
  const mass = sys.problem.massDiagonal;
  let psiMphi = 0;
  for (let i = 0; i < n; i++) psiMphi += psi[i] * (mass ? mass[i] : 1) * phi[i];
  const sideAlong = (v: Float64Array): number => {
    const side = Math.sign((Q(v, phiX) / psiMphi) * v[n]);
    return Number.isFinite(side) && Math.abs(v[n]) > 1e-6 ? side : 0;
  };
  const unstableSide = sideAlong(tau1);
  const newUnstableSide = sideAlong(direction);
  return { tau1, tau2, direction, psi, phi, unstableSide, newUnstableSide, q: { q11, q12, q22 } };
}

/** The real eigenvalue nearest zero in a stability result (NaN when none is real). */
export function criticalRealEigenvalue(s: PointStability): number {
  let scale = 1;
  for (const v of s.eigenvalues) scale = Math.max(scale, Math.hypot(v.re, v.im));
  let best = NaN;
  for (const v of s.eigenvalues) {
    if (Math.abs(v.im) > 1e-8 * scale) continue;
    if (!(Math.abs(v.re) >= Math.abs(best))) best = v.re;
  }
  return best;
}

export interface DoubleCrossingLocation {
  converged: boolean;
  x: Float64Array;
  /** Step from xa along ta. */
  s: number;
  message?: string;
}

/**
 * Locate where two real eigenvalues cross zero together (a branch point of multiplicity two,
 * which leaves the bordered determinant's sign alone) between xa (step 0) and step sEnd along
 * ta: the Illinois regula falsi on the critical real eigenvalue itself — the real eigenvalue
 * nearest zero from an eigen solve at tolerance 1e-11 (`precise`) — to `tolerance` in the
 * parameter. At a symmetric double crossing both eigenvalues vanish at the same point, so either
 * one serves.
 */
export function locateDoubleCrossing(
  sys: ContinuationSystem,
  analyser: { analyse(x: Float64Array, warm: EigenWarmStart | null, precise?: boolean): { stability: PointStability; warm: EigenWarmStart } },
  xa: Float64Array,
  ta: Float64Array,
  sEnd: number,
  warm: EigenWarmStart | null,
  newton: NewtonSettings,
  tolerance: number,
  maxIterations = 60,
): DoubleCrossingLocation {
  const n = sys.n;
  let w = warm;
  const at = (s: number, between?: ArcBracket): { s: number; x: Float64Array; f: number } | undefined => {
    const x = s === 0 ? xa.slice() : arcPoint(sys, xa, ta, s, newton, between);
    if (!x) return undefined;
    const r = analyser.analyse(x, w, true);
    w = r.warm;
    return { s, x, f: criticalRealEigenvalue(r.stability) };
  };
  let lo = at(0);
  let hi = at(sEnd);
  if (!lo || !hi) return { converged: false, x: (lo ?? hi)?.x ?? xa.slice(), s: 0, message: 'a point on the arc did not converge while locating a double crossing' };
  if (!(lo.f * hi.f < 0)) {
    return { converged: false, x: Math.abs(lo.f) < Math.abs(hi.f) ? lo.x : hi.x, s: Math.abs(lo.f) < Math.abs(hi.f) ? 0 : sEnd, message: 'the critical eigenvalue has the same sign at both ends of the step' };
  }
  const bracket = new IllinoisBracket(lo, hi, lo.f, hi.f);
  for (let it = 0; it < maxIterations; it++) {
    if (bracket.width() <= tolerance * Math.max(1, Math.abs(bracket.lo.x[n]))) break;
    const t = at(bracket.next(), bracket.ends);
    if (!t || !Number.isFinite(t.f)) break;
    if (t.f === 0) {
      bracket.lo = bracket.hi = t;
      break;
    }
    bracket.take(t, t.f, Math.sign(t.f) === Math.sign(bracket.lo.f));
  }
  ({ lo, hi } = bracket);
  const converged = bracket.width() <= tolerance * Math.max(1, Math.abs(lo.x[n]));
  const best = Math.abs(lo.f) < Math.abs(hi.f) ? lo : hi;
  return { converged, x: best.x, s: best.s, ...(converged ? {} : { message: `double-crossing location stopped with a parameter bracket of ${Math.abs(hi.x[n] - lo.x[n]).toExponential(2)}` }) };
}
