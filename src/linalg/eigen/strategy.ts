/**
 * The search strategy of one call: which shifts, which orderings, in which order, until the
 * wanted eigenvalues are found and the region they are claimed from is covered.
 *
 * Transform 'shift-invert': one search about `shift` for the eigenvalues nearest it, then a
 * verification search with a fresh direction (cold) or a missing previous one (warm).
 *
 * Transform 'cayley' (the default), for the rightmost eigenvalues:
 *  1. Without a warm start, a shift-invert search about `shift` (default 0) finds the `count`
 *     eigenvalues nearest it; they fix the scale.
 *  2. From the known eigenvalues (previous point, or step 1) the line α goes between the
 *     count-th and the next real part, σ into the gap between known real parts nearest the
 *     middle of the wanted set (the unwanted spectrum then maps to a short θ-interval between
 *     wanted values at both ends, which a Krylov space separates in fewer steps: about 17
 *     instead of 22 solves per point on a 2D Bratu branch), τ = 2α − σ (`planCayley`). Every
 *     Ritz value right of the line must converge before the search stops (search.ts).
 *  3. Coverage (certification.ts): when the claimed discs do not cover the enclosure down to
 *     the last returned real part, σ − α = β is enlarged (the claimed disc's right end grows like
 *     β²) and a new shift is factored, with every eigenpair found so far locked into the new
 *     Krylov decomposition and a fresh random vector exploring the rest (seeding.ts). Up to
 *     `maxShifts` Cayley shifts; what stays uncovered is reported.
 */
import type { SparseLU } from '../lu.js';
import type { Complex } from '../schur.js';
import type { EigenCall } from './call.js';
import { type Enclosure, certifiedLine, reaches } from './certification.js';
import { selectRightmost, sortRightmost } from './eigenpairs.js';
import { KrylovSchur } from './krylov-schur.js';
import { runSearch } from './search.js';
import { injectMissing, lockedStart, seedFromWarm } from './seeding.js';
import type { ShiftOperator } from './transform.js';
import type { EigenWarmStart } from './types.js';

type Factored = { lu: SparseLU; shift: number } | undefined;

/** The operator about `shift`: the caller's LU when it was factored at that shift, else a new one. */
function operatorAt(call: EigenCall, shift: number, factored: Factored): ShiftOperator {
  return factored && factored.shift === shift ? call.external(factored) : call.operator(shift);
}

/** Transform 'shift-invert': the eigenvalues nearest `shift`, verified by one more direction. */
export function searchNearest(call: EigenCall, shift: number, warm: EigenWarmStart | null, factored: Factored): void {
  const op = operatorAt(call, shift, factored);
  const purify = call.purifier(op);
  const ks = new KrylovSchur(call.n, call.setup.random);
  let Q: Float64Array[] = [];
  if (warm) Q = seedFromWarm(ks, warm, purify, call.setup.random, call.floor);
  else ks.inject(purify(ks.randomVector()));
  const spec = call.spec(op, 'nearest', 0, 0, call.kw + 2);
  let out = runSearch(ks, spec, call.counters);
  if (out.converged) {
    // verification: a fresh direction (cold) or a missing previous one (warm)
    const d0 = ks.dim;
    const injected = warm ? injectMissing(ks, Q, purify) : ks.inject(purify(ks.randomVector()));
    if (injected) out = runSearch(ks, { ...spec, minDim: Math.min(d0 + call.explore, call.m + call.explore) }, call.counters);
  }
  call.record(out, op.sigma);
}

/** Transform 'cayley': the rightmost eigenvalues, with extra shifts until the enclosure is covered. */
export function searchRightmost(call: EigenCall, o: { count: number; shift: number; maxShifts: number }, warm: EigenWarmStart | null, factored: Factored, enclosure: Enclosure, Y: number): void {
  const { kw, floor, m, explore, maxWanted } = call;
  let ks: KrylovSchur;
  let first = true;
  let prevBeta = 0;
  let Qwarm: Float64Array[] = [];
  let knownValues: Complex[] = warm ? sortRightmost(warm.values.map((v) => ({ re: v.re, im: v.im }))) : [];
  let scaleHint = 0;
  if (knownValues.length === 0) {
    // cold start: eigenvalues nearest the shift fix the scale
    const op = operatorAt(call, o.shift, factored);
    ks = new KrylovSchur(call.n, call.setup.random);
    ks.inject(call.purifier(op)(ks.randomVector()));
    const out = runSearch(ks, call.spec(op, 'nearest', 0, 0, kw + 2), call.counters);
    call.record(out, op.sigma);
    knownValues = call.known.map((k) => k.mu);
    if (out.disc) scaleHint = out.disc.radius;
    first = false;
  }
  for (let shiftNo = 0; shiftNo < o.maxShifts && knownValues.length > 0; shiftNo++) {
    const R = Math.max(enclosure.realMax, knownValues[0].re);
    const spread = Math.max(knownValues[0].re - knownValues[Math.min(kw, knownValues.length) - 1].re, scaleHint, 1e-3 * Math.max(Math.abs(knownValues[0].re), floor), floor);
    const capBeta = (shiftNo === 0 ? 32 : 2048) * spread;
    let plan = planCayley(knownValues, o.count, kw, R, Y, scaleHint, floor, shiftNo === 0 ? 0 : 2 * prevBeta, capBeta);
    const op = first && factored && factored.shift > plan.alpha + 4 * plan.delta ? call.external(factored) : call.operator(plan.sigma);
    const purify = call.purifier(op);
    plan = withSigma(plan, op.sigma);
    prevBeta = plan.beta;
    ks = new KrylovSchur(call.n, call.setup.random);
    let minDim: number;
    const useWarm = first && warm !== null;
    if (useWarm) {
      Qwarm = seedFromWarm(ks, warm!, purify, call.setup.random, floor);
      minDim = kw + 2;
    } else {
      const keep = call.known.filter((k) => k.mu.re > plan.alpha).slice(0, maxWanted);
      const d0 = lockedStart(ks, op.sigma, keep, call.J, call.mass, purify);
      minDim = Math.min(d0 + explore, m + explore);
    }
    const spec = call.spec(op, 'cayley', plan.tau, plan.eta, minDim);
    let out = runSearch(ks, spec, call.counters);
    if (useWarm && out.converged && injectMissing(ks, Qwarm, purify)) {
      out = runSearch(ks, { ...spec, minDim: Math.min(ks.dim + explore, m + explore) }, call.counters);
    }
    call.record(out, op.sigma);
    first = false;
    knownValues = call.known.map((k) => k.mu);
    // coverage
    const sel = selectRightmost(call.known, o.count);
    if (sel.length === 0) continue;
    const last = sel[sel.length - 1].mu.re;
    if (reaches(certifiedLine(call.discs, Math.max(enclosure.realMax, knownValues[0].re), Y), last)) break;
    if (plan.beta >= capBeta * 0.999 && shiftNo > 0) break;
  }
}

interface CayleyPlan {
  sigma: number;
  tau: number;
  alpha: number;
  beta: number;
  eta: number;
  /** The claimed disc's left end sits at α + delta (between α and the count-th real part). */
  delta: number;
}

/** The plan with σ moved (α, δ kept): τ = 2α − σ and the primary-group margin recomputed. */
function withSigma(plan: CayleyPlan, sigma: number): CayleyPlan {
  const beta = sigma - plan.alpha;
  return { ...plan, sigma, beta, tau: plan.alpha - beta, eta: (2 * plan.delta) / Math.max(beta - plan.delta, 1e-300) };
}

/**
 * Cayley parameters from the eigenvalues known so far (sorted rightmost first).
 * The line α goes between the count-th and the next real part; σ a little right of the
 * rightmost; σ − α = β is then enlarged until the Apollonius disc that will be claimed (left
 * end α + δ, right end α + β²/δ) reaches the imaginary half-height Y at the count-th real part
 * and at the right edge R of the enclosure, within [minBeta, capBeta].
 */
function planCayley(known: Complex[], count: number, wantedCount: number, R: number, Y: number, scaleHint: number, floor: number, minBeta: number, capBeta: number): CayleyPlan {
  const rho1 = known[0].re;
  const ki = Math.min(count, known.length) - 1;
  const rk = known[ki].re;
  const L = known[Math.min(wantedCount, known.length) - 1].re;
  const s = Math.max(rho1 - L, scaleHint, 1e-3 * Math.max(Math.abs(rho1), Math.abs(L)), floor);
  let next: number | undefined;
  for (let i = ki + 1; i < known.length; i++) {
    if (known[i].re < rk) {
      next = known[i].re;
      break;
    }
  }
  const gap = next !== undefined ? rk - next : s;
  const gamma = Math.min(Math.max(0.5 * gap, 0.05 * s), 0.5 * s);
  const alpha = rk - gamma;
  const delta = 0.5 * gamma;
  // σ inside the wanted set, in the gap between known real parts nearest the middle of
  // [ρ_count, ρ_1]: the unwanted part of the spectrum then maps to a short interval of θ between
  // wanted values at both ends, and the Krylov space resolves the wanted ones in fewer steps
  // than with σ to the right of them all (measured: about 17 instead of 22 solves per point on a
  // 2D Bratu branch). Without a gap (one value, or all equal), σ goes a little right of ρ_1.
  let sigmaMin = rho1 + 0.1 * s;
  const mid = 0.5 * (rho1 + rk);
  let bestGap = Infinity;
  for (let i = 0; i < ki; i++) {
    const a = known[i].re;
    const b = known[i + 1].re;
    if (a - b < 0.05 * s) continue;
    const m = 0.5 * (a + b);
    if (Math.abs(m - mid) < bestGap) {
      bestGap = Math.abs(m - mid);
      sigmaMin = m;
    }
  }
  const sigmaFloor = alpha + 2 * delta + 0.05 * s;
  if (sigmaMin < sigmaFloor) sigmaMin = sigmaFloor;
  const betaMin = sigmaMin - alpha;
  const xL = alpha + delta;
  let needed = Math.max(R, sigmaMin);
  if (Y > 0) {
    needed = Math.max(needed, rk + (Y * Y) / (rk - xL));
    if (R > xL) needed = Math.max(needed, R + (Y * Y) / (R - xL));
  }
  const betaCov = Math.sqrt(Math.max(0, delta * (needed - alpha)));
  let beta = Math.max(betaMin, betaCov, minBeta);
  beta = Math.min(beta, Math.max(capBeta, betaMin));
  const sigma = alpha + beta;
  return { sigma, tau: alpha - beta, alpha, beta, eta: (2 * delta) / (beta - delta), delta };
}
