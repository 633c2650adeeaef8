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
import { orthogonalize } from './krylov-schur.js';
import { type Enclosure, normEstimate, reaches, searchedRegion } from './certification.js';
import { type KnownPair, closeConjugates, fmt, leastResidualValue, listFloor, pencilResidual, sameCluster, selectRightmost, sortRightmost } from './eigenpairs.js';
import type { SearchOutcome, SearchSpec } from './search.js';
import { type Purify, makeWarmStart } from './seeding.js';
import { type ShiftOperator, apolloniusDisc, cabs, cayleyImage } from './transform.js';
import type { EigenValue, FactoredShift, RightmostResult, SearchDisc } from './types.js';

/** What a call needs from its tracker. */
export interface CallSetup {
  J: CscMatrix;
  mass?: Float64Array;
  count: number;
  guard: number;
  /** Certify every eigenvalue right of this line (see EigenOptions.certifyAbove). */
  certifyAbove?: number;
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
  /** Members of clusters whose copies may be incomplete (multiplicity.ts): not vouched for. */
  unverified: Complex[] = [];
  /** Clusters completed by a shift's searches (their copies, as found then): see wideningSearch. */
  verified: Complex[][] = [];

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
  external(f: FactoredShift): ShiftOperator {
    return this.solverOperator(f.lu, f.shift);
  }

  private solverOperator(lu: FactoredShift['lu'], sigma: number): ShiftOperator {
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

  /**
   * How many rightmost values the call must find, given the values known (sorted): `count`, or
   * with `certifyAbove` every known value right of the line plus the first one left of it, so
   * that the line falls between the count-th value and the next.
   */
  effectiveCount(values: { re: number }[]): number {
    const { count, certifyAbove } = this.setup;
    if (certifyAbove === undefined) return count;
    let above = 0;
    for (const v of values) if (v.re >= certifyAbove) above++;
    return Math.max(count, above + 1);
  }

  /** The search settings for `count` wanted values (default: the call's count). */
  spec(op: ShiftOperator, mode: SearchSpec['mode'], tau: number, eta: number, minDim: number, count = this.setup.count): SearchSpec {
    const wanted = count + this.setup.guard;
    const basisSize = Math.min(Math.max(this.m, 2 * wanted + 4), this.n);
    return {
      op,
      wanted,
      required: count,
      maxWanted: Math.max(wanted, Math.floor(basisSize / 2)),
      basisSize,
      tolerance: this.setup.tolerance,
      maxRestarts: this.setup.maxRestarts,
      purify: this.singularMass,
      mode,
      tau,
      eta,
      minDim,
    };
  }

  /**
   * Shrink every claimed disc holding μ until it no longer does (a Cayley disc to the Apollonius
   * ratio just above μ's Cayley image, a shift-invert disc to just inside |μ − σ|).
   */
  exclude(mu: Complex): void {
    for (let i = 0; i < this.discs.length; i++) {
      const d = this.discs[i];
      if (cabs(mu.re - d.center, mu.im) > d.radius) continue;
      if (d.transform === 'cayley') {
        const rho = cayleyImage(mu, d.shift, d.pole!) * (1 + 1e-9);
        if (!(rho > 1 && Number.isFinite(rho))) {
          this.discs.splice(i--, 1);
          continue;
        }
        const ad = apolloniusDisc(d.shift, d.pole!, rho);
        this.discs[i] = { ...d, center: ad.center, radius: ad.radius };
      } else {
        this.discs[i] = { ...d, radius: cabs(mu.re - d.shift, mu.im) * (1 - 1e-9) };
      }
    }
  }

  /** Take in a search's outcome: its checked values join the known ones, its disc the discs. */
  record(out: SearchOutcome, sigma: number): void {
    if (!out.converged) this.allConverged = false;
    const tol = this.setup.tolerance;
    const matched = new Set<number>();
    const known = this.known;
    for (const v of out.values) {
      // the value of least residual for the Ritz vector (a far shift leaves the Ritz value itself
      // less accurate than its vector); a conjugate stays the exact conjugate (closeConjugates)
      const refined = leastResidualValue(this.J, this.mass, v.mu, v.xr, v.xi);
      const mu = refined.mu;
      const r = { residual: refined.residual, relativeResidual: refined.residual / (this.jNorm + cabs(mu.re, mu.im) * this.mMax) };
      const ok = v.converged && r.relativeResidual <= this.residualLimit(mu, sigma);
      if (!ok) {
        if (v.converged) this.notes.push(`a Ritz value ${fmt(mu)} met the Krylov test but its residual on J, M is ${r.relativeResidual.toExponential(1)}`);
        continue;
      }
      const entry: KnownPair = { mu, xr: v.xr, xi: v.xi, residual: r.residual, relativeResidual: r.relativeResidual, converged: true };
      // a value of a known cluster is a further copy when its vector leaves the span of the
      // copies known (the copies of a multiple eigenvalue are told apart by their vectors, never
      // by their values); otherwise it is one of them seen again
      if (!this.repeatsKnownVector(entry)) {
        known.push(entry);
        matched.add(known.length - 1);
        continue;
      }
      let hit = -1;
      let best = Infinity;
      for (let i = 0; i < known.length; i++) {
        if (matched.has(i) || !this.mayCoincide(known[i], entry)) continue;
        const d = cabs(known[i].mu.re - mu.re, known[i].mu.im - mu.im);
        if (d < best) {
          best = d;
          hit = i;
        }
      }
      if (hit < 0) continue;
      matched.add(hit);
      // a better approximation replaces a simple value (in a cluster it would change the span)
      const simple = known.filter((k) => this.mayCoincide(k, entry)).length === 1;
      if (simple && r.relativeResidual < known[hit].relativeResidual) known[hit] = entry;
    }
    this.known = closeConjugates(known, tol, this.floor);
    if (out.disc) this.discs.push(out.disc);
    this.lastOutcome = out;
  }

  /**
   * Whether two converged values may be one eigenvalue (or copies of one): of one cluster, or
   * closer than their residuals allow to tell apart (‖J x − μ M x‖/‖x‖ bounds the distance to an
   * eigenvalue of a normal pencil; scaled by the mass). Near zero — at a fold or branch point,
   * where one eigenvalue of J is ~1e-13 — the cluster tolerance is far below the accuracy of the
   * values, and the same eigenvalue found by two searches (8.8e-14 and 6.0e-14) would otherwise
   * be listed twice. Which of them are copies is then told by their vectors.
   */
  private mayCoincide(a: KnownPair, b: KnownPair): boolean {
    if (sameCluster(a.mu, b.mu, this.floor)) return true;
    return cabs(a.mu.re - b.mu.re, a.mu.im - b.mu.im) <= (a.residual + b.residual) / this.mMax;
  }

  /**
   * Whether the eigenvector of `entry` lies (to 1 %) in the span of the vectors of the known
   * values of its cluster (and of its conjugate's): then it is one of them seen again, not a
   * further copy. (A Krylov space with locked eigenpairs can return a second Ritz value next to a
   * locked one whose Ritz vector is mostly the locked vector; counted as a copy, it would be a
   * false multiple eigenvalue. And a search's copies of a multiple eigenvalue come in any order
   * within the eigenspace: matched by value, a new direction could pass for a known copy.)
   */
  private repeatsKnownVector(entry: KnownPair): boolean {
    const basis: Float64Array[] = [];
    const conjugate = { ...entry, mu: { re: entry.mu.re, im: -entry.mu.im } };
    for (const k of this.known) {
      if (!this.mayCoincide(k, entry) && !this.mayCoincide(k, conjugate)) continue;
      for (const x of k.mu.im !== 0 ? [k.xr, k.xi] : [k.xr]) {
        const c = Float64Array.from(x);
        const n0 = norm2(c);
        if (!(n0 > 0)) continue;
        orthogonalize(c, basis);
        const nc = norm2(c);
        if (nc > 1e-8 * n0) {
          scaleInPlace(c, 1 / nc);
          basis.push(c);
        }
      }
    }
    if (basis.length === 0) return false;
    for (const x of entry.mu.im !== 0 ? [entry.xr, entry.xi] : [entry.xr]) {
      const c = Float64Array.from(x);
      const n0 = norm2(c);
      if (!(n0 > 0)) continue;
      orthogonalize(c, basis);
      if (norm2(c) > 1e-2 * n0) return false;
    }
    return true;
  }

  /**
   * The answer of the call: the `count` rightmost values found (padded with the best unconverged
   * approximations when too few converged), the searched region and the next warm start.
   */
  result(enclosure: Enclosure, Y: number): RightmostResult {
    const { count, maxRestarts, tolerance } = this.setup;
    const { known, counters } = this;
    const sel = selectRightmost(known, count, this.floor);
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
    const region = searchedRegion(this.discs, enclosure, Y, rightmost, converged ? listFloor(sel, this.floor) : Infinity, outValues.length);
    const carried = Math.max(this.effectiveCount(known.map((k) => k.mu)) + this.setup.guard, sel.length);
    const line = this.setup.certifyAbove;
    return {
      values: outValues,
      converged,
      unconvergedReason: converged ? undefined : reason ?? 'not converged',
      searchedRegion: region,
      solves: counters.solves,
      factorisations: counters.factorisations,
      restarts: counters.restarts,
      shifts: this.shifts,
      warmStart: makeWarmStart(known.slice(0, carried), this.n, this.shifts[this.shifts.length - 1] ?? 0, (mu) => !this.unverified.some((u) => sameCluster(u, mu, this.floor))),
      method: 'krylov',
      ...(line !== undefined
        ? {
            rightOf: {
              line,
              values: known.filter((k) => k.mu.re >= line).map((k) => ({ re: k.mu.re, im: k.mu.im })),
              certified: this.allConverged && enclosure.rigorous && reaches(region.certifiedAbove, line),
              next: sortRightmost(known.filter((k) => k.mu.re < line).map((k) => k.mu)).slice(0, 4).map((mu) => ({ re: mu.re, im: mu.im })),
            },
          }
        : {}),
    };
  }
}
