/**
 * Grid-refinement analysis: observed order of convergence, Richardson extrapolation and the
 * grid convergence index.
 *
 * Methods (published; named here as the trade names them):
 * - Richardson extrapolation (Richardson 1911; Richardson & Gaunt 1927):
 *     v* = v_1 + (v_1 − v_2) / (r21^p − 1)
 *   with v_1 on the finest grid, v_2 on the next coarser one and r21 = h_2 / h_1.
 * - Observed order from three grids. For a constant refinement ratio r it is
 *     p = ln((v_3 − v_2) / (v_2 − v_1)) / ln r.
 *   For non-constant ratios (r21 ≠ r32) the order solves the equation of the procedure of
 *   Celik, Ghia, Roache, Freitas, Coleman & Raad (2008, ASME J. Fluids Eng. 130, 078001):
 *     p = [ ln|ε32/ε21| + q(p) ] / ln r21,   q(p) = ln((r21^p − s)/(r32^p − s)),  s = sign(ε32/ε21)
 *   with ε32 = v_3 − v_2, ε21 = v_2 − v_1. For monotone convergence (s = 1) this is exactly the
 *   pure power law v(h) = v* + C h^p through the three points; its left side is strictly monotone
 *   in p, so we solve it by bracketed bisection (guaranteed, and exact to round-off) instead of
 *   the plain fixed-point iteration, which can fail for very unequal ratios. For oscillatory
 *   convergence (s = −1) the procedure's fixed-point iteration is used as published.
 * - Grid convergence index (Roache 1994, J. Fluids Eng. 116, 405–413):
 *     GCI_fine = Fs · |(v_1 − v_2)/v_1| / (r21^p − 1)
 *   with safety factor Fs = 1.25 when the order is observed from three or more grids and
 *   Fs = 3 when only two grids are available and the order is assumed.
 * - The GCI bounds the error of the FINEST GRID'S value (it is about Fs times the distance from
 *   that value to the extrapolation), not of the extrapolated value, which is usually orders of
 *   magnitude closer on smooth problems. With four or more grids every consecutive triple gives
 *   its own order and its own extrapolated value; the spread of the two finest extrapolations
 *   is the error estimate of the extrapolated value. With three grids (or two and an assumed
 *   order) no such spread exists, and the finest grid's GCI stands in for it, conservatively
 *   (`errorEstimateSource` says which).
 *
 * Pure computation: no I/O. Values are never rounded here.
 */

/** One grid of a refinement study. */
export interface RefinementSample {
  /** Grid spacing (positive); for a multi-axis grid the representative (e.g. largest) spacing. */
  readonly h: number;
  /** The quantity being refined (e.g. the parameter value at a fold) on this grid. */
  readonly value: number;
  /** Intervals per axis, carried through to the output. */
  readonly intervals?: readonly number[];
  /** Number of unknowns, carried through to the output. */
  readonly unknowns?: number;
}

export interface RefinementOptions {
  /** Order assumed when only two grids are given (required then for an extrapolation). */
  readonly assumedOrder?: number;
  /** Formal order of the discretisation (e.g. 2); a warning when the observed order is far from it. */
  readonly expectedOrder?: number;
  /**
   * Relative tolerance on orders: two observed orders disagree, and an observed order is far
   * from the expected one, when they differ by more than this fraction (default 0.2).
   */
  readonly orderTolerance?: number;
  /**
   * Differences smaller than this fraction of the largest |value| count as zero: the values
   * agree to round-off (default 1e-13).
   */
  readonly roundoffTolerance?: number;
  /**
   * Differences below this (absolute, times max(1, |value|)) also count as zero: the accuracy
   * the values were located to (a cusp at the origin has values of size 1e-12 on every grid,
   * whose differences mean nothing). Default 0.
   */
  readonly locationTolerance?: number;
  /** Override the safety factor (default 1.25 with an observed order, 3 with an assumed one). */
  readonly safetyFactor?: number;
}

export type RefinementWarningKind =
  | 'too-few-grids'
  | 'oscillatory'
  | 'orders-disagree'
  | 'order-unexpected'
  | 'order-implausible'
  | 'not-converging'
  | 'converged-to-roundoff'
  | 'finest-agree';

export interface RefinementWarning {
  readonly kind: RefinementWarningKind;
  /** One plain-English sentence. */
  readonly message: string;
}

/** Per-grid row of the analysis, coarsest grid first. */
export interface RefinementGrid {
  /** 1-based, 1 = coarsest. */
  readonly grid: number;
  readonly h: number;
  readonly value: number;
  readonly intervals: readonly number[] | null;
  readonly unknowns: number | null;
  /** Refinement ratio h_previous / h to the previous (coarser) grid; null on the coarsest. */
  readonly ratio: number | null;
  /** value − value on the previous (coarser) grid; null on the coarsest. */
  readonly difference: number | null;
  /** Observed order from this grid and the two coarser ones; null when undefined. */
  readonly observedOrder: number | null;
  /** Richardson extrapolation from this grid's triple (with its own order); null when undefined. */
  readonly extrapolated: number | null;
}

export interface RefinementResult {
  readonly grids: readonly RefinementGrid[];
  /** Order used for the extrapolation (observed on the three finest grids, or assumed). */
  readonly order: number | null;
  readonly orderSource: 'observed' | 'assumed' | 'none';
  /** Richardson-extrapolated value (h → 0). */
  readonly extrapolated: number | null;
  /** Safety factor used in the GCI. */
  readonly safetyFactor: number | null;
  /** GCI on the finest grid, relative (a fraction of the finest value; null if that is 0). */
  readonly gci: number | null;
  /** GCI on the finest grid in the units of the value, Fs·|v_1 − v_2|/(r21^p − 1): a bound on the error of the finest grid's value. */
  readonly gciAbsolute: number | null;
  /** |difference of the two finest successive extrapolations| (four or more grids). */
  readonly extrapolationSpread: number | null;
  /**
   * Error estimate of the extrapolated value: the extrapolation spread with four or more grids,
   * else the finest grid's GCI (a conservative stand-in), or the round-off level when the finest
   * values agree to round-off.
   */
  readonly errorEstimate: number | null;
  /** Where `errorEstimate` comes from. */
  readonly errorEstimateSource: 'extrapolation-spread' | 'finest-grid-gci' | 'round-off' | null;
  /**
   * 'consistent': the observed orders agree with each other (four or more grids) or with the
   * expected order; 'not-reached': the sequence is not yet in the asymptotic range;
   * 'unverified': nothing to check the single observed order against.
   */
  readonly asymptoticRange: 'consistent' | 'not-reached' | 'unverified';
  readonly warnings: readonly RefinementWarning[];
}

const DEFAULT_ORDER_TOLERANCE = 0.2;
const DEFAULT_ROUNDOFF = 1e-13;
/** Roache (1994): safety factor with an observed order from three or more grids. */
export const SAFETY_FACTOR_OBSERVED = 1.25;
/** Roache (1994): safety factor for a two-grid study with an assumed order. */
export const SAFETY_FACTOR_TWO_GRIDS = 3;

/** Orders outside [-P_LIMIT, P_LIMIT] are reported as undefined. */
const P_LIMIT = 60;

function fmt(x: number): string {
  if (!Number.isFinite(x)) return String(x);
  const a = Math.abs(x);
  if (a !== 0 && (a < 1e-4 || a >= 1e6)) return x.toExponential(3);
  return String(Number(x.toPrecision(4)));
}

function checkPositive(name: string, v: number | undefined): void {
  if (v === undefined) return;
  if (typeof v !== 'number' || !Number.isFinite(v) || v <= 0) {
    throw new Error(`refinement option '${name}' must be a positive finite number (got ${String(v)})`);
  }
}

/**
 * The observed-order function for monotone convergence, evaluated without overflow: G(p) = ln[(r32^p − 1)/(1 − r21^{−p})], so that ε32/ε21 = exp(G(p)) for the pure
 * power law (any p ≠ 0; the limit at p = 0 is ln(ln r32/ln r21)). Strictly increasing in p.
 */
function orderFunction(p: number, lr21: number, lr32: number): number {
  if (p === 0) return Math.log(lr32 / lr21);
  // (r32^p − 1) / (1 − r21^{−p}) = expm1(p lr32) / (−expm1(−p lr21)); both factors share p's sign.
  const a = p * lr32;
  const b = p * lr21;
  // ln|expm1(a)| = a + ln|1 − e^{−a}| for a > 0 (no overflow); direct otherwise.
  const lnA = a > 0 ? a + Math.log(-Math.expm1(-a)) : Math.log(Math.abs(Math.expm1(a)));
  const lnB = Math.log(Math.abs(Math.expm1(-b)));
  return lnA - lnB;
}

/**
 * Observed order from three grids (coarse 3, medium 2, fine 1).
 * `e32` = v3 − v2, `e21` = v2 − v1 (both non-zero), r21 = h2/h1, r32 = h3/h2 (both > 1).
 * Returns null when no order in [−P_LIMIT, P_LIMIT] fits.
 */
export function observedOrder(e32: number, e21: number, r21: number, r32: number): number | null {
  if (!(e32 !== 0 && e21 !== 0 && r21 > 1 && r32 > 1)) return null;
  const lr21 = Math.log(r21);
  const lr32 = Math.log(r32);
  const ratio = e32 / e21;
  if (ratio > 0) {
    // Monotone: solve G(p) = ln(ratio) exactly by bisection (G strictly increasing).
    const target = Math.log(ratio);
    if (Math.abs(r21 - r32) <= 1e-15 * r21) return target / lr21;
    let lo = -P_LIMIT;
    let hi = P_LIMIT;
    if (!(orderFunction(lo, lr21, lr32) <= target && orderFunction(hi, lr21, lr32) >= target)) return null;
    for (let it = 0; it < 200; it++) {
      const mid = 0.5 * (lo + hi);
      if (mid === lo || mid === hi) break;
      if (orderFunction(mid, lr21, lr32) < target) lo = mid;
      else hi = mid;
    }
    return 0.5 * (lo + hi);
  }
  // Oscillatory (s = −1): fixed-point iteration of Celik et al. (2008).
  const lnAbs = Math.log(Math.abs(ratio));
  const q = (p: number): number => Math.log((Math.pow(r21, p) + 1) / (Math.pow(r32, p) + 1));
  let p = Math.abs(lnAbs) / lr21;
  for (let it = 0; it < 500; it++) {
    const next = Math.abs(lnAbs + q(p)) / lr21;
    if (!Number.isFinite(next) || next > P_LIMIT) return null;
    if (Math.abs(next - p) <= 1e-14 * Math.max(1, next)) return next;
    p = 0.5 * (p + next); // damped: converges where the plain iteration would oscillate
  }
  return null;
}

/** Richardson extrapolation from the fine value, the coarser value, the ratio and the order. */
export function richardsonExtrapolate(fine: number, coarse: number, ratio: number, order: number): number {
  return fine + (fine - coarse) / Math.expm1(order * Math.log(ratio));
}

function validateSamples(samples: readonly RefinementSample[]): RefinementSample[] {
  if (!Array.isArray(samples) || samples.length === 0) {
    throw new Error('refinement needs at least one grid (got none)');
  }
  samples.forEach((s, i) => {
    if (typeof s?.h !== 'number' || !Number.isFinite(s.h) || s.h <= 0) {
      throw new Error(`refinement grid ${i + 1}: 'h' must be a positive finite number (got ${String(s?.h)})`);
    }
    if (typeof s.value !== 'number' || !Number.isFinite(s.value)) {
      throw new Error(`refinement grid ${i + 1}: 'value' must be a finite number (got ${String(s.value)})`);
    }
    if (s.unknowns !== undefined && (!Number.isInteger(s.unknowns) || s.unknowns < 0)) {
      throw new Error(`refinement grid ${i + 1}: 'unknowns' must be a non-negative integer (got ${String(s.unknowns)})`);
    }
  });
  const sorted = [...samples].sort((a, b) => b.h - a.h);
  for (let i = 1; i < sorted.length; i++) {
    if (sorted[i].h === sorted[i - 1].h) {
      throw new Error(`refinement grids must have distinct spacings: h = ${sorted[i].h} appears twice`);
    }
  }
  return sorted;
}

/**
 * Analyse a grid-refinement sequence. Grids may be given in any order; they are sorted coarsest
 * first. See the module comment for the methods.
 */
export function analyseRefinement(
  samples: readonly RefinementSample[],
  options: RefinementOptions = {},
): RefinementResult {
  checkPositive('assumedOrder', options.assumedOrder);
  checkPositive('expectedOrder', options.expectedOrder);
  checkPositive('orderTolerance', options.orderTolerance);
  checkPositive('roundoffTolerance', options.roundoffTolerance);
  checkPositive('safetyFactor', options.safetyFactor);
  const orderTol = options.orderTolerance ?? DEFAULT_ORDER_TOLERANCE;
  const sorted = validateSamples(samples);
  const n = sorted.length;
  const warnings: RefinementWarning[] = [];
  const warn = (kind: RefinementWarningKind, message: string): void => {
    warnings.push({ kind, message });
  };

  const scale = Math.max(...sorted.map((s) => Math.abs(s.value)));
  const zeroLevel = Math.max((options.roundoffTolerance ?? DEFAULT_ROUNDOFF) * scale, (options.locationTolerance ?? 0) * Math.max(1, scale));
  const isZero = (d: number): boolean => Math.abs(d) <= zeroLevel;

  const h = sorted.map((s) => s.h);
  const v = sorted.map((s) => s.value);
  const diff: (number | null)[] = v.map((x, i) => (i === 0 ? null : x - v[i - 1]));
  const ratio: (number | null)[] = h.map((x, i) => (i === 0 ? null : h[i - 1] / x));

  // Per-triple order and extrapolation, indexed by the finest grid of the triple.
  const order: (number | null)[] = new Array(n).fill(null);
  const extrap: (number | null)[] = new Array(n).fill(null);
  type TripleState = 'solved' | 'all-agree' | 'fine-agree' | 'coarse-agree' | 'no-order';
  const state: (TripleState | null)[] = new Array(n).fill(null);
  for (let i = 2; i < n; i++) {
    const e21 = diff[i] as number; // fine − medium (sign as stored: v_i − v_{i−1})
    const e32 = diff[i - 1] as number;
    const z21 = isZero(e21);
    const z32 = isZero(e32);
    if (z21 && z32) {
      state[i] = 'all-agree';
      extrap[i] = v[i];
    } else if (z21) {
      state[i] = 'fine-agree';
      extrap[i] = v[i];
    } else if (z32) {
      state[i] = 'coarse-agree';
    } else {
      // Differences as in Celik et al.: ε32 = v3 − v2, ε21 = v2 − v1 (coarse minus fine); the
      // ratio is the same with our (fine minus coarse) sign convention.
      const p = observedOrder(e32, e21, ratio[i] as number, ratio[i - 1] as number);
      order[i] = p;
      state[i] = p === null ? 'no-order' : 'solved';
      if (p !== null && p > 0) extrap[i] = richardsonExtrapolate(v[i], v[i - 1], ratio[i] as number, p);
    }
  }

  // Oscillation anywhere in the sequence (ignoring differences at round-off level).
  const signs: { i: number; s: number }[] = [];
  for (let i = 1; i < n; i++) {
    const d = diff[i] as number;
    if (!isZero(d)) signs.push({ i, s: Math.sign(d) });
  }
  const flips: number[] = [];
  for (let k = 1; k < signs.length; k++) if (signs[k].s !== signs[k - 1].s) flips.push(signs[k].i);
  if (flips.length > 0) {
    const where = flips.map((i) => `grids ${i}–${i + 1}`).join(', ');
    warn(
      'oscillatory',
      `Oscillatory convergence: the differences between successive grids change sign (at ${where}); ` +
        'the sequence is not in the asymptotic range and the order and error estimate are unreliable.',
    );
  }

  let finalOrder: number | null = null;
  let orderSource: RefinementResult['orderSource'] = 'none';
  let extrapolated: number | null = null;
  let safety: number | null = null;
  let gci: number | null = null;
  let gciAbs: number | null = null;
  let spread: number | null = null;
  let errorEstimate: number | null = null;
  let errorSource: RefinementResult['errorEstimateSource'] = null;
  let notReached = flips.length > 0;
  let verified = false;

  const finest = n - 1;
  if (n === 1) {
    warn('too-few-grids', 'Only one grid: no difference, no order and no error estimate; refine at least twice more.');
  } else if (n === 2) {
    const r = ratio[1] as number;
    const d = diff[1] as number;
    if (options.assumedOrder === undefined) {
      warn(
        'too-few-grids',
        'Only two grids: the order cannot be observed; give an assumed order for a rough estimate, ' +
          'or add a third grid.',
      );
    } else {
      const p = options.assumedOrder;
      finalOrder = p;
      orderSource = 'assumed';
      safety = options.safetyFactor ?? SAFETY_FACTOR_TWO_GRIDS;
      extrapolated = richardsonExtrapolate(v[1], v[0], r, p);
      const denom = Math.expm1(p * Math.log(r));
      gciAbs = (safety * Math.abs(d)) / denom;
      gci = v[1] !== 0 ? gciAbs / Math.abs(v[1]) : null;
      errorEstimate = gciAbs;
      errorSource = 'finest-grid-gci';
      warn(
        'too-few-grids',
        `Only two grids: the order ${fmt(p)} is assumed, not observed, so the safety factor is ${fmt(safety)} ` +
          '(Roache 1994); add a third grid to observe the order.',
      );
    }
  } else {
    const st = state[finest];
    if (st === 'all-agree') {
      extrapolated = v[finest];
      errorEstimate = zeroLevel;
      errorSource = 'round-off';
      warn(
        'converged-to-roundoff',
        `The three finest values agree to round-off (differences below ${fmt(zeroLevel)}): ` +
          'the value is converged, there is nothing to extrapolate and the order is undefined.',
      );
    } else if (st === 'fine-agree') {
      extrapolated = v[finest];
      errorEstimate = zeroLevel;
      errorSource = 'round-off';
      warn(
        'finest-agree',
        `The two finest values agree to round-off while the coarser ones differ: the finest value is taken ` +
          'as converged; the order is undefined. Check that the finest grid really resolves the solution.',
      );
    } else if (st === 'coarse-agree') {
      notReached = true;
      warn(
        'not-converging',
        'The two coarser of the three finest values agree but the finest differs: the sequence is not ' +
          'converging; no order or extrapolation.',
      );
    } else {
      const p = order[finest];
      if (p === null) {
        notReached = true;
        warn('not-converging', 'No order of convergence fits the three finest grids: no extrapolation.');
      } else if (p <= 0) {
        notReached = true;
        finalOrder = p;
        orderSource = 'observed';
        warn(
          'not-converging',
          `The differences grow as the grid is refined (observed order ${fmt(p)}): the sequence is not ` +
            'converging; no extrapolation.',
        );
      } else {
        finalOrder = p;
        orderSource = 'observed';
        safety = options.safetyFactor ?? SAFETY_FACTOR_OBSERVED;
        extrapolated = extrap[finest];
        const r = ratio[finest] as number;
        const d = diff[finest] as number;
        gciAbs = (safety * Math.abs(d)) / Math.expm1(p * Math.log(r));
        gci = v[finest] !== 0 ? gciAbs / Math.abs(v[finest]) : null;
        errorEstimate = gciAbs;
        errorSource = 'finest-grid-gci';
        if (n >= 4) {
          const prev = extrap[finest - 1];
          if (prev !== null) {
            spread = Math.abs((extrapolated as number) - prev);
            errorEstimate = spread;
            errorSource = 'extrapolation-spread';
          }
          const pPrev = order[finest - 1];
          if (pPrev !== null) {
            const rel = Math.abs(p - pPrev) / Math.max(Math.abs(p), Math.abs(pPrev));
            if (rel > orderTol) {
              notReached = true;
              const list = order
                .map((o, i) => (o === null ? null : `${fmt(o)} (grids ${i - 1}–${i + 1})`))
                .filter((s) => s !== null)
                .join(', ');
              warn(
                'orders-disagree',
                `Observed orders disagree: ${list}; the sequence is not yet in the asymptotic range, ` +
                  'refine further before trusting the extrapolation.',
              );
            } else {
              verified = true;
            }
          }
        }
        if (options.expectedOrder !== undefined) {
          const pe = options.expectedOrder;
          if (Math.abs(p - pe) / pe > orderTol) {
            notReached = true;
            warn(
              'order-unexpected',
              `Observed order ${fmt(p)} is far from the expected order ${fmt(pe)}: the grids may not be in ` +
                'the asymptotic range, or the discretisation is not behaving as designed.',
            );
          } else {
            verified = true;
          }
        } else if (p < 0.5 || p > 6) {
          notReached = true;
          warn(
            'order-implausible',
            `Observed order ${fmt(p)} is implausible for a finite-difference discretisation (common practice: ` +
              'between about 0.5 and 6); the extrapolation is unreliable.',
          );
        }
      }
    }
  }

  const grids: RefinementGrid[] = sorted.map((s, i) => ({
    grid: i + 1,
    h: s.h,
    value: s.value,
    intervals: s.intervals ? [...s.intervals] : null,
    unknowns: s.unknowns ?? null,
    ratio: ratio[i],
    difference: diff[i],
    observedOrder: order[i],
    extrapolated: extrap[i],
  }));

  const asymptoticRange: RefinementResult['asymptoticRange'] = notReached
    ? 'not-reached'
    : verified
      ? 'consistent'
      : 'unverified';

  return {
    grids,
    order: finalOrder,
    orderSource,
    extrapolated,
    safetyFactor: safety,
    gci,
    gciAbsolute: gciAbs,
    extrapolationSpread: spread,
    errorEstimate,
    errorEstimateSource: errorSource,
    asymptoticRange,
    warnings,
  };
}
