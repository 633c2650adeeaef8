/**
 * The state of one `EigenTracker.compute` call: the Jacobian and its norms, the shift-invert
 * operators made for it (and their work counters), the searched discs, and the eigenpairs found
 * so far, merged search by search.
 *
 * Every Ritz pair a search reports is checked on J and M before it is believed: its residual
 * ‖J x − μ M x‖ must be within 100·tol·(‖J‖ + |σ|‖M‖)/(‖J‖ + |μ|‖M‖) of the backward error (the
 * bound the Krylov test implies, search.ts). A value found again by a later search (within
 * ~1e3·tol relative) replaces the earlier copy when its residual is smaller; conjugate pairs are
 * then re-made exact. The residuals reported are these, on J and M. Non-convergence (restart
 * limit) is reported with the values reached and their residuals.
 */
import { SparseLU, SparseLUError } from '../lu.js';
import type { Complex } from '../schur.js';
import type { CscMatrix } from '../sparse.js';
import { norm2, scaleInPlace } from '../vector.js';
import { type Enclosure, normEstimate, searchedRegion } from './certification.js';
import { type KnownPair, closeConjugates, fmt, pencilResidual, selectRightmost, sortRightmost } from './eigenpairs.js';
import type { SearchOutcome, SearchSpec } from './search.js';
import { type Purify, makeWarmStart } from './seeding.js';
import { type ShiftOperator, cabs } from './transform.js';
import type { EigenValue, RightmostResult, SearchDisc } from './types.js';

/** What a call needs from its tracker. */
export interface CallSetup {
  J: CscMatrix;
  mass?: Float64Array;
  count: number;
  guard: number;
  tolerance: number;
  basisSize: number;
  maxRestarts: number;
  random: () => number;
  /** Factor J − σM (throws SparseLUError when singular) and return the LU. */
  factor: (sigma: number) => SparseLU;
}

export class EigenCall {
  readonly n: number;
  readonly J: CscMatrix;
  readonly mass: Float64Array | undefined;
  readonly singularMass: boolean;
  readonly mMax: number;
  readonly jNorm: number;
  /** Absolute floor below which values count as zero (1e-12 of the norm). */
  readonly floor: number;
  /** count + guard: the values computed. */
  readonly kw: number;
  /** Most values a search may hold as wanted; extra dimensions for exploring; basis size. */
  readonly maxWanted: number;
  readonly explore: number;
  readonly m: number;
  readonly counters = { solves: 0, factorisations: 0, restarts: 0 };
  readonly shifts: number[] = [];
  readonly discs: SearchDisc[] = [];
  known: KnownPair[] = [];
  readonly notes: string[] = [];
  allConverged = true;
  lastOutcome: SearchOutcome | null = null;

  constructor(readonly setup: CallSetup) {
    const { J, mass } = setup;
    this.n = J.cols;
    this.J = J;
    this.mass = mass;
    this.singularMass = mass ? mass.some((m) => m === 0) : false;
    this.mMax = mass ? mass.reduce((a, m) => Math.max(a, Math.abs(m)), 0) : 1;
    this.jNorm = normEstimate(J);
    this.floor = Math.max(1e-12 * this.jNorm, 1e-300);
    this.kw = setup.count + setup.guard;
    this.m = setup.basisSize;
    this.maxWanted = Math.max(this.kw, Math.floor(this.m / 2));
    this.explore = Math.max(10, Math.ceil(this.m / 2));
  }

  /** Factor J − σM (σ nudged off an eigenvalue if the LU fails) and return its operator. */
  operator(sigma: number): ShiftOperator {
    let s = sigma;
    let lu: SparseLU | undefined;
    for (let attempt = 0; attempt < 4; attempt++) {
      try {
        lu = this.setup.factor(s);
        this.counters.factorisations++;
        break;
      } catch (e) {
        this.counters.factorisations++;
        if (!(e instanceof SparseLUError) || attempt === 3) throw e;
        // σ hit an eigenvalue (or nearly): move it slightly
        s = s + Math.max(1e-6 * Math.abs(s), 1e-8 * this.jNorm, 1e-12) * (attempt + 1) * 7.3;
      }
    }
    return this.solverOperator(lu!, s);
  }

  /** The operator of an LU of J − shift·M factored by the caller. */
  external(f: { lu: SparseLU; shift: number }): ShiftOperator {
    return this.solverOperator(f.lu, f.shift);
  }

  private solverOperator(lu: SparseLU, sigma: number): ShiftOperator {
    this.shifts.push(sigma);
    const { n, mass, counters } = this;
    const mx = new Float64Array(n);
    return {
      sigma,
      apply: (x, out) => {
        if (mass) for (let i = 0; i < n; i++) mx[i] = mass[i] * x[i];
        else mx.set(x);
        lu.solve(mx, out);
        counters.solves++;
      },
    };
  }

  /** Purification through `op` (T applied twice, normalised); the identity for a regular M. */
  purifier(op: ShiftOperator): Purify {
    if (!this.singularMass) return (v) => v;
    return (v) => {
      const a = new Float64Array(this.n);
      op.apply(v, a);
      const b = new Float64Array(this.n);
      op.apply(a, b);
      const nb = norm2(b);
      if (nb > 0) scaleInPlace(b, 1 / nb);
      return b;
    };
  }

  /** Residual and normwise backward error of (μ, xr + i·xi) on J and M. */
  residualOf(mu: Complex, xr: Float64Array, xi: Float64Array): { residual: number; relativeResidual: number } {
    const res = pencilResidual(this.J, this.mass, mu, xr, xi);
    return { residual: res, relativeResidual: res / (this.jNorm + cabs(mu.re, mu.im) * this.mMax) };
  }

  private residualLimit(mu: Complex, sigma: number): number {
    const { jNorm, mMax } = this;
    return Math.max(100 * this.setup.tolerance * ((jNorm + Math.abs(sigma) * mMax) / (jNorm + cabs(mu.re, mu.im) * mMax)), 1e-12);
  }

  /** The search settings common to every search of this call. */
  spec(op: ShiftOperator, mode: SearchSpec['mode'], tau: number, eta: number, minDim: number): SearchSpec {
    return {
      op,
      wanted: this.kw,
      required: this.setup.count,
      maxWanted: this.maxWanted,
      basisSize: this.m,
      tolerance: this.setup.tolerance,
      maxRestarts: this.setup.maxRestarts,
      purify: this.singularMass,
      mode,
      tau,
      eta,
      minDim,
    };
  }

  /** Take in a search's outcome: its checked values join the known ones, its disc the discs. */
  record(out: SearchOutcome, sigma: number): void {
    if (!out.converged) this.allConverged = false;
    const tol = this.setup.tolerance;
    const matched = new Set<number>();
    const known = this.known;
    for (const v of out.values) {
      const r = this.residualOf(v.mu, v.xr, v.xi);
      const ok = v.converged && r.relativeResidual <= this.residualLimit(v.mu, sigma);
      if (!ok) {
        if (v.converged) this.notes.push(`a Ritz value ${fmt(v.mu)} met the Krylov test but its residual on J, M is ${r.relativeResidual.toExponential(1)}`);
        continue;
      }
      const tolMatch = Math.max(1e3 * tol, 1e-9) * (cabs(v.mu.re, v.mu.im) + this.floor + Math.abs(sigma));
      let hit = -1;
      for (let i = 0; i < known.length; i++) {
        if (matched.has(i)) continue;
        if (cabs(known[i].mu.re - v.mu.re, known[i].mu.im - v.mu.im) <= tolMatch) {
          hit = i;
          break;
        }
      }
      const entry: KnownPair = { mu: v.mu, xr: v.xr, xi: v.xi, residual: r.residual, relativeResidual: r.relativeResidual, converged: true };
      if (hit >= 0) {
        matched.add(hit);
        if (r.relativeResidual < known[hit].relativeResidual) known[hit] = entry;
      } else {
        known.push(entry);
        matched.add(known.length - 1);
      }
    }
    this.known = closeConjugates(known, tol, this.floor);
    if (out.disc) this.discs.push(out.disc);
    this.lastOutcome = out;
  }

  /**
   * The answer of the call: the `count` rightmost values found (padded with the best unconverged
   * approximations when too few converged), the searched region and the next warm start.
   */
  result(enclosure: Enclosure, Y: number): RightmostResult {
    const { count, maxRestarts, tolerance } = this.setup;
    const { known, counters } = this;
    const sel = selectRightmost(known, count);
    let converged = this.allConverged && sel.length >= count;
    let reason: string | undefined;
    const outValues: EigenValue[] = sel.map((k) => ({ re: k.mu.re, im: k.mu.im, residual: k.residual, relativeResidual: k.relativeResidual, converged: k.converged }));
    if (sel.length < count) {
      // report the best unconverged approximations too
      const extra: EigenValue[] = [];
      if (this.lastOutcome) {
        for (const v of this.lastOutcome.values) {
          if (outValues.some((w) => cabs(w.re - v.mu.re, w.im - v.mu.im) <= 1e-9 * (1 + cabs(v.mu.re, v.mu.im)))) continue;
          const r = this.residualOf(v.mu, v.xr, v.xi);
          extra.push({ re: v.mu.re, im: v.mu.im, residual: r.residual, relativeResidual: r.relativeResidual, converged: false });
        }
      }
      sortRightmost(extra);
      while (outValues.length < count && extra.length > 0) outValues.push(extra.shift()!);
      sortRightmost(outValues);
      converged = false;
      reason = `only ${sel.length} of ${count} eigenvalues converged within ${maxRestarts} restarts per search (basis ${this.m}, tolerance ${tolerance})`;
    } else if (!this.allConverged) {
      reason = `a search hit its restart limit (${maxRestarts}); the values returned converged, but the region searched is smaller than planned`;
    }
    if (this.notes.length > 0) reason = reason ? `${reason}; ${this.notes[0]}` : undefined;
    const rightmost = known.length > 0 ? known[0].mu.re : -Infinity;
    return {
      values: outValues,
      converged,
      unconvergedReason: converged ? undefined : reason ?? 'not converged',
      searchedRegion: searchedRegion(this.discs, enclosure, Y, rightmost, converged, outValues),
      solves: counters.solves,
      factorisations: counters.factorisations,
      restarts: counters.restarts,
      shifts: this.shifts,
      warmStart: makeWarmStart(known.slice(0, Math.max(this.kw, sel.length)), this.n, this.shifts[this.shifts.length - 1] ?? 0),
      method: 'krylov',
    };
  }
}
