/**
 * The curve engine: pseudo-arclength continuation (Keller 1977) of the solution curve of an
 * augmented system (./augmented.ts) — a fold or a branch point followed in two parameters —
 * with test functions, location of codimension-two points along the curve, mode changes, bounds
 * on both parameters and the same stop conditions as branches.
 *
 * No I/O. `events()` yields `branch-start` (a curve), `point`, `special`, `branch-end` and `log`
 * events, like the one-parameter engine. All mutable state is one plain object (`CurveState`):
 * `snapshot()` returns a copy whenever `canSnapshot` is true (between steps), and passing it back
 * as `options.state` resumes where it was taken; `restartLinearAlgebra()` drops kept pivots so a
 * resumed run repeats the uninterrupted one.
 *
 * A step: tangent predictor, Newton corrector in the hyperplane orthogonal to the tangent, the
 * tangent at the converged point (reject a turn sharper than `maxTurnDegrees`), step growth from
 * the Newton count — as for branches. Then the test functions: a sign change between two points
 * is located along the arc by the Illinois variant of regula falsi on the arclength, each trial
 * point corrected onto the curve; borders stay fixed within a step, so the functions are smooth
 * there. Only then are the borders refreshed from the new point's null vectors.
 */
import { type Params, type Problem, weightedNorm } from '../../problem/problem.js';
import { difference } from '../../linalg/vector.js';
import type { LUOptions } from '../../linalg/lu.js';
import type { AugmentedSystem, SystemCounters, TestValue } from './augmented.js';
import { BranchPointSystem } from './branch-point-system.js';
import { FoldSystem } from './fold-system.js';
import { HopfSystem } from './hopf-system.js';
import { type CurveWork, correctCurve, curveWork, residualPasses, wdot, wnorm } from './newton.js';
import { CurveError, searchFirstPoint } from './search.js';
import { uniformSubspace } from './uniform.js';
import {
  type CurveEndPoint,
  type CurveEvent,
  type CurveInfo,
  type CurvePoint,
  type CurveSettings,
  type CurveSpecialPoint,
  type CurveOnlyStopReason,
  type CurveStopReason,
  curveOnlyStopText,
} from './types.js';
import { stopReasonText } from '../types.js';

export { CurveError };

/** A curve waiting to be followed (queued at a mode change). */
export interface PendingCurve {
  info: CurveInfo;
  /**
   * Where it starts (a mode change, or the first point again for the second way of
   * `direction: both`) and, off a mode change, its first converged point beyond.
   */
  origin: Float64Array;
  first?: Float64Array;
  tangent: Float64Array;
  step: number;
  tests: TestValue[];
  residual: number;
  /** The system's borders and scales for this curve. */
  system: Float64Array[];
}

export interface CurveBranchState {
  info: CurveInfo;
  y: Float64Array;
  tangent: Float64Array;
  step: number;
  arclength: number;
  index: number;
  residual: number;
  tests: TestValue[];
  firstY: Float64Array;
  firstTangent: Float64Array;
  /** The followed critical mode at the current point (branch-point curves). */
  mode?: number[];
}

export interface CurveState {
  version: 1;
  started: boolean;
  /** The state and parameters the curve system was built at (branch-point curves: its uniform subspace). */
  anchor?: { u: Float64Array; params: Record<string, number>; frequency?: number };
  nextId: number;
  curves: CurveInfo[];
  queue: PendingCurve[];
  current: CurveBranchState | null;
  ended: { id: number; reason: CurveStopReason; points: number; message: string }[];
  /** The system's borders and scales at the snapshot. */
  system?: Float64Array[];
}

export interface CurveOptions {
  /** The start state (else the model's initial guess). */
  start?: Float64Array;
  /** The start state is at the special point already (a fold or branch point of an earlier run): no search. */
  atPoint?: boolean;
  /**
   * Hopf curves: the frequency of the critical pair at the start point (0 at a Bogdanov–Takens
   * point of a fold curve; undefined: the pair nearest the imaginary axis at the start).
   */
  frequency?: number;
  /** Resume from a snapshot. */
  state?: CurveState;
  luOptions?: LUOptions;
}

export interface CurveSummary {
  branches: { id: number; reason: CurveStopReason; points: number; message: string }[];
  counters: SystemCounters;
}

/** Build the augmented system of a curve kind at a start state (issue: more kinds plug in here). */
export function curveSystem(problem: Problem, params: Params, settings: CurveSettings, u: Float64Array, luOptions: LUOptions = {}, frequency?: number): AugmentedSystem {
  switch (settings.follow) {
    case 'fold':
      return new FoldSystem(problem, params, settings.parameter, settings.free, luOptions);
    case 'branch-point': {
      if (problem.extraUnknowns.length > 0) {
        throw new CurveError(`branch-point curves follow a uniform state; this problem has extra unknowns (${problem.extraUnknowns.map((e) => e.name).join(', ')}), which make the uniform state's Jacobian singular: drop the phase condition or constraint`);
      }
      let space;
      try {
        space = uniformSubspace(problem, u, params);
      } catch (e) {
        throw new CurveError((e as Error).message);
      }
      return new BranchPointSystem(problem, params, settings.parameter, settings.free, space, luOptions);
    }
    case 'hopf':
      return new HopfSystem(problem, params, settings.parameter, settings.free, frequency, settings.eigenvalues, luOptions);
  }
}

function fmt(v: number): string {
  return Number(v.toPrecision(10)).toString();
}

export class CurveContinuation {
  private state: CurveState;
  private sys: AugmentedSystem | undefined;
  private work: CurveWork | undefined;
  private quiescent = true;

  constructor(
    readonly problem: Problem,
    readonly params: Params,
    readonly settings: CurveSettings,
    private readonly options: CurveOptions = {},
  ) {
    if (settings.parameter === settings.free) throw new CurveError(`the free parameter must differ from the continuation parameter (both are '${settings.parameter}')`);
    for (const name of [settings.parameter, settings.free]) {
      if (!(name in params)) throw new CurveError(`unknown parameter '${name}' (known: ${Object.keys(params).join(', ')})`);
    }
    this.state = options.state
      ? structuredClone(options.state)
      : { version: 1, started: false, nextId: 1, curves: [], queue: [], current: null, ended: [] };
    if (this.state.anchor) this.build(this.state.anchor.u, this.state.anchor.params, this.state.anchor.frequency);
    if (this.state.system && this.sys) this.sys.restoreState(this.state.system);
  }

  private build(u: Float64Array, p: Params, frequency?: number): void {
    this.sys = curveSystem(this.problem, { ...this.params, ...p }, this.settings, u, this.options.luOptions, frequency);
    this.work = curveWork(this.sys.size);
  }

  /** The augmented system (after the start). */
  get system(): AugmentedSystem | undefined {
    return this.sys;
  }

  get canSnapshot(): boolean {
    return this.quiescent;
  }

  snapshot(): CurveState {
    const s = structuredClone(this.state);
    if (this.sys) s.system = this.sys.saveState();
    return s;
  }

  restartLinearAlgebra(): void {
    this.sys?.restart();
  }

  get counters(): SystemCounters {
    return this.sys ? structuredClone(this.sys.counters) : { factorisations: 0, refactorisations: 0, solves: 0, assemblies: 0, seconds: { residual: 0, assembly: 0, factorisation: 0, solves: 0, derivatives: 0 } };
  }

  dispose(): void {
    this.sys?.dispose();
  }

  *events(): Generator<CurveEvent, CurveSummary> {
    try {
      if (!this.state.started) {
        yield* this.emit(this.startEvents());
      }
      for (;;) {
        let b = this.state.current;
        if (!b) {
          const next = this.state.queue.shift();
          if (!next) break;
          yield* this.emit(this.startPending(next));
          b = this.state.current!;
          if (b.index + 1 >= this.settings.maxPoints) {
            yield* this.emit(this.end(b, 'point-limit'));
            continue;
          }
        }
        yield* this.emit(this.step(b));
      }
    } finally {
      this.quiescent = true;
    }
    return { branches: this.state.ended.map((e) => ({ ...e })), counters: this.counters };
  }

  private *emit(events: CurveEvent[]): Generator<CurveEvent> {
    for (let i = 0; i < events.length; i++) {
      this.quiescent = i === events.length - 1;
      yield events[i];
    }
    this.quiescent = true;
  }

  private newton(fresh = false) {
    return { ...this.settings.newton, ...(fresh ? { maxIterations: Math.max(30, this.settings.newton.maxIterations) } : {}) };
  }

  private unit(k: number): Float64Array {
    const e = new Float64Array(this.sys!.size);
    e[k] = 1;
    return e;
  }

  /**
   * The unit tangent at the last evaluated point: [G_y; (W d)ᵀ] z = e_last, normalised (so
   * ⟨d, z⟩_w > 0: oriented along d).
   */
  private tangentAlong(d: Float64Array, exact: boolean): Float64Array {
    const sys = this.sys!;
    const m = sys.size;
    // along a curve the step's own linearisation (made within a Newton step of the point) is
    // accurate enough for a predictor; first points get the exact one
    if (exact) sys.exact();
    const row = new Float64Array(m);
    for (let i = 0; i < m; i++) row[i] = sys.weights[i] * d[i];
    const rhs = new Float64Array(m);
    rhs[m - 1] = 1;
    const z = new Float64Array(m);
    sys.solve(row, rhs, z);
    const s = wnorm(sys, z);
    if (!(s > 0) || !Number.isFinite(s)) throw new Error('the tangent is not finite');
    for (let i = 0; i < m; i++) z[i] /= s;
    return z;
  }

  private testRecord(tests: readonly TestValue[]): Record<string, number> {
    const out: Record<string, number> = {};
    this.sys!.testFunctions.forEach((f, i) => (out[f.name] = tests[i]?.value ?? NaN));
    return out;
  }

  private determinantSign(tests: readonly TestValue[]): number {
    const i = this.sys!.testFunctions.findIndex((f) => f.type === 'determinant');
    return i >= 0 ? (tests[i]?.value ?? 0) : 0;
  }

  private monitors(u: Float64Array, p: Params): Record<string, number> {
    const out: Record<string, number> = {};
    for (const m of this.problem.monitors) out[m.name] = m.evaluate(u, p);
    return out;
  }

  /**
   * The true ‖F(u, p)‖_w of a state written out (the corrector's residual where it has one; else,
   * e.g. at the origin of a curve born at a mode change, evaluated here).
   */
  private trueResidual(u: Float64Array, p: Params, known: number): number {
    if (Number.isFinite(known)) return known;
    const f = new Float64Array(this.problem.size);
    this.problem.residual(u, p, f);
    return weightedNorm(this.problem.weights, f);
  }

  private pointEvent(b: CurveBranchState, step: number, iterations: number, mode?: number[]): CurveEvent {
    const sys = this.sys!;
    const u = sys.state(b.y);
    const p = sys.params(b.y);
    const point: CurvePoint = {
      branch: b.info.id,
      index: b.index,
      arclength: b.arclength,
      parameter: b.y[sys.parameterIndex],
      free: b.y[sys.freeIndex],
      u,
      monitors: this.monitors(u, p),
      step,
      newtonIterations: iterations,
      residual: this.trueResidual(u, p, b.residual),
      tangentParameter: b.tangent[sys.parameterIndex],
      determinantSign: this.determinantSign(b.tests),
      tests: this.testRecord(b.tests),
      ...(mode ? { mode } : {}),
    };
    return { type: 'point', point };
  }

  /** Search (unless starting at the point), converge the first point, its tangent; curve 1 begins. */
  private startEvents(): CurveEvent[] {
    const st = this.settings;
    const events: CurveEvent[] = [];
    let u = this.options.start ?? this.problem.initialGuess(this.params);
    if (u.length !== this.problem.size) throw new CurveError(`the start state has ${u.length} values, the problem has ${this.problem.size} unknowns`);
    let p: Params = this.params;
    const what = st.follow === 'fold' ? 'fold' : st.follow === 'hopf' ? 'Hopf point' : 'branch point';
    let frequency = this.options.frequency;
    if (!this.options.atPoint) {
      const found = searchFirstPoint(this.problem, this.params, st, u);
      u = found.u;
      p = found.params;
      if (found.frequency !== undefined) frequency = found.frequency;
      events.push({ type: 'log', level: 'info', message: `the first ${what} met moving ${st.free} from ${fmt(this.params[st.free])}: ${st.free} = ${fmt(p[st.free])} (after ${found.points} points)` });
    }
    const [lo, hi] = st.bounds;
    const p0 = p[st.parameter];
    if (p0 < lo || p0 > hi) throw new CurveError(`the start value ${st.parameter} = ${p0} lies outside the bounds [${lo}, ${hi}]`);
    this.build(u, p, frequency);
    this.state.anchor = { u: u.slice(), params: { ...p }, ...(frequency !== undefined ? { frequency } : {}) };
    const sys = this.sys!;
    const y = sys.fromState(u, p);
    try {
      sys.initialise(y);
      sys.setScale(y);
    } catch (e) {
      throw new CurveError(`the ${what} system cannot be set up at the start point (${st.parameter} = ${fmt(p0)}, ${st.free} = ${fmt(p[st.free])}): ${(e as Error).message}`);
    }
    const eParam = this.unit(sys.parameterIndex);
    const res = correctCurve(sys, y, eParam, y.slice(), this.newton(true), this.work!);
    if (!res.converged) {
      let hint = '';
      if (sys instanceof BranchPointSystem && sys.offSubspaceResidual() > st.newton.residualTolerance) {
        hint = '; the state does not stay uniform under this model (fixed walls with non-zero values, or a position-dependent reaction): branch-point curves follow a uniform state';
      }
      throw new CurveError(`the first point of the ${what} curve did not converge at ${st.parameter} = ${fmt(p0)} (${res.message ?? res.failure})${hint}`);
    }
    let tangent: Float64Array;
    // a Hopf curve leaves a Bogdanov–Takens point along ω, one way only
    const along = sys.startDirection?.(y);
    if (along) {
      tangent = this.tangentAlong(along, true);
      if (st.direction === 'both') events.push({ type: 'log', level: 'info', message: `the curve leaves the start point one way only (direction: both does not apply there)` });
    } else {
      try {
        tangent = this.tangentAlong(eParam, true);
      } catch {
        // the curve is vertical here (parameter at a turn): orient along the free parameter instead
        tangent = this.tangentAlong(this.unit(sys.freeIndex), true);
      }
    }
    const dir = along ? (tangent[sys.parameterIndex] < 0 ? -1 : 1) : st.direction === 'decrease' ? -1 : 1;
    if (!along && tangent[sys.parameterIndex] * dir < 0) for (let i = 0; i < tangent.length; i++) tangent[i] = -tangent[i];
    const tests = sys.tests(true);
    const mode = sys.mode?.();
    sys.adopt();
    const info: CurveInfo = { id: this.state.nextId++, depth: 0, follow: st.follow, origin: along ? { kind: 'start', at: 'bogdanov-takens' } : { kind: 'start' }, direction: dir > 0 ? 'increase' : 'decrease', ...(mode ? { mode } : {}) };
    if (st.direction === 'both' && !along) {
      // the other way from the same first point, once this curve has ended
      const back = tangent.map((t) => -t);
      const other: CurveInfo = { id: this.state.nextId++, depth: 0, follow: st.follow, origin: { kind: 'start' }, direction: 'decrease', ...(mode ? { mode } : {}) };
      this.state.queue.push({ info: other, origin: y.slice(), tangent: back, step: st.step.initial, tests, residual: res.residual, system: sys.saveState() });
    }
    const b: CurveBranchState = {
      info,
      y,
      tangent,
      step: st.step.initial,
      arclength: 0,
      index: 0,
      residual: res.residual,
      tests,
      firstY: y.slice(),
      firstTangent: tangent.slice(),
      ...(mode ? { mode } : {}),
    };
    this.state.curves.push(info);
    this.state.current = b;
    this.state.started = true;
    events.push({ type: 'branch-start', branch: info }, this.pointEvent(b, 0, res.iterations, mode));
    return events;
  }

  private startPending(p: PendingCurve): CurveEvent[] {
    const sys = this.sys!;
    sys.restoreState(p.system);
    const b: CurveBranchState = {
      info: p.info,
      y: p.origin.slice(),
      tangent: p.tangent.slice(),
      step: p.step,
      arclength: 0,
      index: 0,
      residual: NaN,
      tests: p.tests.map(() => ({ value: NaN })),
      firstY: p.origin.slice(),
      firstTangent: p.tangent.slice(),
      ...(p.info.mode ? { mode: p.info.mode } : {}),
    };
    this.state.curves.push(p.info);
    if (!p.first) {
      // the second way from the first point: the same point, the tangent reversed
      b.residual = p.residual;
      b.tests = p.tests;
      this.state.current = b;
      return [{ type: 'branch-start', branch: p.info }, this.pointEvent(b, 0, 0, p.info.mode)];
    }
    const events: CurveEvent[] = [{ type: 'branch-start', branch: p.info }, this.pointEvent(b, 0, 0, p.info.mode)];
    const ds = wnorm(sys, difference(p.first, p.origin));
    b.y = p.first.slice();
    b.arclength = ds;
    b.index = 1;
    b.residual = p.residual;
    b.tests = p.tests;
    events.push(this.pointEvent(b, ds, 0, p.info.mode));
    this.state.current = b;
    return events;
  }

  private end(b: CurveBranchState, reason: CurveStopReason, message?: string): CurveEvent[] {
    const sys = this.sys!;
    const text = message ?? curveOnlyStopText(reason) ?? stopReasonText[reason as keyof typeof stopReasonText];
    const u = sys.state(b.y);
    const p = sys.params(b.y);
    const endPoint: CurveEndPoint = {
      kind: 'end',
      branch: b.info.id,
      value: b.y[sys.parameterIndex],
      free: b.y[sys.freeIndex],
      arclength: b.arclength,
      u,
      monitors: this.monitors(u, p),
      residual: this.trueResidual(u, p, b.residual),
      reason,
    };
    this.state.ended.push({ id: b.info.id, reason, points: b.index + 1, message: text });
    this.state.current = null;
    return [
      { type: 'special', point: endPoint },
      { type: 'branch-end', branch: b.info.id, reason, message: text },
    ];
  }

  /** One pseudo-arclength step (with retries). */
  private step(b: CurveBranchState): CurveEvent[] {
    const sys = this.sys!;
    const st = this.settings;
    const m = sys.size;
    const cosMax = Math.cos((st.maxTurnDegrees * Math.PI) / 180);
    let ds = b.step;
    for (;;) {
      const yp = new Float64Array(m);
      for (let i = 0; i < m; i++) yp[i] = b.y[i] + ds * b.tangent[i];
      const yNew = yp.slice();
      const res = correctCurve(sys, yNew, b.tangent, yp, { ...st.newton, maxUpdate: Math.max(ds, 1e-3) * 2 }, this.work!);
      let rejection = res.converged ? undefined : res.message;
      let tangent: Float64Array | undefined;
      if (res.converged) {
        try {
          tangent = this.tangentAlong(b.tangent, false);
          const cos = wdot(sys, tangent, b.tangent);
          if (cos < cosMax && ds > st.step.min) rejection = `the tangent turned by ${((Math.acos(Math.min(1, cos)) * 180) / Math.PI).toFixed(1)}°`;
        } catch (e) {
          rejection = (e as Error).message;
        }
      }
      if (rejection !== undefined || !tangent) {
        if (res.failure === 'non-finite' && ds <= st.step.min) return this.end(b, 'non-finite', `non-finite values near ${st.parameter} = ${fmt(b.y[sys.parameterIndex])}: ${res.message}`);
        ds *= 0.5;
        if (ds < st.step.min) {
          return this.end(b, 'minimum-step', `no convergence even at the minimum step ${st.step.min} near ${st.parameter} = ${fmt(b.y[sys.parameterIndex])}, ${st.free} = ${fmt(b.y[sys.freeIndex])} (${rejection})`);
        }
        continue;
      }
      return this.accept(b, yNew, tangent, ds, res.iterations, res.residual);
    }
  }

  /** Locate zeros of the test functions between the current point and yNew (before the borders change). */
  private locateAll(
    b: CurveBranchState,
    yNew: Float64Array,
    testsNew: TestValue[],
    ds: number,
  ): { found: { s: number; special: CurveSpecialPoint; y: Float64Array; tests: TestValue[] }[]; tests: TestValue[]; logs: CurveEvent[] } {
    const sys = this.sys!;
    const out: { s: number; special: CurveSpecialPoint; y: Float64Array; tests: TestValue[] }[] = [];
    const logs: CurveEvent[] = [];
    if (!this.settings.locate) return { found: out, tests: testsNew, logs };
    // determinant signs come from the step's factorisation: confirm a change at the point itself
    let exactNew: TestValue[] | undefined;
    sys.testFunctions.forEach((f, i) => {
      if (f.type !== 'determinant' || exactNew) return;
      if (Math.sign(b.tests[i]?.value) * Math.sign(testsNew[i]?.value) < 0) exactNew = sys.tests(true);
    });
    if (exactNew) {
      testsNew = testsNew.slice();
      sys.testFunctions.forEach((f, i) => {
        if (f.type === 'determinant') testsNew[i] = exactNew![i];
      });
    }
    sys.testFunctions.forEach((f, i) => {
      const a = b.tests[i]?.value;
      const c = testsNew[i]?.value;
      if (!Number.isFinite(a) || !Number.isFinite(c) || a === 0 || c === 0 || Math.sign(a) === Math.sign(c)) return;
      const loc = this.locate(b, i, yNew, testsNew, ds);
      if (loc && 'pole' in loc) {
        logs.push({
          type: 'log',
          level: 'info',
          message: `curve ${b.info.id}: ${f.description.replace(/;.*$/, '')} changed sign through a pole, not a zero, near ${this.settings.parameter} = ${fmt(loc.at[sys.parameterIndex])}, ${this.settings.free} = ${fmt(loc.at[sys.freeIndex])}: no ${f.kind.replace(/-/g, ' ')} point there`,
        });
        return;
      }
      if (!loc) {
        // the exact determinants agree at both ends: the sign change the step's factorisation
        // suggested happened just before the current point (or not at all)
        logs.push({
          type: 'log',
          level: 'warning',
          message: `curve ${b.info.id}: ${f.description.replace(/;.*$/, '')} changed sign near ${this.settings.parameter} = ${fmt(b.y[sys.parameterIndex])}, ${this.settings.free} = ${fmt(b.y[sys.freeIndex])}, just before a computed point: a ${f.kind.replace(/-/g, ' ')} there was not located`,
        });
        return;
      }
      const u = sys.state(loc.y);
      const p = sys.params(loc.y);
      // the followed mode (at the located point itself two modes mix)
      const mode = b.mode ?? sys.mode?.();
      const special: CurveSpecialPoint = {
        kind: f.kind,
        branch: b.info.id,
        value: loc.y[sys.parameterIndex],
        free: loc.y[sys.freeIndex],
        arclength: b.arclength + loc.s,
        u,
        monitors: this.monitors(u, p),
        residual: this.trueResidual(u, p, loc.residual),
        located: loc.located,
        tests: this.testRecord(loc.tests),
        ...(mode ? { mode } : {}),
        ...(loc.located ? {} : { note: loc.note }),
      };
      out.push({ s: loc.s, special, y: loc.y, tests: loc.tests });
    });
    out.sort((x, y) => x.s - y.s);
    return { found: out, tests: testsNew, logs };
  }

  /**
   * The zero of test function i between s = 0 (the current point) and s = ds (yNew) along the
   * arc: Illinois regula falsi on s, each trial point corrected in the hyperplane
   * ⟨t, y − (y_b + s t)⟩_w = 0. Determinant-type functions use sign·exp(log|det| − ref), smooth
   * while the borders stay fixed.
   */
  private locate(
    b: CurveBranchState,
    i: number,
    yNew: Float64Array,
    testsNew: TestValue[],
    ds: number,
  ): { s: number; y: Float64Array; tests: TestValue[]; residual: number; located: boolean; note?: string } | { pole: true; at: Float64Array } | undefined {
    const sys = this.sys!;
    const st = this.settings;
    const m = sys.size;
    const det = sys.testFunctions[i].type === 'determinant';
    const g = new Float64Array(m - 1);
    let ref = 0;
    const value = (t: TestValue): number => (det ? t.value * Math.exp(Math.max(-700, Math.min(700, (t.logAbs ?? 0) - ref))) : t.value);
    let fa: number;
    if (det) {
      // the current point's determinant with this step's borders (they changed since it was accepted)
      sys.evaluate(b.y, g);
      const ta = sys.tests(true)[i];
      ref = ta.logAbs ?? 0;
      fa = value(ta);
    } else {
      fa = b.tests[i].value;
    }
    let lo = { s: 0, f: fa, y: b.y.slice() };
    let hi = { s: ds, f: value(testsNew[i]), y: yNew.slice() };
    if (Math.sign(lo.f) === Math.sign(hi.f)) return undefined;
    // the answer is the latest trial point (the secant estimate inside the shrinking bracket);
    // |f| is no guide between points, determinants vary by orders of magnitude along a step
    let best = { ...hi, tests: testsNew, residual: NaN };
    let side = 0;
    const tol = st.locateTolerance * Math.max(1, ds);
    // a value that changes sign through a pole (the first Lyapunov coefficient at a zero-Hopf
    // point) grows in the shrinking bracket instead of falling: that is no zero
    const endSize = Math.max(Math.abs(lo.f), Math.abs(hi.f));
    for (let it = 0; it < 80; it++) {
      if (hi.s - lo.s <= tol) {
        if (!det && Math.abs(best.f) > endSize) return { pole: true, at: best.y };
        return { s: best.s, y: best.y, tests: best.tests, residual: best.residual, located: true };
      }
      let s = hi.s - (hi.f * (hi.s - lo.s)) / (hi.f - lo.f);
      if (!(s > lo.s && s < hi.s)) s = 0.5 * (lo.s + hi.s);
      const theta = (s - lo.s) / (hi.s - lo.s);
      const y = new Float64Array(m);
      for (let k = 0; k < m; k++) y[k] = lo.y[k] + theta * (hi.y[k] - lo.y[k]);
      const ref0 = new Float64Array(m);
      for (let k = 0; k < m; k++) ref0[k] = b.y[k] + s * b.tangent[k];
      const r = this.polished(y, b.tangent, ref0);
      if (!r.converged) {
        return { s: best.s, y: best.y, tests: best.tests, residual: best.residual, located: false, note: `the location stopped: ${r.message ?? r.failure} (the latest estimate is reported)` };
      }
      const tests = sys.tests(det);
      const f = value(tests[i]);
      best = { s, f, y: y.slice(), tests, residual: r.residual };
      if (f === 0) return { s, y, tests, residual: r.residual, located: true };
      if (Math.sign(f) === Math.sign(lo.f)) {
        lo = { s, f, y };
        if (side === -1) hi.f *= 0.5;
        side = -1;
      } else {
        hi = { s, f, y };
        if (side === 1) lo.f *= 0.5;
        side = 1;
      }
    }
    return { s: best.s, y: best.y, tests: best.tests, residual: best.residual, located: false, note: 'the location did not reach its tolerance in 80 trial points (the best estimate is reported)' };
  }

  /**
   * A located point converged well below the tolerance (a thousand times lower, to the rounding
   * floor): its coordinates are reported as the special point's location.
   */
  private polished(y: Float64Array, t: Float64Array, ref: Float64Array) {
    const nt = this.settings.newton;
    const strict = { ...this.newton(true), residualTolerance: Math.max(1e-3 * nt.residualTolerance, 1e-14), stepTolerance: Math.max(1e-3 * nt.stepTolerance, 1e-14) };
    const r = correctCurve(this.sys!, y, t, ref, strict, this.work!);
    // stopped at the rounding floor: y (the last evaluated iterate) passes the ordinary tests
    if (!r.converged && (r.failure === 'stalled' || r.failure === 'max-iterations') && residualPasses(this.sys!, nt.residualTolerance)) return { ...r, converged: true };
    return r;
  }

  /** Accept a corrected point: codimension-two points, mode changes, bounds and stop conditions. */
  private accept(b: CurveBranchState, yNew: Float64Array, tangent: Float64Array, ds: number, iterations: number, residual: number): CurveEvent[] {
    const sys = this.sys!;
    const st = this.settings;
    const m = sys.size;
    const ip = sys.parameterIndex;
    const jf = sys.freeIndex;
    const modeNew = sys.mode?.();
    const scan = this.locateAll(b, yNew, sys.tests(), ds);
    const located = scan.found;
    const testsNew = scan.tests;
    const yOld = b.y;
    // bounds of either parameter: where along the step the first one is crossed
    let bound: { s: number; index: number; value: number; reason: CurveStopReason } | undefined;
    const check = (index: number, [lo, hi]: [number, number], reason: CurveStopReason): void => {
      const a = yOld[index];
      const c = yNew[index];
      let v: number | undefined;
      if (c > hi && a <= hi) v = hi;
      else if (c < lo && a >= lo) v = lo;
      if (v === undefined) return;
      const theta = (v - a) / (c - a);
      if (!bound || theta < bound.s) bound = { s: theta, index, value: v, reason };
    };
    check(ip, st.bounds, 'parameter-bound');
    check(jf, st.freeBounds, 'free-bound');
    // another mode's eigenvalue reached zero: it takes over when it turns unstable ahead (the
    // curve then ends there and the new mode's curve goes on); otherwise the curves just cross
    for (const l of located) {
      if (l.special.kind !== 'mode-change' || !sys.switchMode) continue;
      const saved = sys.saveState();
      const sw = sys.switchMode(l.y, b.tangent);
      if (sw) l.special.newMode = sw.mode;
      if (sw && sw.growth > 0 && (!bound || l.s < bound.s * ds)) {
        return [...scan.logs, ...this.switchAt(b, l, sw.direction, located.filter((x) => x.s < l.s))];
      }
      sys.restoreState(saved);
      l.special.kind = 'mode-crossing';
      if (!sw) l.special.note = 'the crossing mode could not be determined';
    }
    // a zero of a test function that ends the curve (a Hopf curve at a Bogdanov–Takens point)
    const stopAt = located.find((l) => sys.testFunctions.some((f) => f.ends === true && f.kind === l.special.kind));
    if (stopAt && (!bound || stopAt.s < bound.s * ds)) {
      return [...scan.logs, ...this.endAt(b, stopAt, located.filter((l) => l.s < stopAt.s))];
    }
    if (located.length > 0) {
      // the null vectors at yNew for the new borders (the location evaluated elsewhere)
      sys.evaluate(yNew, this.work!.g);
    }
    if (bound) {
      const xb = new Float64Array(m);
      for (let i = 0; i < m; i++) xb[i] = yOld[i] + bound.s * (yNew[i] - yOld[i]);
      xb[bound.index] = bound.value;
      const r = correctCurve(sys, xb, this.unit(bound.index), xb.slice(), this.newton(true), this.work!);
      if (r.converged) {
        const tests = sys.tests();
        const mode = sys.mode?.();
        const sb = wnorm(sys, difference(xb, yOld));
        b.y = xb;
        b.tangent = tangent;
        b.arclength += sb;
        b.index++;
        b.residual = r.residual;
        b.tests = tests;
        if (mode) b.mode = mode;
        sys.adopt();
        const within = (y: Float64Array): boolean => y[ip] >= st.bounds[0] && y[ip] <= st.bounds[1] && y[jf] >= st.freeBounds[0] && y[jf] <= st.freeBounds[1];
        const name = bound.index === ip ? st.parameter : st.free;
        return [
          ...scan.logs,
          this.pointEvent(b, sb, r.iterations, mode),
          ...located.filter((l) => within(l.y)).map((l): CurveEvent => ({ type: 'special', point: l.special })),
          ...this.end(b, bound.reason, `reached ${name} = ${fmt(bound.value)}`),
        ];
      }
    }
    b.arclength += ds;
    b.y = yNew;
    b.tangent = tangent;
    b.index++;
    b.residual = residual;
    b.tests = testsNew;
    if (modeNew) b.mode = modeNew;
    sys.adopt();
    const grow = iterations <= 1 ? 2 : iterations === 2 ? 1.5 : iterations === 3 ? 1.2 : iterations <= 5 ? 1 : 0.6;
    b.step = Math.min(st.step.max, Math.max(st.step.min, ds * (located.length ? Math.min(grow, 1) : grow)));
    const pe = this.pointEvent(b, ds, iterations, modeNew);
    const events: CurveEvent[] = [pe, ...located.map((l): CurveEvent => ({ type: 'special', point: l.special })), ...scan.logs];
    const stop = this.stopCheck(b, pe.type === 'point' ? pe.point.monitors : {});
    if (stop) events.push(...this.end(b, stop.reason, stop.message));
    return events;
  }

  /** The curve ends at a located special point (`at`), after the ones located before it on the step. */
  private endAt(b: CurveBranchState, at: { s: number; special: CurveSpecialPoint; y: Float64Array; tests: TestValue[] }, before: { special: CurveSpecialPoint }[]): CurveEvent[] {
    const sys = this.sys!;
    const st = this.settings;
    b.y = at.y.slice();
    b.arclength += at.s;
    b.index++;
    b.residual = at.special.residual;
    b.tests = at.tests;
    const kind = at.special.kind as CurveOnlyStopReason;
    return [
      this.pointEvent(b, at.s, 0, b.mode),
      ...before.map((l): CurveEvent => ({ type: 'special', point: l.special })),
      { type: 'special', point: at.special },
      ...this.end(b, kind, `${st.parameter} = ${fmt(at.y[sys.parameterIndex])}, ${st.free} = ${fmt(at.y[sys.freeIndex])}`),
    ];
  }

  /**
   * A located mode change: the curve ends there; a new curve follows the mode that took over,
   * in the same direction of the parameter.
   */
  private switchAt(b: CurveBranchState, at: { s: number; special: CurveSpecialPoint; y: Float64Array; tests: TestValue[] }, direction: Float64Array, before: { special: CurveSpecialPoint }[]): CurveEvent[] {
    const sys = this.sys!;
    const st = this.settings;
    const m = sys.size;
    const ip = sys.parameterIndex;
    const events: CurveEvent[] = [];
    const oldMode = at.special.mode;
    const oldTangent = b.tangent;
    b.y = at.y.slice();
    b.arclength += at.s;
    b.index++;
    b.residual = at.special.residual;
    b.tests = at.tests;
    events.push(this.pointEvent(b, at.s, 0, oldMode), ...before.map((l): CurveEvent => ({ type: 'special', point: l.special })));
    const special = at.special;
    special.newBranches = [];
    const d = direction;
    const dp = d[ip];
    const flip = Math.abs(dp) > 1e-8 * wnorm(sys, d) ? Math.sign(dp) !== Math.sign(oldTangent[ip]) : wdot(sys, d, oldTangent) < 0;
    const nd = wnorm(sys, d);
    for (let i = 0; i < m; i++) d[i] = (flip ? -d[i] : d[i]) / nd;
    // a first point on the new curve, off the crossing (where the bordered matrix is singular)
    let h = Math.min(Math.max(b.step, 20 * st.step.min), st.step.max);
    let first: { y: Float64Array; tangent: Float64Array; tests: TestValue[]; residual: number } | undefined;
    for (let attempt = 0; attempt < 10 && !first; attempt++, h *= 0.5) {
      const yp = new Float64Array(m);
      for (let i = 0; i < m; i++) yp[i] = at.y[i] + h * d[i];
      const y = yp.slice();
      const r = correctCurve(sys, y, d, yp, { ...this.newton(true), maxUpdate: 2 * h }, this.work!);
      if (!r.converged) continue;
      try {
        const tangent = this.tangentAlong(d, true);
        first = { y, tangent, tests: sys.tests(true), residual: r.residual };
      } catch {
        continue;
      }
    }
    if (!first) {
      special.note = 'no point on the new mode’s curve converged; the curve ends';
      events.push({ type: 'special', point: special }, ...this.end(b, 'mode-change', 'the critical mode changed; the new mode could not be followed'));
      return events;
    }
    const newMode = sys.mode?.() ?? special.newMode;
    sys.adopt();
    const info: CurveInfo = {
      id: this.state.nextId++,
      depth: b.info.depth + 1,
      follow: b.info.follow,
      origin: { kind: 'mode-change', branch: b.info.id, value: at.y[ip] },
      direction: first.tangent[ip] >= 0 ? 'increase' : 'decrease',
      ...(newMode ? { mode: newMode } : {}),
    };
    special.newBranches.push(info.id);
    if (newMode) special.newMode = newMode;
    this.state.queue.push({ info, origin: at.y.slice(), first: first.y, tangent: first.tangent, step: h, tests: first.tests, residual: first.residual, system: sys.saveState() });
    const words = (k?: number[]): string => (k ? k.join(', ') : 'unknown');
    events.push({ type: 'special', point: special }, ...this.end(b, 'mode-change', `mode ${words(oldMode)} → ${words(newMode)} at ${st.parameter} = ${fmt(at.y[ip])}; curve ${info.id} follows the new mode`));
    return events;
  }

  private stopCheck(b: CurveBranchState, monitors: Record<string, number>): { reason: CurveStopReason; message: string } | undefined {
    const st = this.settings;
    const sys = this.sys!;
    for (const s of st.stopWhen) {
      const v = monitors[s.monitor];
      if (v === undefined) continue;
      if (s.above !== undefined && v > s.above) return { reason: 'monitor-bound', message: `${s.monitor} rose above ${s.above} (${fmt(v)})` };
      if (s.below !== undefined && v < s.below) return { reason: 'monitor-bound', message: `${s.monitor} fell below ${s.below} (${fmt(v)})` };
    }
    if (b.index + 1 >= st.maxPoints) return { reason: 'point-limit', message: `reached the point limit (${st.maxPoints})` };
    for (let i = 0; i < b.y.length; i++) if (!Number.isFinite(b.y[i])) return { reason: 'non-finite', message: 'non-finite values in the state' };
    if (b.index >= 10) {
      const d = wnorm(sys, difference(b.y, b.firstY));
      if (d < 0.5 * Math.max(b.step, st.step.min) && wdot(sys, b.tangent, b.firstTangent) > 0.9 && b.arclength > 4 * d) {
        return { reason: 'closed-loop', message: 'the curve closed on itself' };
      }
    }
    return undefined;
  }
}
