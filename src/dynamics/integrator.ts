/**
 * Time integration of M u_t = F(u, p) to a steady state, by the variable-step BDF2 method
 * (./bdf2.ts; L-stable, order 2) with local error control, on the problem's Jacobian and the
 * sparse LU. No I/O: `events()` yields the start, every accepted step, snapshot states at the
 * scheduled times, log lines and the end with its outcome; the run layer writes the files.
 *
 * Per step: the predictor (extrapolation of the last states) starts a modified Newton
 * iteration on  M(u − ψ) − cF(u) = 0  with the factors of the iteration matrix M − c'J' made
 * at some earlier step. They are remade (fresh Jacobian at the current state) only when the
 * scaled step size c has moved by more than a factor `refactorRatio` from c', or when Newton
 * fails to contract with them; in between the correction is rescaled by 2/(1 + c/c') (a rule of
 * the LSODE family of solvers, Hindmarsh 1983; from memory). Step sizes change only when the error estimate
 * asks for a cut or allows at least a 1.5-fold increase, and not within `hold` steps of the last
 * change, so that factors live for many steps once the transient is over.
 *
 * Newton's convergence is judged from its contraction rate θ (Hairer & Wanner, Solving ODEs
 * II, §IV.8): converged when θ/(1−θ)·‖Δ‖ ≤ κ in the error norm; given up when θ ≥ 0.99 or when
 * the remaining iterations cannot reach κ at that rate. The local error estimate is filtered
 * through (M − cJ)⁻¹M (Shampine; Hairer & Wanner IV.8) so that stiff components do not
 * shorten the step; it counts the differential unknowns only (algebraic unknowns, of index 1,
 * follow the others; see ./algebraic.ts).
 *
 * The integration stops with one of the outcomes of ./types.ts: `steady` once the scaled
 * residual is below the steady tolerance and Newton's method (./polish.ts) converges to a state
 * within 1% of the integrated one; `oscillating` when the monitors show steady periodic
 * motion (./watch.ts); `drifting` at the time or step limit; `blown-up` when max |u| passes
 * the limit (or the step size collapses while the state grows); `failed` otherwise.
 *
 * The whole mutable state is one plain object: `snapshot()` copies it between steps, and
 * passing the copy back as `options.state` resumes. `restartLinearAlgebra()` drops the factors
 * (the next step factorises afresh with a new Jacobian), so that a run resumed from a snapshot
 * taken right after it repeats the uninterrupted run bit for bit.
 */
import { SparseLUError } from '../linalg/lu.js';
import { infNorm } from '../linalg/vector.js';
import { type Params, type Problem, weightedDot } from '../problem/problem.js';
import { algebraicIndexProblem, algebraicUnknowns, consistentStart } from './algebraic.js';
import { bdfFormula, combine, correctorConstant, hermitePredict, lagrangeWeights, predictorConstant } from './bdf2.js';
import { IterationMatrix } from './iteration-matrix.js';
import { polishSteadyState } from './polish.js';
import { type SteadyStability, steadyStability } from './stability.js';
import type { DynamicsCounters, DynamicsEvent, Outcome, SnapshotSchedule, StepRecord, TimeSettings } from './types.js';
import { type WatchState, emptyWatch, observe, residualTrend, steadyOscillation, transientOscillation } from './watch.js';

/** An integration that cannot start (bad initial state, an index-2 constraint). */
export class DynamicsError extends Error {
  override name = 'DynamicsError';
}

/** Refactorise when the scaled step size c moves by more than this factor from the factors' c. */
export const refactorRatio = 2.5;
/** Accepted steps at one step size before it may grow again. */
export const hold = 3;
/** Largest step growth per change (variable-step BDF2 is zero-stable below 1 + √2). */
export const maxGrowth = 2;
/** Newton's tolerance κ in the error norm, and its iteration limit per step. */
const kappa = 0.05;
const maxNewton = 7;
const etaFloor = 0.05;
/** The polished state must lie within this relative distance of the integrated one (or within the tolerances). */
const polishDistance = 0.01;
/** After an unstable steady state, steady states count again once the residual has risen this far above the tolerance. */
const rearm = 100;
/** ...or once this many e-folding times of its rightmost eigenvalue have passed. */
const rearmGrowth = 20;

interface Past {
  t: number;
  u: Float64Array;
}

export interface IntegratorState {
  version: 1;
  started: boolean;
  done: boolean;
  t: number;
  /** The current accepted state. */
  u: Float64Array;
  /** Up to two earlier accepted states, oldest first. */
  previous: Past[];
  /** M⁻¹F(u₀) on the differential unknowns (0 on algebraic ones): the first predictors' slope. */
  startDerivative: Float64Array;
  /** The next step size to try. */
  h: number;
  /** Accepted steps since the step size last changed. */
  sinceChange: number;
  /** Newton's contraction-rate memory (η of the last step). */
  eta: number;
  /** 1 / max(1, largest |J_ij| in row i), at the start state: the residual's scaling. */
  rowScale: Float64Array;
  residual: number;
  /** The steady-test value at which the last polish failed (polish again only well below it). */
  polishFailedAt: number;
  /**
   * An unstable steady state the state is near (found by the polish, eigenvalues asked for): no
   * steady state counts until the residual has risen `rearm`-fold above the steady tolerance, and
   * steps stay below 1/(its rightmost eigenvalue) so that the departure is resolved.
   */
  nearUnstable: { time: number; leading: number } | null;
  nextSnapshot: number;
  watch: WatchState;
  /** Largest |u| and the scaled residual at the start (blow-up classification). */
  startMax: number;
  startResidual: number;
  counters: DynamicsCounters;
}

export interface IntegrationOptions {
  /** Initial state (default: the model's initial guess). */
  start?: Float64Array;
  /** Resume from a snapshot. */
  state?: IntegratorState;
}

/** The first scheduled snapshot time after t (Infinity when none). */
export function nextSnapshotTime(schedule: SnapshotSchedule, end: number, t: number): number {
  if (schedule === 'none') return Infinity;
  if (schedule === 'auto') {
    // 1, 2, 5 × 10^k from end·10⁻⁶ up to end
    const lo = end * 1e-6;
    let e = Math.floor(Math.log10(Math.max(t, lo))) - 1;
    for (;;) {
      for (const m of [1, 2, 5]) {
        const v = Number(`${m}e${e}`);
        if (v > t * (1 + 1e-12) && v >= lo * (1 - 1e-12)) return v <= end * (1 + 1e-12) ? v : Infinity;
      }
      e++;
    }
  }
  const k = Math.floor(t / schedule.every + 1e-9) + 1;
  const v = k * schedule.every;
  return v <= end * (1 + 1e-12) ? v : Infinity;
}

export class TimeIntegration {
  private readonly n: number;
  private readonly matrix: IterationMatrix;
  private readonly mass: Float64Array;
  private readonly algebraic: Uint8Array;
  private readonly differentialWeightSum: number;
  private readonly weightSum: number;
  private state: IntegratorState;
  private quiescent = true;
  /** Step index at which the Jacobian of the factors was evaluated (−1: none, or stale). */
  private jacobianStep = -1;
  // workspace
  private readonly f: Float64Array;
  private readonly g: Float64Array;
  private readonly d: Float64Array;
  private readonly psi: Float64Array;
  private readonly pred: Float64Array;
  private readonly x: Float64Array;
  private readonly est: Float64Array;

  constructor(
    readonly problem: Problem,
    readonly params: Params,
    readonly settings: TimeSettings,
    options: IntegrationOptions = {},
  ) {
    const n = problem.size;
    this.n = n;
    this.matrix = new IterationMatrix(problem);
    this.mass = this.matrix.mass;
    this.algebraic = new Uint8Array(n);
    for (const i of algebraicUnknowns(problem)) this.algebraic[i] = 1;
    let ws = 0;
    for (let i = 0; i < n; i++) if (!this.algebraic[i]) ws += problem.weights[i];
    this.differentialWeightSum = ws > 0 ? ws : 1;
    this.weightSum = problem.weights.reduce((x, y) => x + y, 0) || 1;
    this.f = new Float64Array(n);
    this.g = new Float64Array(n);
    this.d = new Float64Array(n);
    this.psi = new Float64Array(n);
    this.pred = new Float64Array(n);
    this.x = new Float64Array(n);
    this.est = new Float64Array(n);
    if (!(settings.end > 0)) throw new DynamicsError(`the end time must be positive, got ${settings.end}`);
    if (options.state) {
      if (options.state.version !== 1 || options.state.u.length !== n) throw new DynamicsError('the saved integration state does not fit this problem');
      this.state = structuredClone(options.state);
    } else {
      const u0 = Float64Array.from(options.start ?? problem.initialGuess(params));
      if (u0.length !== n) throw new DynamicsError(`the initial state has ${u0.length} values, the problem has ${n} unknowns`);
      this.state = {
        version: 1,
        started: false,
        done: false,
        t: 0,
        u: u0,
        previous: [],
        startDerivative: new Float64Array(n),
        h: Number.NaN,
        sinceChange: 0,
        eta: 1,
        rowScale: new Float64Array(n).fill(1),
        residual: Number.NaN,
        polishFailedAt: Infinity,
        nearUnstable: null,
        nextSnapshot: nextSnapshotTime(settings.snapshots, settings.end, 0),
        watch: emptyWatch(problem.monitors.map((m) => m.name)),
        startMax: 0,
        startResidual: Number.NaN,
        counters: { steps: 0, rejected: 0, newtonIterations: 0, newtonFailures: 0, residuals: 0, jacobians: 0, factorisations: 0, refactorisations: 0, solves: 0, polish: { attempts: 0, iterations: 0, factorisations: 0 } },
      };
    }
  }

  /** Whether a snapshot taken now resumes cleanly (between steps). */
  get canSnapshot(): boolean {
    return this.quiescent;
  }

  snapshot(): IntegratorState {
    if (!this.quiescent) throw new Error('the integration can be snapshotted only between steps');
    this.syncCounters();
    return structuredClone(this.state);
  }

  /** Drop the factors: the next step evaluates the Jacobian and factorises afresh. */
  restartLinearAlgebra(): void {
    this.matrix.forget();
    this.jacobianStep = -1;
  }

  get counters(): DynamicsCounters {
    this.syncCounters();
    return structuredClone(this.state.counters);
  }

  /** Accepted steps so far. */
  get steps(): number {
    return this.state.counters.steps;
  }

  /** Current time and state (a copy). */
  get current(): { t: number; u: Float64Array; residual: number; step: number } {
    return { t: this.state.t, u: this.state.u.slice(), residual: this.state.residual, step: this.state.counters.steps };
  }

  private matrixCounts = { jacobians: 0, factorisations: 0, refactorisations: 0, solves: 0 };

  /** Fold the iteration matrix's counts (since the last call) into the state's counters. */
  private syncCounters(): void {
    const m = this.matrix;
    const c = this.state.counters;
    const last = this.matrixCounts;
    c.jacobians += m.jacobians - last.jacobians;
    c.factorisations += m.factorisations - last.factorisations;
    c.refactorisations += m.refactorisations - last.refactorisations;
    c.solves += m.solves - last.solves;
    this.matrixCounts = { jacobians: m.jacobians, factorisations: m.factorisations, refactorisations: m.refactorisations, solves: m.solves };
  }

  dispose(): void {
    this.matrix.dispose();
  }

  *events(): Generator<DynamicsEvent, void> {
    while (!this.state.done) {
      const batch = this.state.started ? this.advance() : this.start();
      this.syncCounters();
      for (let k = 0; k < batch.length; k++) {
        this.quiescent = k === batch.length - 1;
        yield batch[k];
      }
      this.quiescent = true;
    }
  }

  // -------------------------------------------------------------------------------------------
  // norms

  private residualOf(u: Float64Array): number {
    this.problem.residual(u, this.params, this.f);
    this.state.counters.residuals++;
    return this.scaledNorm(this.f);
  }

  /** ‖D⁻¹f‖_w with the frozen row scaling. */
  private scaledNorm(f: Float64Array): number {
    const w = this.problem.weights;
    const s = this.state.rowScale;
    let sum = 0;
    for (let i = 0; i < this.n; i++) {
      const v = f[i] * s[i];
      sum += w[i] * v * v;
    }
    return Math.sqrt(sum);
  }

  /**
   * Weighted RMS of v in tolerance units (scale from a and b), over the differential unknowns
   * (the local error) or, with `all`, over every unknown (Newton's updates: the algebraic ones
   * must converge too).
   */
  private errorNorm(v: Float64Array, a: Float64Array, b?: Float64Array, all = false): number {
    const w = this.problem.weights;
    const { relativeTolerance: rt, absoluteTolerance: at } = this.settings;
    let sum = 0;
    for (let i = 0; i < this.n; i++) {
      if (this.algebraic[i] && !all) continue;
      const scale = at + rt * Math.max(Math.abs(a[i]), b ? Math.abs(b[i]) : 0);
      const e = v[i] / scale;
      sum += w[i] * e * e;
    }
    return Math.sqrt(sum / (all ? this.weightSum : this.differentialWeightSum));
  }

  private monitorsOf(u: Float64Array): Record<string, number> {
    const out: Record<string, number> = {};
    for (const m of this.problem.monitors) out[m.name] = m.evaluate(u, this.params);
    return out;
  }

  private record(stepSize: number, newtonIterations: number, factorised: boolean): StepRecord {
    const s = this.state;
    return { step: s.counters.steps, time: s.t, stepSize, u: s.u.slice(), monitors: this.monitorsOf(s.u), residual: s.residual, newtonIterations, factorised };
  }

  // -------------------------------------------------------------------------------------------
  // start

  private start(): DynamicsEvent[] {
    const s = this.state;
    const { problem, params, settings } = this;
    const why = algebraicIndexProblem(problem, s.u, params);
    if (why) throw new DynamicsError(why);
    consistentStart(problem, s.u, params);
    for (let i = 0; i < this.n; i++) {
      if (!Number.isFinite(s.u[i])) throw new DynamicsError(`the initial state is not finite (unknown ${i})`);
    }
    // residual scaling from the Jacobian at the start
    this.matrix.evaluateJacobian(s.u, params);
    const pat = problem.pattern();
    const rowMax = new Float64Array(this.n);
    for (let j = 0; j < this.n; j++) {
      for (let q = pat.colPtr[j]; q < pat.colPtr[j + 1]; q++) rowMax[pat.rowIdx[q]] = Math.max(rowMax[pat.rowIdx[q]], Math.abs(this.matrix.jacobian[q]));
    }
    for (let i = 0; i < this.n; i++) s.rowScale[i] = 1 / Math.max(1, rowMax[i]);
    s.residual = this.residualOf(s.u);
    if (!Number.isFinite(s.residual)) throw new DynamicsError('the residual is not finite at the initial state');
    for (let i = 0; i < this.n; i++) s.startDerivative[i] = this.algebraic[i] ? 0 : this.f[i] / this.mass[i];
    s.startMax = infNorm(s.u);
    s.startResidual = s.residual;
    if (settings.fixedStep !== undefined) s.h = settings.fixedStep;
    else if (settings.initialStep !== undefined) s.h = settings.initialStep;
    else {
      const d0 = this.errorNorm(s.u, s.u);
      const d1 = this.errorNorm(s.startDerivative, s.u);
      s.h = d0 < 1e-5 || d1 < 1e-5 ? 1e-6 : 0.01 * (d0 / d1);
    }
    s.h = Math.min(s.h, settings.end, settings.maxStep ?? Infinity);
    s.started = true;
    observe(s.watch, 0, problem.monitors.map((m) => m.evaluate(s.u, params)), s.residual);
    const events: DynamicsEvent[] = [{ type: 'start', record: this.record(0, 0, false) }];
    events.push(...this.afterStep(Infinity));
    return events;
  }

  // -------------------------------------------------------------------------------------------
  // one step

  private ensureFactors(c: number, force: boolean): boolean {
    const m = this.matrix;
    const steps = this.state.counters.steps;
    const stale = !m.factored || !(c <= m.c * refactorRatio && c >= m.c / refactorRatio);
    if (!stale && !force) return false;
    if (this.jacobianStep !== steps) {
      m.evaluateJacobian(this.state.u, this.params);
      this.jacobianStep = steps;
    }
    m.factor(c);
    return true;
  }

  /**
   * One attempt at a step of size h. Returns the new state (in this.x) and the error estimate,
   * or why it failed: Newton did not converge (with a fresh Jacobian) or the error is too large.
   */
  private attempt(h: number): { ok: true; err: number; order: 1 | 2; iterations: number; factorised: boolean; derivative: number } | { ok: false; reason: 'newton' | 'error'; err: number; order: 1 | 2 } {
    const s = this.state;
    const n = this.n;
    const prev = s.previous;
    const last = prev[prev.length - 1];
    const h1 = last ? s.t - last.t : undefined;
    const h2 = prev.length >= 2 ? last.t - prev[prev.length - 2].t : undefined;
    const form = bdfFormula(h, h1);
    const c = form.gamma * h;
    const psi = this.psi;
    for (let i = 0; i < n; i++) psi[i] = form.a1 * s.u[i] - (last ? form.a2 * last.u[i] : 0);
    // predictor
    const tn = s.t + h;
    if (prev.length >= 2) combine(lagrangeWeights([prev[prev.length - 2].t, last.t, s.t], tn), [prev[prev.length - 2].u, last.u, s.u], this.pred);
    else if (last) hermitePredict(last.t, last.u, s.startDerivative, s.t, s.u, tn, this.pred);
    else for (let i = 0; i < n; i++) this.pred[i] = s.u[i] + h * s.startDerivative[i];
    const C = correctorConstant(h, h1);
    const K = C / (C + predictorConstant(h, h1, h2));

    let factorised = false;
    try {
      factorised = this.ensureFactors(c, false);
    } catch (e) {
      if (!(e instanceof SparseLUError)) throw e;
      return { ok: false, reason: 'newton', err: Infinity, order: form.order };
    }
    let newton = this.newton(c, psi);
    if (!newton.ok && this.jacobianStep !== s.counters.steps) {
      // stale Jacobian: evaluate it at the current state, factorise and try again
      try {
        this.ensureFactors(c, true);
        factorised = true;
        newton = this.newton(c, psi);
      } catch (e) {
        if (!(e instanceof SparseLUError)) throw e;
      }
    }
    s.counters.newtonIterations += newton.iterations;
    if (!newton.ok) {
      s.counters.newtonFailures++;
      return { ok: false, reason: 'newton', err: Infinity, order: form.order };
    }
    // the BDF's own estimate of F at the new state: M(x − ψ)/c (steady-state test)
    const x = this.x;
    for (let i = 0; i < n; i++) this.g[i] = (this.mass[i] * (x[i] - psi[i])) / c;
    const derivative = this.scaledNorm(this.g);
    if (this.settings.fixedStep !== undefined) return { ok: true, err: 0, order: form.order, iterations: newton.iterations, factorised, derivative };
    // local error: K (x − pred), filtered through (M − cJ)⁻¹ M
    for (let i = 0; i < n; i++) this.g[i] = this.mass[i] * K * (x[i] - this.pred[i]);
    try {
      this.matrix.solve(this.g, this.est);
    } catch (e) {
      if (!(e instanceof SparseLUError)) throw e;
      for (let i = 0; i < n; i++) this.est[i] = K * (x[i] - this.pred[i]);
    }
    const err = this.errorNorm(this.est, s.u, x);
    if (!(err <= 1)) return { ok: false, reason: 'error', err, order: form.order };
    return { ok: true, err, order: form.order, iterations: newton.iterations, factorised, derivative };
  }

  /** Modified Newton from the predictor on M(x − ψ) − cF(x) = 0; the result in this.x. */
  private newton(c: number, psi: Float64Array): { ok: boolean; iterations: number } {
    const n = this.n;
    const x = this.x;
    x.set(this.pred);
    const { f, g, d, mass } = this;
    const m = this.matrix;
    const scale = m.c === c ? 1 : 2 / (1 + c / m.c);
    // the rate remembered from the last step (floored: a modified Newton iteration with kept
    // factors rarely contracts faster than this, so one iteration is accepted only when tiny)
    let eta = Math.max(this.state.eta, etaFloor) ** 0.8;
    let previousNorm = Infinity;
    for (let k = 0; k < maxNewton; k++) {
      this.problem.residual(x, this.params, f);
      this.state.counters.residuals++;
      for (let i = 0; i < n; i++) g[i] = -(mass[i] * (x[i] - psi[i]) - c * f[i]);
      try {
        m.solve(g, d);
      } catch (e) {
        if (e instanceof SparseLUError) return { ok: false, iterations: k + 1 };
        throw e;
      }
      if (scale !== 1) for (let i = 0; i < n; i++) d[i] *= scale;
      const norm = this.errorNorm(d, x, undefined, true);
      if (!Number.isFinite(norm)) return { ok: false, iterations: k + 1 };
      if (k > 0) {
        const theta = norm / previousNorm;
        if (theta >= 0.99) return { ok: false, iterations: k + 1 };
        eta = theta / (1 - theta);
        if ((theta ** (maxNewton - 1 - k) / (1 - theta)) * norm > kappa) return { ok: false, iterations: k + 1 };
      }
      for (let i = 0; i < n; i++) x[i] += d[i];
      if (eta * norm <= kappa || norm <= 1e-12) {
        this.state.eta = eta;
        return { ok: true, iterations: k + 1 };
      }
      previousNorm = norm;
    }
    return { ok: false, iterations: maxNewton };
  }

  /** Take one accepted step (retrying with smaller steps as needed) and judge where it leads. */
  private advance(): DynamicsEvent[] {
    const s = this.state;
    const st = this.settings;
    const minStep = 1e-14 * Math.max(1, s.t, st.end * 1e-6);
    const left = st.end - s.t;
    let h = Math.min(s.h, st.maxStep ?? Infinity, s.nearUnstable ? 1 / s.nearUnstable.leading : Infinity);
    if (left <= h * (1 + 1e-9)) h = left;
    // a last step much shorter than the one before would be a poor ratio: split the rest in two
    else if (st.fixedStep === undefined && left < 1.5 * h) h = left / 2;
    const events: DynamicsEvent[] = [];
    let result: ReturnType<TimeIntegration['attempt']>;
    for (;;) {
      if (!(h >= minStep)) return this.finish(this.collapse(h), events);
      result = this.attempt(h);
      if (result.ok) break;
      s.counters.rejected++;
      s.sinceChange = 0;
      if (st.fixedStep !== undefined) return this.finish({ kind: 'failed', time: s.t, message: `Newton did not converge with the fixed step ${h}` }, events);
      h = result.reason === 'newton' ? h / 4 : h * Math.max(0.2, 0.9 * result.err ** (-1 / (result.order + 1)));
    }
    // accept
    const tOld = s.t;
    s.previous.push({ t: s.t, u: s.u });
    if (s.previous.length > 2) s.previous.shift();
    s.u = this.x.slice();
    s.t = tOld + h;
    if (st.end - s.t < 1e-12 * st.end) s.t = st.end;
    s.counters.steps++;
    s.residual = this.residualOf(s.u);
    // the next step size
    if (st.fixedStep === undefined) {
      const fac = Math.min(maxGrowth, Math.max(0.2, 0.9 * Math.max(result.err, 1e-10) ** (-1 / (result.order + 1))));
      if (fac >= 1.5 && s.sinceChange + 1 >= hold) {
        s.h = h * fac;
        s.sinceChange = 0;
      } else if (fac < 1) {
        s.h = h * fac;
        s.sinceChange = 0;
      } else {
        s.h = h;
        s.sinceChange++;
      }
    }
    const rec = this.record(h, result.iterations, result.factorised);
    events.push({ type: 'step', record: rec });
    // snapshots at the scheduled times passed by this step (quadratic interpolation)
    while (s.nextSnapshot <= s.t * (1 + 1e-12)) {
      const nodes = [...s.previous.map((q) => q.t), s.t];
      const states = [...s.previous.map((q) => q.u), s.u];
      const u = combine(lagrangeWeights(nodes, s.nextSnapshot), states, new Float64Array(this.n));
      events.push({ type: 'snapshot', time: s.nextSnapshot, u });
      s.nextSnapshot = nextSnapshotTime(st.snapshots, st.end, s.nextSnapshot);
    }
    observe(s.watch, s.t, this.problem.monitors.map((m) => rec.monitors[m.name]), s.residual);
    events.push(...this.afterStep(result.derivative));
    return events;
  }

  /** After the start or an accepted step: has the integration reached an end? */
  private afterStep(derivative: number): DynamicsEvent[] {
    const s = this.state;
    const st = this.settings;
    const events: DynamicsEvent[] = [];
    let finite = true;
    for (let i = 0; i < this.n; i++) if (!Number.isFinite(s.u[i])) finite = false;
    if (!finite || !Number.isFinite(s.residual)) return this.finish({ kind: 'blown-up', time: s.t, max: Infinity, limit: st.blowUp }, events);
    const max = infNorm(s.u);
    if (max > st.blowUp) return this.finish({ kind: 'blown-up', time: s.t, max, limit: st.blowUp }, events);
    // steady?
    const measure = Math.min(s.residual, derivative);
    const saddle = s.nearUnstable;
    if (saddle && (measure > rearm * st.steadyTolerance || s.t - saddle.time > rearmGrowth / saddle.leading)) {
      // the dynamics has left the unstable steady state (the residual rose, or any disturbance has
      // grown e^20-fold since): steady states count again
      s.nearUnstable = null;
      events.push({ type: 'log', level: 'info', message: `at t = ${fmt(s.t)} the state has left the unstable steady state met at t = ${fmt(saddle.time)}` });
    }
    if (!s.nearUnstable && measure <= st.steadyTolerance && measure < s.polishFailedAt / 10) {
      const found = this.polished(measure, events);
      if (found && found.stability?.stable === false) {
        // passed near an unstable steady state: go on (steps kept short enough to see it leave)
        s.nearUnstable = { time: s.t, leading: found.stability.leading!.re };
        events.push({
          type: 'log',
          level: 'info',
          message: `at t = ${fmt(s.t)} the state is near a steady state that is unstable (rightmost eigenvalue ${fmt(found.stability.leading!.re)}): integrating on`,
        });
      } else if (found) {
        return this.finishSteady(found, events);
      }
    }
    if (s.nearUnstable && (s.t >= st.end || s.counters.steps >= st.maxSteps)) {
      // it never left (an exactly symmetric state cannot): that unstable steady state is the result
      const found = this.polished(Math.min(s.residual, derivative), events);
      if (found) return this.finishSteady(found, events);
    }
    const osc = steadyOscillation(s.watch);
    if (osc) {
      return this.finish({ kind: 'oscillating', time: s.t, period: osc.period, amplitudes: osc.amplitudes, monitor: osc.monitor, residual: s.residual }, events);
    }
    if (s.t >= st.end || s.counters.steps >= st.maxSteps) {
      const trend = residualTrend(s.watch);
      const wave = transientOscillation(s.watch, s.t);
      return this.finish(
        {
          kind: 'drifting',
          time: s.t,
          limit: s.t >= st.end ? 'time' : 'steps',
          residual: s.residual,
          ...(trend ? { timePerDecade: trend.timePerDecade, falling: trend.falling } : {}),
          ...(wave ? { oscillation: { period: wave.period, amplitudeRatio: wave.amplitudeRatio, monitor: wave.monitor } } : {}),
        },
        events,
      );
    }
    return events;
  }

  /**
   * Polish the current state by Newton's method. A steady state when it converges within 1% of the
   * integrated state (then, with eigenvalues asked for, with its stability); else undefined, and a
   * log line says why.
   */
  private polished(measure: number, events: DynamicsEvent[]): { u: Float64Array; residual: number; iterations: number; distance: number; stability?: SteadyStability } | undefined {
    const s = this.state;
    const st = this.settings;
    const u = s.u.slice();
    // the polish's linear algebra is counted apart from the integration's
    this.syncCounters();
    const m = this.matrix;
    const before = m.factorisations + m.refactorisations;
    const r = polishSteadyState(this.problem, this.params, u, m, (f) => this.scaledNorm(f), st.newton);
    s.counters.polish.attempts++;
    s.counters.polish.iterations += r.iterations;
    s.counters.polish.factorisations += m.factorisations + m.refactorisations - before;
    this.matrixCounts = { jacobians: m.jacobians, factorisations: m.factorisations, refactorisations: m.refactorisations, solves: m.solves };
    // the polish used the iteration matrix: the integration's factors are gone
    this.restartLinearAlgebra();
    const diff = new Float64Array(this.n);
    for (let i = 0; i < this.n; i++) diff[i] = u[i] - s.u[i];
    const w = this.problem.weights;
    const relative = Math.sqrt(weightedDot(w, diff, diff) / Math.max(weightedDot(w, s.u, s.u), 1e-300));
    const distance = this.errorNorm(diff, u);
    if (r.converged && (relative <= polishDistance || distance <= 1)) {
      const k = st.stability?.eigenvalues ?? 0;
      let stability: SteadyStability | undefined;
      if (k > 0) {
        try {
          stability = steadyStability(this.problem, this.params, u, k);
        } catch (e) {
          events.push({ type: 'log', level: 'warning', message: `the eigenvalues of the steady state could not be computed: ${(e as Error).message}` });
        }
      }
      return { u, residual: r.residual, iterations: r.iterations, distance, ...(stability ? { stability } : {}) };
    }
    s.polishFailedAt = measure;
    events.push({
      type: 'log',
      level: 'info',
      message: r.converged
        ? `at t = ${fmt(s.t)} the residual is ${fmt(measure)}, but Newton's method went to a steady state ${fmt(100 * relative)}% away: integrating on`
        : `at t = ${fmt(s.t)} the residual is ${fmt(measure)}, but Newton's method did not converge (${r.message}): integrating on`,
    });
    return undefined;
  }

  private finishSteady(found: NonNullable<ReturnType<TimeIntegration['polished']>>, events: DynamicsEvent[]): DynamicsEvent[] {
    const s = this.state;
    const integratedResidual = s.residual;
    s.u = found.u;
    s.residual = found.residual;
    return this.finish(
      {
        kind: 'steady',
        time: s.t,
        integratedResidual,
        residual: found.residual,
        newtonIterations: found.iterations,
        distance: found.distance,
        ...(found.stability ? { stability: found.stability } : {}),
      },
      events,
    );
  }

  /** The step size fell below the smallest allowed: a blow-up when the state grew a lot, else a failure. */
  private collapse(h: number): Outcome {
    const s = this.state;
    const max = infNorm(s.u);
    // a step size that collapses while the state or its rate of change grows a lot: a singularity
    // forms (blow-up in finite time), rather than a failure of the method
    if (max > 10 * Math.max(1, s.startMax) || s.residual > 1e6 * Math.max(s.startResidual, this.settings.steadyTolerance)) {
      return { kind: 'blown-up', time: s.t, max, limit: this.settings.blowUp, collapsed: true };
    }
    return { kind: 'failed', time: s.t, message: `the step size fell to ${fmt(h)} (Newton's method or the error test failed at every smaller step)` };
  }

  private finish(outcome: Outcome, events: DynamicsEvent[]): DynamicsEvent[] {
    const s = this.state;
    s.done = true;
    events.push({ type: 'end', outcome, time: s.t, u: s.u.slice(), monitors: this.monitorsOf(s.u) });
    return events;
  }
}

function fmt(x: number): string {
  return Number(x.toPrecision(4)).toString();
}
