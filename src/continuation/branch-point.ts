/**
 * Branch points: location along the arc and the directions of the crossing branch.
 *
 * Location: the determinant of the bordered matrix [[J, F_λ], [r_uᵀ, r_λ]] changes sign at a simple
 * branch point (at a fold it does not: det J and the tangent's λ component change sign together).
 * Between two points with opposite signs, the arc is parametrised by the step s from the first
 * point (predictor along its tangent, pseudo-arclength corrector with the same border row r, so the
 * test function is continuous in s), and s is found by the Illinois variant of regula falsi on the
 * scaled determinant, bracketing kept at every step.
 *
 * Switching: at the located point the kernel of [J F_λ] is two-dimensional, spanned by the old
 * branch's tangent τ1 (from the secant of the final bracket) and τ2 (the null vector of the
 * nearly singular bordered matrix, by inverse iteration, orthogonalised against τ1). With ψ the
 * left null vector, the algebraic bifurcation equation (Keller 1977)
 *     Q(ατ1 + βτ2) = α² Q11 + 2αβ Q12 + β² Q22 = 0,   Qij = ψᵀ F_xx[τi, τj],
 * has τ1 as one root; the other root is the new branch's tangent. F_xx comes from second central
 * differences of the residual along the directions.
 */
import { axpy, infNorm, scaleInPlace } from '../linalg/vector.js';
import { type ContinuationSystem, allFinite } from './system.js';
import { correct, correctWork } from './newton.js';
import type { NewtonSettings } from './types.js';
import { rethrowInterrupt } from '../linalg/lu.js';

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
 * The point of the branch at step s from xa along the tangent ta: predictor xa + s·ta, corrected in
 * the hyperplane orthogonal to ta (so the arc is parametrised by s). Undefined when Newton fails.
 */
export function arcPoint(sys: ContinuationSystem, xa: Float64Array, ta: Float64Array, s: number, newton: NewtonSettings): Float64Array | undefined {
  const n = sys.n;
  const x = new Float64Array(n + 1);
  for (let i = 0; i <= n; i++) x[i] = xa[i] + s * ta[i];
  const ref = x.slice();
  const r = correct(sys, x, ta, ref, { ...newton, maxIterations: Math.max(newton.maxIterations, 40), fresh: true }, correctWork(n));
  return r.converged ? x : undefined;
}

/** Correct a point at step s from xa along ta and evaluate the determinant there. */
function trial(sys: ContinuationSystem, xa: Float64Array, ta: Float64Array, s: number, newton: NewtonSettings): TrialPoint | undefined {
  const n = sys.n;
  const x = arcPoint(sys, xa, ta, s, newton);
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
  let fLo = value(lo);
  let fHi = value(hi);
  let side = 0;
  for (let it = 0; it < maxIterations; it++) {
    const dl = Math.abs(hi.x[n] - lo.x[n]);
    if (dl <= tolerance * Math.max(1, Math.abs(lo.x[n])) && hi.s - lo.s <= 1e-6 * Math.max(1, Math.abs(sEnd))) break;
    if (hi.s - lo.s <= 1e-14 * Math.max(1, Math.abs(sEnd))) break;
    // Illinois regula falsi, kept inside the bracket
    let s = (lo.s * fHi - hi.s * fLo) / (fHi - fLo);
    const span = hi.s - lo.s;
    if (!(s > lo.s + 0.01 * span && s < hi.s - 0.01 * span)) s = lo.s + 0.5 * span;
    const t = trial(sys, xa, ta, s, newton);
    if (!t) break;
    if (t.sign === 0) {
      lo = t;
      hi = t;
      break;
    }
    const ft = value(t);
    if (t.sign === lo.sign) {
      lo = t;
      fLo = ft;
      if (side === -1) fHi /= 2;
      side = -1;
    } else {
      hi = t;
      fHi = ft;
      if (side === 1) fLo /= 2;
      side = 1;
    }
  }
  const dl = Math.abs(hi.x[n] - lo.x[n]);
  const best = Math.abs(fLo) < Math.abs(fHi) ? lo : hi;
  const converged = dl <= tolerance * Math.max(1, Math.abs(best.x[n]));
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
  /** Coefficients of the algebraic bifurcation equation. */
  q: { q11: number; q12: number; q22: number };
}

/** ψᵀ F_xx[a, b] by second central differences of the residual (x = (u, λ)). */
function bilinear(sys: ContinuationSystem, x: Float64Array, psi: Float64Array, a: Float64Array, b: Float64Array, work: Float64Array): number {
  const n = sys.n;
  const scale = Math.max(1, sys.norm(x));
  const h = Math.pow(Number.EPSILON, 0.25) * scale;
  const ea = h / Math.max(sys.norm(a), 1e-300);
  const eb = h / Math.max(sys.norm(b), 1e-300);
  const evalAt = (sa: number, sb: number): number => {
    for (let i = 0; i <= n; i++) work[i] = x[i] + sa * ea * a[i] + sb * eb * b[i];
    sys.residual(work.subarray(0, n), work[n]);
    let s = 0;
    for (let i = 0; i < n; i++) s += psi[i] * sys.f[i];
    return s;
  };
  const v = evalAt(1, 1) - evalAt(1, -1) - evalAt(-1, 1) + evalAt(-1, -1);
  return v / (4 * ea * eb);
}

/**
 * Directions at a located branch point x*, from the old branch's tangent estimate `tau1`.
 * Leaves the system factored at x* with border row tau1.
 */
export function branchDirections(sys: ContinuationSystem, xStar: Float64Array, tau1In: Float64Array): BranchDirections | { error: string } {
  const n = sys.n;
  const tau1 = tau1In.slice();
  scaleInPlace(tau1, 1 / sys.norm(tau1));
  sys.assemble(xStar.subarray(0, n), xStar[n]);
  sys.setTangentRow(tau1);
  try {
    sys.factor(true);
  } catch (e) {
    rethrowInterrupt(e);
    // exactly singular: nudge along the old branch and try again
    const nudged = xStar.slice();
    for (let i = 0; i <= n; i++) nudged[i] += 1e-9 * tau1[i];
    sys.assemble(nudged.subarray(0, n), nudged[n]);
    sys.setTangentRow(tau1);
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
  if (!allFinite(y) || !allFinite(z)) return { error: 'null vectors at the branch point are not finite' };
  // τ2 ⟂ τ1 (weighted)
  const tau2 = y.slice();
  axpy(tau2, -sys.dot(tau2, tau1), tau1);
  scaleInPlace(tau2, 1 / sys.norm(tau2));
  const psi = z.slice(0, n);
  // the critical mode: the kernel combination with no λ component
  const phi = new Float64Array(n);
  for (let i = 0; i < n; i++) phi[i] = tau2[n] * tau1[i] - tau1[n] * tau2[i];
  const pn = sys.normU(phi);
  if (pn > 0) scaleInPlace(phi, 1 / pn);
  // algebraic bifurcation equation
  const work = new Float64Array(n + 1);
  const q11 = bilinear(sys, xStar, psi, tau1, tau1, work);
  const q12 = bilinear(sys, xStar, psi, tau1, tau2, work);
  const q22 = bilinear(sys, xStar, psi, tau2, tau2, work);
  // roots r = α/β of q11 r² + 2 q12 r + q22 = 0: the one of small magnitude is the new branch
  // (τ1 itself is the root at infinity when q11 = 0); numerically stable form
  const disc = q12 * q12 - q11 * q22;
  let r = 0;
  if (disc >= 0 && q12 !== 0) {
    r = -q22 / (q12 + Math.sign(q12) * Math.sqrt(disc));
  } else if (q12 === 0) {
    r = 0;
  }
  const direction = new Float64Array(n + 1);
  for (let i = 0; i <= n; i++) direction[i] = r * tau1[i] + tau2[i];
  scaleInPlace(direction, 1 / sys.norm(direction));
  // critical eigenvalue along the old branch: μ(s) ≈ s · ψᵀ F_xx[τ1, (φ, 0)] / ψᵀ M φ
  const phiX = new Float64Array(n + 1);
  phiX.set(phi);
  const dmu = bilinear(sys, xStar, psi, tau1, phiX, work);
  const mass = sys.problem.massDiagonal;
  let psiMphi = 0;
  for (let i = 0; i < n; i++) psiMphi += psi[i] * (mass ? mass[i] : 1) * phi[i];
  const muPrime = dmu / psiMphi;
  const side = Math.sign(muPrime * tau1[n]);
  const unstableSide = Number.isFinite(side) && Math.abs(tau1[n]) > 1e-6 ? side : 0;
  return { tau1, tau2, direction, psi, phi, unstableSide, q: { q11, q12, q22 } };
}
