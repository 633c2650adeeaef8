/**
 * The continuation engine: pseudo-arclength (Keller 1977) or natural-parameter continuation of
 * F(u, λ) = 0, with fold and branch-point detection and location, and branch switching.
 *
 * No I/O. `events()` yields branch starts, accepted points, special points and branch ends. All
 * mutable state lives in one plain object (`EngineState`): `snapshot()` returns a copy whenever
 * `canSnapshot` is true (after the last event of a step), and passing that copy back as
 * `options.state` resumes exactly where it was taken.
 */
import type { Params, Problem } from '../problem/problem.js';
import { branchDirections, locateBranchPoint, locateDoubleCrossing } from './branch-point.js';
import { type CountAccount, accountFirstStep, accountStep, changeText } from './crossings.js';
import { locateFold } from './fold.js';
import { correct, correctWork, type NewtonResult, type NewtonWork } from './newton.js';
import { ContinuationSystem, allFinite } from './system.js';
import { StabilityAnalyser, crossingPair, locateCountChange, locateHopf } from './stability.js';
import { hopfPointCriticality } from './hopf/criticality.js';
import type { EigenWarmStart } from '../linalg/eigen.js';
import type { BackendDecision } from '../linalg/lu.js';
import { difference } from '../linalg/vector.js';
import type {
  BranchInfo,
  ContinuationPoint,
  BranchPointEvent,
  ContinuationSettings,
  EngineEvent,
  EndPoint,
  FoldPoint,
  HopfPoint,
  PointStability,
  StopReason,
} from './types.js';
import { stopReasonText } from './types.js';
import { rethrowInterrupt } from '../linalg/lu.js';

/** A branch waiting to be followed (queued at a branch point). */
export interface PendingBranch {
  info: BranchInfo;
  /** The branch point (u, λ). */
  origin: Float64Array;
  /** First converged point on the new branch and its unit tangent. */
  first: Float64Array;
  tangent: Float64Array;
  step: number;
  /** Eigen-solver warm start at the branch point. */
  eigenWarm: EigenWarmStart | null;
  /** Newton iterations of the first point. */
  iterations?: number;
  /** Real eigenvalues that vanish at the branch point (1 for a simple one). */
  multiplicity?: number;
}

export interface BranchState {
  info: BranchInfo;
  x: Float64Array;
  tangent: Float64Array;
  step: number;
  arclength: number;
  index: number;
  determinantSign: number;
  freshNext: boolean;
  firstX: Float64Array;
  firstTangent: Float64Array;
  /** Stability of the current point and the eigen solver's warm start there. */
  stability?: PointStability;
  eigenWarm: EigenWarmStart | null;
  /**
   * Border row of the factorisation made at the current point (for chord steps): with it the
   * same matrix can be factored again after a resume, so resumed runs repeat the same iterations.
   */
  chordRow?: Float64Array;
}

export interface EngineState {
  version: 1;
  started: boolean;
  nextBranchId: number;
  branches: BranchInfo[];
  queue: PendingBranch[];
  current: BranchState | null;
  knownBranchPoints: Float64Array[];
  ended: { id: number; reason: StopReason; points: number; message: string }[];
}

export interface EngineSummary {
  branches: { id: number; reason: StopReason; points: number; message: string }[];
  factorisations: number;
  refactorisations: number;
  solves: number;
  eigenSolves: number;
}

/** Linear-algebra counts and time per phase, since the engine was created. */
export interface EngineCounters {
  factorisations: number;
  refactorisations: number;
  solves: number;
  assemblies: number;
  eigenSolves: number;
  eigenFactorisations: number;
  seconds: { residual: number; assembly: number; factorisation: number; solves: number; eigen: number };
}

/** Stability at a candidate point, the account of its step's count change, and whether that rejects the step. */
interface CandidateStability {
  stability: PointStability;
  warm: EigenWarmStart;
  account?: CountAccount;
  rejection?: string;
}

export class ContinuationError extends Error {
  override name = 'ContinuationError';
}

export interface ContinuationOptions {
  /** Initial guess for the start point (else the model's initial guess). */
  start?: Float64Array;
  /** Resume from a snapshot. */
  state?: EngineState;
  /**
   * Checked before every factorisation (the continuation's and the eigen solver's): throws
   * WorkInterrupted to abandon the step in progress (a stop request during long numerical
   * work). The engine is then unusable: resume from a snapshot taken between steps.
   */
  interrupt?: () => void;
  /**
   * Other threads that trace queued branches side by side with this one (the run layer's
   * branch helpers, src/run/branch-helpers.ts). Results do not depend on them: see `BranchHelpers`.
   */
  helpers?: BranchHelpers;
}

/** A queued branch to trace elsewhere, with the branch points known when it was handed over. */
export interface BranchTask {
  pending: PendingBranch;
  known: Float64Array[];
}

/** One step of a branch traced elsewhere: its events and what the step added to the engine's state. */
export interface BranchStep {
  events: EngineEvent[];
  /** The branch's state after the step (null once it ended). */
  current: BranchState | null;
  /** Branches queued in the step (at branch points; ids stand in until the trace is taken over). */
  queued: PendingBranch[];
  /** Branch points first seen in the step. */
  known: Float64Array[];
  branches: BranchInfo[];
  ended: EngineState['ended'];
}

/** A whole branch traced elsewhere, step by step, and the linear algebra it took. */
export interface BranchTrace {
  steps: BranchStep[];
  counters: EngineCounters;
}

/**
 * Where queued branches can be traced side by side (worker threads). Each branch after a branch
 * point is traced from its pending state alone: the linear algebra starts afresh at a branch's
 * start, after every located branch point and at every sync step, so a branch traced in another
 * thread computes, bit for bit, what this engine would. The traces are taken over in queue order:
 * a branch point that an earlier branch found meanwhile is marked `already known` then (its new
 * branches dropped), branch ids are given then, so the events, files and ids are those of a run
 * on one core.
 */
export interface BranchHelpers {
  /** The run layer's sync-point period (see traceBranch). */
  readonly syncEvery: number;
  /**
   * Whether this thread may trace a later branch while a helper still holds the next one (with a
   * second engine: a second set of factorisations in this thread's memory).
   */
  readonly outOfTurn: boolean;
  /** How many more branches can be handed over now. */
  free(): number;
  /** Whether a submitted branch is still being traced (taking it now would wait). */
  busy(id: number): boolean;
  /** Start tracing a branch elsewhere (the task is copied at once). */
  submit(id: number, task: BranchTask): void;
  /**
   * The trace of a submitted branch, waiting for it if need be; `interrupt` is called while
   * waiting (it throws to abandon). Undefined: the helper failed, trace the branch here.
   */
  take(id: number, interrupt?: () => void): BranchTrace | undefined;
}

/**
 * Whether the step that brought a branch's point `index` ends at a sync point (run-case.ts):
 * after every branch's first point and then after every `every` points along the branch. The
 * rule counts along the branch, never across branches, so that a branch traced in a helper
 * thread starts its linear algebra afresh exactly where a run on one core does.
 */
export function syncIndex(index: number, every: number): boolean {
  return index === 0 || (index + 1) % every === 0;
}

/** Ids of branches queued in a helper's trace count from here until the trace is taken over. */
const standInIds = 1_000_000_000;

/** The note of a branch point already found (its branches are not followed again). */
const alreadyKnownNote = 'already known: its branches are followed from where it was first found';

function cloneState(s: EngineState): EngineState {
  return structuredClone(s);
}

export class Continuation {
  private readonly sys: ContinuationSystem;
  private readonly n: number;
  private state: EngineState;
  private quiescent = true;
  private readonly work: NewtonWork;
  private readonly lo: number;
  private readonly hi: number;
  private readonly stab: StabilityAnalyser | undefined;
  /** The system's factorisation stamp when the current point's bordered matrix was factored. */
  private chordStamp = -1;

  constructor(
    readonly problem: Problem,
    readonly params: Params,
    readonly settings: ContinuationSettings,
    private readonly options: ContinuationOptions = {},
  ) {
    const lu = { ...(settings.sparseLu ? { backend: settings.sparseLu } : {}), ...(options.interrupt ? { beforeFactor: options.interrupt } : {}) };
    this.sys = new ContinuationSystem(problem, params, settings.parameter, lu);
    this.n = problem.size;
    this.work = correctWork(this.n);
    [this.lo, this.hi] = settings.bounds;
    const k = settings.stability?.eigenvalues ?? 0;
    this.stab = k > 0 ? new StabilityAnalyser(this.sys, k) : undefined;
    this.state = options.state
      ? cloneState(options.state)
      : { version: 1, started: false, nextBranchId: 1, branches: [], queue: [], current: null, knownBranchPoints: [], ended: [] };
  }

  /** True between steps: a snapshot taken now resumes cleanly. */
  get canSnapshot(): boolean {
    return this.quiescent;
  }

  snapshot(): EngineState {
    return cloneState(this.state);
  }

  /** Which sparse LU factors the bordered continuation matrix and why (undefined before the first point). */
  linearSolver(): BackendDecision | undefined {
    return this.sys.luDecision;
  }

  /** Counts of the linear algebra done so far. */
  get counters(): EngineCounters {
    const s = this.sys;
    const e = this.stab?.totals;
    const own: EngineCounters = {
      factorisations: s.factorisations,
      refactorisations: s.refactorisations,
      solves: s.solves,
      assemblies: s.assemblies,
      eigenSolves: e?.solves ?? 0,
      eigenFactorisations: e?.factorisations ?? 0,
      seconds: { ...s.seconds, eigen: this.stab?.seconds ?? 0 },
    };
    // the lists below are empty until a helper's trace is taken over
    return (this.lentCounters ?? []).reduce((a, c) => subtractCounters(a, c, -1), own);
  }

  /**
   * Drop every factorisation and reseed the eigen solver's random start vectors: from here on
   * the engine computes exactly what a new engine resumed from a snapshot taken now computes.
   * The run layer calls this after writing a checkpoint, so that a resumed run repeats the
   * uninterrupted one bit for bit (kept pivot orders and random vectors otherwise differ in the
   * last digits, and eigenvalues and located Hopf points inherit such differences up to their
   * tolerances). Costs one factorisation with fresh pivots (instead of a refactorisation) per
   * call; the symbolic analyses are kept (they are deterministic).
   */
  restartLinearAlgebra(): void {
    this.sys.restart();
    this.chordStamp = -1;
    this.stab?.restart();
  }

  dispose(): void {
    this.sys.dispose();
    this.stab?.dispose();
    this.spareEngine?.dispose();
  }

  /** Rightmost eigenvalues at the branch's current point (no-op without stability analysis). */
  /**
   * Stability at b.x; `factoredHere`: the bordered matrix was just factored at b.x itself, so the
   * eigen solver takes its shift-0 operator from those factors (ContinuationSystem.jacobianSolver)
   * instead of factoring J.
   */
  private analyse(b: BranchState, factoredHere = false): void {
    if (!this.stab) return;
    const r = this.stab.analyse(b.x, b.eigenWarm, false, factoredHere ? this.sys.jacobianSolver() : undefined);
    b.stability = r.stability;
    b.eigenWarm = r.warm;
  }

  private monitors(x: Float64Array): Record<string, number> {
    const u = x.subarray(0, this.n);
    const p = this.sys.params(x[this.n]);
    const out: Record<string, number> = {};
    for (const m of this.problem.monitors) out[m.name] = m.evaluate(u, p);
    return out;
  }

  private pointEvent(b: BranchState, step: number, newton: number, residual: number): EngineEvent {
    const point: ContinuationPoint = {
      branch: b.info.id,
      index: b.index,
      arclength: b.arclength,
      parameter: b.x[this.n],
      u: b.x.slice(0, this.n),
      monitors: this.monitors(b.x),
      step,
      newtonIterations: newton,
      residual,
      tangentParameter: b.tangent[this.n],
      determinantSign: b.determinantSign,
    };
    if (b.stability) point.stability = b.stability;
    return { type: 'point', point };
  }

  /**
   * Tangent and determinant sign at x, from the bordered matrix with border row `prev` (the
   * previous tangent), factored here at x unless `factored`.
   */
  private tangentFrom(prev: Float64Array, x: Float64Array, factored: boolean, fresh: boolean): { tangent: Float64Array; sign: number } {
    const n = this.n;
    if (!factored) {
      this.sys.assemble(x.subarray(0, n), x[n]);
      this.sys.setTangentRow(prev);
      this.sys.factor(fresh);
    }
    const z = this.sys.lastColumnSolution().slice();
    const s = this.sys.norm(z);
    for (let i = 0; i <= n; i++) z[i] /= s;
    // z·prev = 1/s > 0: already oriented along the previous tangent
    return { tangent: z, sign: this.sys.determinant().sign };
  }

  private newtonSettings(fresh: boolean) {
    return { ...this.settings.newton, fresh };
  }

  /** Converge the start point at fixed λ and set up branch 1. */
  private start(): EngineEvent[] {
    const n = this.n;
    const lambda0 = this.params[this.settings.parameter];
    if (lambda0 < this.lo || lambda0 > this.hi) {
      throw new ContinuationError(`the start value ${this.settings.parameter} = ${lambda0} lies outside the bounds [${this.lo}, ${this.hi}]`);
    }
    const guess = this.options.start ?? this.problem.initialGuess(this.params);
    if (guess.length !== n) throw new ContinuationError(`the start state has ${guess.length} values, the problem has ${n} unknowns`);
    const x = new Float64Array(n + 1);
    x.set(guess);
    x[n] = lambda0;
    const eLambda = new Float64Array(n + 1);
    eLambda[n] = 1;
    const ref = x.slice();
    const res = correct(this.sys, x, eLambda, ref, { ...this.newtonSettings(true), maxIterations: Math.max(30, this.settings.newton.maxIterations) }, this.work);
    if (!res.converged) {
      throw new ContinuationError(`the start point did not converge at ${this.settings.parameter} = ${lambda0}: ${res.message ?? res.failure}`);
    }
    // tangent: [[J, F_λ], [e_λᵀ]] z = e_{n+1} gives z = (du/dλ, 1)
    this.sys.assemble(x.subarray(0, n), x[n]);
    this.sys.setTangentRow(eLambda);
    try {
      this.sys.factor(true);
    } catch (e) {
      rethrowInterrupt(e);
      throw new ContinuationError(
        `the Jacobian is singular at the start point (${this.settings.parameter} = ${lambda0}): start away from folds and branch points (${(e as Error).message})`,
      );
    }
    const { tangent } = this.tangentFrom(eLambda, x, true, true);
    const sign = this.settings.direction === 'increase' ? 1 : -1;
    if (tangent[n] * sign < 0) for (let i = 0; i <= n; i++) tangent[i] = -tangent[i];
    // Determinant sign with the tangent τ as border row, from the factors in hand (no second
    // factorisation): the bordered matrix with border row e_λ has determinant det J, and by the
    // matrix determinant lemma det [[J, F_λ], [w∘τ_u, τ_λ]] = det J · (τ_λ − (w∘τ_u)ᵀ J⁻¹F_λ),
    // where J⁻¹F_λ = −du/dλ and τ = ±(du/dλ, 1)/s (s > 0, weights w > 0), so the second factor is
    // τ_λ (1 + Σ w_i (du_i/dλ)²) and has the sign of τ_λ.
    const determinantSign = this.sys.determinant().sign * Math.sign(tangent[n]);
    const info: BranchInfo = { id: this.state.nextBranchId++, depth: 0, origin: { kind: 'start' } };
    const b: BranchState = {
      info,
      x,
      tangent,
      step: this.settings.step.initial,
      arclength: 0,
      index: 0,
      determinantSign,
      freshNext: true,
      firstX: x.slice(),
      firstTangent: tangent.slice(),
      eigenWarm: null,
    };
    this.analyse(b, true);
    this.state.branches.push(info);
    this.state.current = b;
    this.state.started = true;
    return [{ type: 'branch-start', branch: info }, this.pointEvent(b, 0, res.iterations, res.residual)];
  }

  /** Begin the next queued branch. */
  private startPending(p: PendingBranch): EngineEvent[] {
    const n = this.n;
    // every branch starts with fresh linear algebra: traced here or in a helper, the same digits
    this.restartLinearAlgebra();
    const b: BranchState = {
      info: p.info,
      x: p.origin.slice(),
      tangent: p.tangent.slice(),
      step: p.step,
      arclength: 0,
      index: 0,
      determinantSign: 0,
      freshNext: true,
      firstX: p.origin.slice(),
      firstTangent: p.tangent.slice(),
      eigenWarm: p.eigenWarm,
    };
    this.analyse(b);
    this.state.branches.push(p.info);
    const events: EngineEvent[] = [{ type: 'branch-start', branch: p.info }, this.pointEvent(b, 0, 0, this.sys.residual(p.origin.subarray(0, n), p.origin[n]))];
    // the first converged point off the branch point; the first step is accounted for like any
    // other (crossings.ts: the origin's critical eigenvalues may land on either side), and while
    // the count change is unexplained the first point is brought closer to the origin
    const origin = b.stability;
    const originWarm = b.eigenWarm;
    let first = p.first;
    let tangent = p.tangent;
    let iterations = p.iterations ?? 0;
    let unexplained: CountAccount | undefined;
    let ds: number;
    for (;;) {
      ds = this.sys.norm(difference(first, p.origin));
      b.x = first.slice();
      b.tangent = tangent.slice();
      b.arclength = ds;
      b.index = 1;
      this.sys.assemble(b.x.subarray(0, n), b.x[n]);
      this.sys.setTangentRow(tangent);
      this.sys.factor(true);
      b.determinantSign = this.sys.determinant().sign;
      b.eigenWarm = originWarm;
      this.analyse(b, true);
      const account = origin && b.stability ? accountFirstStep(origin, b.stability, p.multiplicity ?? 1) : undefined;
      unexplained = account && !account.explained ? account : undefined;
      if (!unexplained || ds / 2 < this.settings.step.min) break;
      const closer = this.pointTowards(p.origin, first, ds / 2);
      if (!closer) break;
      ({ x: first, tangent, iterations } = closer);
    }
    b.step = Math.min(p.step, ds);
    const pe = this.pointEvent(b, ds, iterations, this.sys.residual(b.x.subarray(0, n), b.x[n]));
    events.push(pe);
    if (unexplained && pe.type === 'point') {
      pe.point.unexplained = changeText(unexplained);
      const text = `${changeText(unexplained)} over the first step from the branch point at ${this.settings.parameter} = ${fmt(p.origin[n])} with nothing located to explain it, even with the first point at the minimum step`;
      events.push({ type: 'log', level: 'warning', message: `branch ${p.info.id}: ${text}` });
    }
    this.state.current = b;
    return events;
  }

  /**
   * A converged point at distance h from `origin` in the direction of `towards` (corrected in the
   * hyperplane orthogonal to that direction), with its tangent oriented away from the origin.
   */
  private pointTowards(origin: Float64Array, towards: Float64Array, h: number): { x: Float64Array; tangent: Float64Array; iterations: number } | undefined {
    const n = this.n;
    const d = difference(towards, origin);
    const len = this.sys.norm(d);
    for (let i = 0; i <= n; i++) d[i] /= len;
    const xp = new Float64Array(n + 1);
    for (let i = 0; i <= n; i++) xp[i] = origin[i] + h * d[i];
    const x = xp.slice();
    const r = correct(this.sys, x, d, xp, { ...this.newtonSettings(true), maxUpdate: 2 * h }, this.work);
    if (!r.converged) return undefined;
    return { x, tangent: this.tangentFrom(d, x, r.factored, true).tangent, iterations: r.iterations };
  }

  private end(b: BranchState, reason: StopReason, message?: string): EngineEvent[] {
    const n = this.n;
    const text = message ?? stopReasonText[reason];
    const endPoint: EndPoint = {
      kind: 'end',
      branch: b.info.id,
      value: b.x[n],
      arclength: b.arclength,
      u: b.x.slice(0, n),
      monitors: this.monitors(b.x),
      residual: this.sys.residual(b.x.subarray(0, n), b.x[n]),
      reason,
    };
    this.state.ended.push({ id: b.info.id, reason, points: b.index + 1, message: text });
    this.state.current = null;
    return [
      { type: 'special', point: endPoint },
      { type: 'branch-end', branch: b.info.id, reason, message: text },
    ];
  }

  *events(): Generator<EngineEvent, EngineSummary> {
    try {
      if (!this.state.started) yield* this.emit(this.start());
      for (;;) {
        const b = this.state.current;
        if (b) {
          yield* this.emit(this.stepOn(b));
          this.lend();
          continue;
        }
        const head = this.state.queue[0];
        if (!head) break;
        // the next branch is still being traced elsewhere: trace a later one meanwhile (kept for its turn)
        const helpers = this.options.helpers;
        if (helpers?.outOfTurn && !this.spareFailed && this.lent.has(head.info.id) && !this.ownTraces.has(head.info.id) && helpers.busy(head.info.id)) {
          this.lend();
          const later = this.state.queue.find((q) => !this.lent.has(q.info.id));
          if (later) {
            this.lent.add(later.info.id);
            try {
              this.ownTraces.set(later.info.id, this.spare().traceBranch({ pending: later, known: this.state.knownBranchPoints }, helpers.syncEvery));
            } catch (e) {
              rethrowInterrupt(e);
              // (out of memory, say) the branch is traced in its turn by this engine instead
              this.spareEngine?.dispose();
              this.spareEngine = undefined;
              this.lent.delete(later.info.id);
              this.spareFailed = true;
            }
            continue;
          }
        }
        const next = this.state.queue.shift()!;
        const own = this.ownTraces.get(next.info.id);
        this.ownTraces.delete(next.info.id);
        const trace = own ?? (this.lent.delete(next.info.id) ? this.options.helpers!.take(next.info.id, this.options.interrupt) : undefined);
        this.lent.delete(next.info.id);
        if (trace) {
          if (own) this.shared.outOfTurn++;
          else this.shared.helpers++;
          yield* this.takeOver(trace);
          continue;
        }
        this.lend();
        for (const events of this.pendingSteps(next)) yield* this.emit(events);
      }
    } finally {
      this.quiescent = true;
    }
    const c = this.counters;
    return { branches: this.state.ended.map((e) => ({ ...e })), factorisations: c.factorisations, refactorisations: c.refactorisations, solves: c.solves, eigenSolves: c.eigenSolves };
  }

  /** One step along the current branch. */
  private stepOn(b: BranchState): EngineEvent[] {
    return this.settings.method === 'natural' ? this.naturalStep(b) : this.arclengthStep(b);
  }

  /** The first steps of a queued branch: its start (two points), and its end when the point limit allows no more. */
  private *pendingSteps(p: PendingBranch): Generator<EngineEvent[]> {
    yield this.startPending(p);
    const b = this.state.current!;
    if (b.index + 1 >= this.settings.maxPoints) yield this.end(b, 'point-limit');
  }

  /** How many branches were traced by helpers, and out of turn by the spare engine (for the run's log). */
  readonly shared = { helpers: 0, outOfTurn: 0 };
  /** Branches handed to helpers (or traced by the spare engine) and not yet taken over. */
  private readonly lent = new Set<number>();
  /** Branches traced here by the spare engine while a helper held the next one. */
  private readonly ownTraces = new Map<number, BranchTrace>();
  private spareEngine: Continuation | undefined;
  /** The spare engine failed once (out of memory, say): no more branches out of turn. */
  private spareFailed = false;

  /** A second engine of this thread for branches traced out of turn (see events()). */
  private spare(): Continuation {
    this.spareEngine ??= new Continuation(this.problem, this.params, this.settings, this.options.interrupt ? { interrupt: this.options.interrupt } : {});
    return this.spareEngine;
  }
  /** Linear-algebra counts of the traces taken over from helpers. */
  private readonly lentCounters: EngineCounters[] = [];

  /** Hand queued branches to idle helpers (in queue order). */
  private lend(): void {
    const h = this.options.helpers;
    if (!h) return;
    for (const q of this.state.queue) {
      if (h.free() <= 0) return;
      if (this.lent.has(q.info.id)) continue;
      this.lent.add(q.info.id);
      h.submit(q.info.id, { pending: q, known: this.state.knownBranchPoints });
    }
  }

  /** Whether a branch point at xs was found before. */
  private isKnown(xs: Float64Array): boolean {
    return this.state.knownBranchPoints.some((k) => this.sys.norm(difference(k, xs)) <= 1e-4 * (1 + this.sys.norm(xs)));
  }

  /**
   * Trace one queued branch to its end, from its pending state and the branch points known (a
   * helper thread's work; see BranchHelpers). Uses this engine only for that branch: make a new
   * engine, or reuse one that traced only such branches. `syncEvery`: the run layer's sync-point
   * period — the linear algebra starts afresh after every step whose point index on its branch
   * is a multiple of it, as in the run layer's own loop (run-case.ts).
   */
  traceBranch(task: BranchTask, syncEvery: number): BranchTrace {
    const before = this.counters;
    const s = this.state;
    s.started = true;
    s.nextBranchId = standInIds;
    s.queue = [];
    s.current = null;
    s.branches = [];
    s.ended = [];
    s.knownBranchPoints = task.known.map((k) => k.slice());
    let seen = s.knownBranchPoints.length;
    const steps: BranchStep[] = [];
    const record = (events: EngineEvent[]): void => {
      steps.push({
        events,
        current: s.current ? structuredClone(s.current) : null,
        queued: s.queue.splice(0),
        known: s.knownBranchPoints.slice(seen),
        branches: s.branches.splice(0),
        ended: s.ended.splice(0),
      });
      seen = s.knownBranchPoints.length;
      // the run layer's sync points (run-case.ts): the linear algebra starts afresh there
      if (events.some((e) => e.type === 'point' && syncIndex(e.point.index, syncEvery))) this.restartLinearAlgebra();
    };
    for (const events of this.pendingSteps(task.pending)) record(events);
    for (let b = s.current; b; b = s.current) record(this.stepOn(b));
    return { steps, counters: subtractCounters(this.counters, before) };
  }

  /**
   * Take over a branch traced elsewhere, step by step, as if traced here: branch points found
   * meanwhile by earlier branches become `already known` (their new branches dropped), and the
   * new branches get their ids now.
   */
  private *takeOver(trace: BranchTrace): Generator<EngineEvent> {
    const s = this.state;
    this.lentCounters.push(trace.counters);
    for (const step of trace.steps) {
      const ids = new Map<number, number>();
      const events = step.events.map((e) => {
        if (e.type !== 'special' || e.point.kind !== 'branch-point' || !e.point.located || e.point.multiplicity !== 1 || e.point.note === alreadyKnownNote) return e;
        // the helper saw this branch point for the first time
        const p = e.point;
        const xs = new Float64Array(this.n + 1);
        xs.set(p.u);
        xs[this.n] = p.value;
        if (this.isKnown(xs)) {
          const known: BranchPointEvent = {
            kind: 'branch-point',
            branch: p.branch,
            value: p.value,
            arclength: p.arclength,
            u: p.u,
            monitors: p.monitors,
            residual: p.residual,
            located: p.located,
            multiplicity: 1,
            type: 'unknown',
            criticality: 'undetermined',
            newBranches: [],
            note: alreadyKnownNote,
          };
          return { type: 'special', point: known } as EngineEvent;
        }
        s.knownBranchPoints.push(xs);
        p.newBranches = p.newBranches.map((id) => {
          const real = s.nextBranchId++;
          ids.set(id, real);
          return real;
        });
        return e;
      });
      for (const q of step.queued) {
        const real = ids.get(q.info.id);
        if (real === undefined) continue; // its branch point was known already
        q.info.id = real;
        s.queue.push(q);
      }
      s.branches.push(...step.branches);
      s.ended.push(...step.ended);
      s.current = step.current;
      yield* this.emit(events);
    }
  }

  /** Yield a step's events; the state is complete (snapshot-safe) at the last one. */
  private *emit(events: EngineEvent[]): Generator<EngineEvent> {
    for (let i = 0; i < events.length; i++) {
      this.quiescent = i === events.length - 1;
      yield events[i];
    }
    this.quiescent = true;
  }

  /** One pseudo-arclength step (with retries); returns its events. */
  private arclengthStep(b: BranchState): EngineEvent[] {
    const n = this.n;
    const st = this.settings;
    const cosMax = Math.cos((st.maxTurnDegrees * Math.PI) / 180);
    let ds = b.step;
    // chord steps reuse the current point's factorisation; after a resume (or anything else
    // factored in between) factor that same matrix again so the iterations repeat exactly
    if (this.chordStamp !== this.sys.stamp && b.chordRow && !b.freshNext) {
      this.sys.assemble(b.x.subarray(0, n), b.x[n]);
      this.sys.setTangentRow(b.chordRow);
      this.sys.factor(true);
      this.chordStamp = this.sys.stamp;
    }
    for (;;) {
      const xp = new Float64Array(n + 1);
      for (let i = 0; i <= n; i++) xp[i] = b.x[i] + ds * b.tangent[i];
      const xNew = xp.slice();
      const chord = !b.freshNext && this.chordStamp === this.sys.stamp;
      const res: NewtonResult = correct(this.sys, xNew, b.tangent, xp, { ...this.newtonSettings(b.freshNext), chord, maxUpdate: Math.max(ds, 1e-3) * 2 }, this.work);
      let rejection: string | undefined = res.converged ? undefined : res.message;
      let tangent: Float64Array | undefined;
      let sign = 0;
      if (res.converged) {
        try {
          // factor at the converged point: exact tangent and determinant there, and the matrix
          // the next step's chord iterations start from
          ({ tangent, sign } = this.tangentFrom(b.tangent, xNew, false, b.freshNext));
          this.chordStamp = this.sys.stamp;
          const cos = this.sys.dot(tangent, b.tangent);
          if (cos < cosMax && ds > st.step.min) rejection = `the tangent turned by ${((Math.acos(Math.min(1, cos)) * 180) / Math.PI).toFixed(1)}°`;
        } catch (e) {
          rethrowInterrupt(e);
          rejection = (e as Error).message;
        }
      }
      // eigenvalues at the candidate: a change of the unstable count that no fold, branch point
      // or Hopf point of this step explains is split by smaller steps (crossings.ts)
      let stability: CandidateStability | undefined;
      if (rejection === undefined && tangent && this.stab && b.stability) {
        stability = this.candidateStability(b, xNew, tangent, sign, ds, true);
        rejection = stability.rejection;
      }
      if (rejection !== undefined || !tangent) {
        if (res.failure === 'non-finite' && ds <= st.step.min) return this.end(b, 'non-finite', `non-finite values near ${st.parameter} = ${b.x[n]}: ${res.message}`);
        ds *= 0.5;
        b.freshNext = true;
        if (ds < st.step.min) {
          return this.end(b, 'minimum-step', `no convergence even at the minimum step ${st.step.min} near ${st.parameter} = ${fmt(b.x[n])} (${rejection})`);
        }
        continue;
      }
      return this.accept(b, xNew, tangent, sign, ds, res, stability);
    }
  }

  /**
   * Stability at a candidate point and the account of the step's count change (crossings.ts):
   * an unexplained change rejects the step while it is longer than the minimum step — a change
   * by two real eigenvalues only down to the floor max(min, 10⁻⁴·max), below which it counts as
   * a double crossing (a branch point of multiplicity two, located on the eigenvalues).
   */
  /** `factoredHere`: the bordered matrix was factored at xNew itself (not at a Newton iterate before it). */
  private candidateStability(b: BranchState, xNew: Float64Array, tangent: Float64Array, sign: number, ds: number, factoredHere = false): CandidateStability {
    const n = this.n;
    const st = this.settings;
    // when the bordered matrix was factored at xNew itself (the arclength step's tangentFrom), its
    // factors solve with J there, which spares the eigenvalue solver its own factorisation at shift 0
    const r = this.stab!.analyse(xNew, b.eigenWarm, false, factoredHere ? this.sys.jacobianSolver() : undefined);
    const account = accountStep(b.stability!, r.stability, {
      fold: b.tangent[n] * tangent[n] < 0,
      branchPoint: b.determinantSign !== 0 && sign !== 0 && sign !== b.determinantSign,
    });
    const out: CandidateStability = { ...r, account };
    if (!account || account.explained) return out;
    // rejected only while a halved step stays at or above the minimum step: the step that
    // reaches the floor is accepted with its warning (with the floor at the minimum step the
    // halving would otherwise jump below it and end the branch — as at the symmetric double
    // Hopf pair of the gel-spots trace, two equal pairs that no split can part)
    const floor = account.double ? Math.max(st.step.min, 1e-4 * st.step.max) : st.step.min;
    if (ds > floor && ds / 2 >= st.step.min) out.rejection = `${changeText(account)} with no fold, branch point or Hopf point to explain it`;
    return out;
  }

  /** Accept a corrected point: events for special points, bounds and stop conditions. */
  private accept(
    b: BranchState,
    xNew: Float64Array,
    tangent: Float64Array,
    sign: number,
    ds: number,
    res: NewtonResult,
    stability?: CandidateStability,
  ): EngineEvent[] {
    const n = this.n;
    const st = this.settings;
    const events: EngineEvent[] = [];
    const xOld = b.x;
    const tOld = b.tangent;
    const specials: EngineEvent[] = [];
    let located = false;
    const seen = { fold: tOld[n] * tangent[n] < 0, branchPoint: b.determinantSign !== 0 && sign !== 0 && sign !== b.determinantSign };
    // fold: the tangent's λ component changes sign
    let fold: EngineEvent | undefined;
    if (st.method === 'arclength' && st.locate.folds && tOld[n] * tangent[n] < 0) {
      fold = this.foldEvent(b, xOld, tOld, xNew, tangent);
      located = true;
    }
    // branch point: the bordered determinant changes sign
    if (st.method === 'arclength' && st.locate.branchPoints && b.determinantSign !== 0 && sign !== 0 && sign !== b.determinantSign) {
      const found = this.branchPointEvents(b, xOld, tOld, b.determinantSign, ds, sign, xNew);
      // A branch that turns in λ exactly where it crosses another is one of a pitchfork's pair of
      // symmetric branches passing through its branch point: the turn is the branch point, not a fold.
      // The fold system is singular there (Newton on it converges slowly or not at all): a fold
      // located at the branch point, or not located, in the step of a located pitchfork is that turn.
      const bp = found[0];
      if (fold && fold.type === 'special' && bp.type === 'special' && bp.point.kind === 'branch-point' && bp.point.located && bp.point.type === 'pitchfork') {
        const far = this.sys.norm(difference(stateOf(fold.point), stateOf(bp.point)));
        if ((fold.point.kind === 'fold' && !fold.point.located) || far <= 1e-3 * ds) fold = undefined;
      }
      specials.push(...found);
      located = true;
      // whether its branches were computed (a helper may compute them for a point an earlier
      // branch found meanwhile), the rest of the branch starts from the same fresh linear algebra
      this.restartLinearAlgebra();
    }
    if (fold) specials.unshift(fold);
    // parameter bounds: land exactly on the bound and stop
    const lam = xNew[n];
    let bound: number | undefined;
    if (lam > this.hi && xOld[n] <= this.hi) bound = this.hi;
    else if (lam < this.lo && xOld[n] >= this.lo) bound = this.lo;
    if (bound !== undefined) {
      const theta = (bound - xOld[n]) / (lam - xOld[n]);
      const xb = new Float64Array(n + 1);
      for (let i = 0; i <= n; i++) xb[i] = xOld[i] + theta * (xNew[i] - xOld[i]);
      xb[n] = bound;
      const eLambda = new Float64Array(n + 1);
      eLambda[n] = 1;
      const r = correct(this.sys, xb, eLambda, xb.slice(), this.newtonSettings(true), this.work);
      if (r.converged) {
        const before = b.stability;
        b.x = xb;
        b.tangent = tangent;
        b.arclength += this.sys.norm(difference(xb, xOld));
        b.index++;
        this.analyse(b);
        const kept = specials.filter((e) => e.type !== 'special' || inRange(e.point.value, this.lo, this.hi));
        const kinds = kept.map((e) => (e.type === 'special' ? e.point.kind : ''));
        const pe = this.pointEvent(b, ds * theta, r.iterations, r.residual);
        events.push(pe, ...kept);
        events.push(...this.stabilityEvents(b, before, xOld, tOld, ds * theta, { fold: kinds.includes('fold'), branchPoint: kinds.includes('branch-point') }, pe));
        events.push(...this.end(b, 'parameter-bound', `reached ${st.parameter} = ${fmt(bound)}`));
        return events;
      }
    }
    b.arclength += st.method === 'arclength' ? ds : this.sys.norm(difference(xNew, xOld));
    b.x = xNew;
    b.tangent = tangent;
    b.chordRow = st.method === 'arclength' ? tOld : undefined;
    b.index++;
    b.determinantSign = sign;
    b.freshNext = located || Math.abs(tangent[n]) < 0.05;
    const it = res.iterations;
    const grow = it <= 1 ? 2 : it === 2 ? 1.5 : it === 3 ? 1.2 : it <= 5 ? 1 : 0.6;
    b.step = Math.min(st.step.max, Math.max(st.step.min, ds * grow));
    const before = b.stability;
    if (stability) {
      b.stability = stability.stability;
      b.eigenWarm = stability.warm;
    } else {
      this.analyse(b);
    }
    const pe = this.pointEvent(b, ds, it, res.residual);
    events.push(pe, ...specials, ...this.stabilityEvents(b, before, xOld, tOld, ds, seen, pe));
    const stop = this.stopCheck(b, pe.type === 'point' ? pe.point.monitors : {});
    if (stop) events.push(...this.end(b, stop.reason, stop.message));
    return events;
  }

  private stopCheck(b: BranchState, monitors: Record<string, number>): { reason: StopReason; message: string } | undefined {
    const st = this.settings;
    for (const s of st.stopWhen) {
      const v = monitors[s.monitor];
      if (v === undefined) continue;
      if (s.above !== undefined && v > s.above) return { reason: 'monitor-bound', message: `${s.monitor} rose above ${s.above} (${fmt(v)})` };
      if (s.below !== undefined && v < s.below) return { reason: 'monitor-bound', message: `${s.monitor} fell below ${s.below} (${fmt(v)})` };
    }
    if (b.index + 1 >= st.maxPoints) return { reason: 'point-limit', message: `reached the point limit (${st.maxPoints})` };
    if (!allFinite(b.x)) return { reason: 'non-finite', message: 'non-finite values in the state' };
    // closed loop: back near the first point, heading the same way, after a real excursion
    if (b.index >= 10) {
      const d = this.sys.norm(difference(b.x, b.firstX));
      if (d < 0.5 * Math.max(b.step, st.step.min) && this.sys.dot(b.tangent, b.firstTangent) > 0.9 && b.arclength > 4 * d) {
        return { reason: 'closed-loop', message: 'the branch closed on itself' };
      }
    }
    return undefined;
  }

  private foldEvent(b: BranchState, xa: Float64Array, ta: Float64Array, xb: Float64Array, tb: Float64Array): EngineEvent {
    const n = this.n;
    const st = this.settings;
    const loc = locateFold(this.sys, xa, ta, xb, tb, st.foldTolerance, st.newton.residualTolerance);
    const fold: FoldPoint = {
      kind: 'fold',
      branch: b.info.id,
      value: loc.x[n],
      arclength: b.arclength + (loc.converged ? this.sys.norm(difference(loc.x, xa)) : 0),
      u: loc.x.slice(0, n),
      monitors: this.monitors(loc.x),
      residual: loc.residual,
      located: loc.converged,
      turn: ta[n] > 0 ? 'maximum' : 'minimum',
    };
    if (!loc.converged) {
      // fall back to the better bracketing point
      const use = Math.abs(ta[n]) < Math.abs(tb[n]) ? xa : xb;
      fold.value = use[n];
      fold.u = use.slice(0, n);
      fold.monitors = this.monitors(use);
      fold.residual = this.sys.residual(use.subarray(0, n), use[n]);
    }
    return { type: 'special', point: fold };
  }

  /** xb: the step's new point, past the branch point on the old branch. */
  private branchPointEvents(b: BranchState, xa: Float64Array, ta: Float64Array, signA: number, ds: number, signB: number, xb: Float64Array): EngineEvent[] {
    const n = this.n;
    const st = this.settings;
    const loc = locateBranchPoint(this.sys, xa, ta, signA, ds, signB, st.newton, st.branchPointTolerance);
    const xs = loc.x;
    const event: BranchPointEvent = {
      kind: 'branch-point',
      branch: b.info.id,
      value: xs[n],
      arclength: b.arclength + loc.lo.s,
      u: xs.slice(0, n),
      monitors: this.monitors(xs),
      residual: loc.residual,
      located: loc.converged,
      multiplicity: 1,
      type: 'unknown',
      criticality: 'undetermined',
      newBranches: [],
    };
    const events: EngineEvent[] = [{ type: 'special', point: event }];
    if (!loc.converged) {
      event.note = loc.message;
      return events;
    }
    // already seen (a branch that returns to a known branch point)?
    if (this.isKnown(xs)) {
      event.note = alreadyKnownNote;
      return events;
    }
    this.state.knownBranchPoints.push(xs.slice());
    const dirs = branchDirections(this.sys, xs, ta);
    if ('error' in dirs) {
      event.note = dirs.error;
      return events;
    }
    // converge a first point each way along the new direction
    const h0 = Math.min(Math.max(b.step, 20 * st.step.min), st.step.max, 0.5);
    const firsts: { x: Float64Array; t: Float64Array; h: number; iterations: number }[] = [];
    for (const sgn of [1, -1]) {
      const d = dirs.direction.map((v) => v * sgn);
      let h = h0;
      let got: { x: Float64Array; t: Float64Array; h: number; iterations: number } | undefined;
      for (let attempt = 0; attempt < 8 && !got; attempt++, h *= 0.5) {
        const xp = new Float64Array(n + 1);
        for (let i = 0; i <= n; i++) xp[i] = xs[i] + h * d[i];
        const x = xp.slice();
        const r = correct(this.sys, x, d, xp, { ...this.newtonSettings(true), maxUpdate: 2 * h }, this.work);
        if (!r.converged) continue;
        const v = difference(x, xs);
        const cosOld = Math.abs(this.sys.dot(v, dirs.tau1)) / this.sys.norm(v);
        if (cosOld > 0.95) continue; // fell back onto the old branch
        const { tangent } = this.tangentFrom(d, x, r.factored, true);
        got = { x, t: tangent, h, iterations: r.iterations };
      }
      if (got) firsts.push(got);
    }
    if (firsts.length === 0) {
      event.note = 'no point on a new branch converged (the crossing branch could not be followed)';
      return events;
    }
    const noise = st.newton.stepTolerance * (1 + this.sys.norm(xs));
    // the old branch's own shape about the point, from the step's two ends: symmetric when it is one
    // of a pitchfork's pair of branches (it turns in λ here), the new branch then being the one they
    // break from — the point's type does not depend on the branch it was reached along
    const oldShape = branchShape(xb[n] - xs[n], this.sys.norm(difference(xb, xs)), xa[n] - xs[n], this.sys.norm(difference(xa, xs)), noise);
    if (oldShape === 'pitchfork' && Math.abs(dirs.tau1[n]) < 0.05 * Math.abs(dirs.direction[n])) {
      event.type = 'pitchfork';
      event.newBranchDirection = 'both';
      const side = Math.sign(xa[n] - xs[n] + xb[n] - xs[n]);
      event.criticality = dirs.newUnstableSide === 0 ? 'undetermined' : side === dirs.newUnstableSide ? 'supercritical' : 'subcritical';
    } else if (firsts.length === 2) {
      const shape = branchShape(firsts[0].x[n] - xs[n], this.sys.norm(difference(firsts[0].x, xs)), firsts[1].x[n] - xs[n], this.sys.norm(difference(firsts[1].x, xs)), noise);
      if (shape === 'pitchfork') {
        event.type = 'pitchfork';
        const side = Math.sign(firsts[0].x[n] - xs[n] + firsts[1].x[n] - xs[n]);
        event.newBranchDirection = side > 0 ? 'increase' : 'decrease';
        event.criticality = dirs.unstableSide === 0 ? 'undetermined' : side === dirs.unstableSide ? 'supercritical' : 'subcritical';
      } else if (shape === 'transcritical') {
        event.type = 'transcritical';
        event.newBranchDirection = 'both';
      }
    }
    if (b.info.depth + 1 > st.branchSwitching.depth) {
      event.note = `not followed: branch-switching depth ${st.branchSwitching.depth} reached`;
      return events;
    }
    for (const f of firsts) {
      const info: BranchInfo = { id: this.state.nextBranchId++, depth: b.info.depth + 1, origin: { kind: 'branch-point', branch: b.info.id, value: xs[n] } };
      event.newBranches.push(info.id);
      this.state.queue.push({ info, origin: xs.slice(), first: f.x, tangent: f.t, step: f.h, eigenWarm: b.eigenWarm, iterations: f.iterations, multiplicity: 1 });
    }
    return events;
  }

  /**
   * What the eigenvalues say about the step from (xOld, tOld) to the branch's new point `pe`
   * (crossings.ts): Hopf points (a complex pair crossed the imaginary axis), branch points of
   * multiplicity two (two real eigenvalues crossed zero together, which the determinant cannot
   * see; the step was split down to its floor first), and a warning — also written on the point
   * — for a change of the unstable count that nothing seen in the step explains.
   */
  private stabilityEvents(
    b: BranchState,
    before: PointStability | undefined,
    xOld: Float64Array,
    tOld: Float64Array,
    ds: number,
    seen: { fold: boolean; branchPoint: boolean },
    pe: EngineEvent,
  ): EngineEvent[] {
    const after = b.stability;
    if (!this.stab || !before || !after) return [];
    const n = this.n;
    const st = this.settings;
    const events: EngineEvent[] = [];
    const where = `between ${st.parameter} = ${fmt(xOld[n])} and ${fmt(b.x[n])}`;
    const account = accountStep(before, after, seen);
    if (account?.double) {
      const loc = locateDoubleCrossing(this.sys, this.stab, xOld, tOld, ds, b.eigenWarm, st.newton, doubleCrossingTolerance(st.branchPointTolerance));
      const x = loc.x;
      const bp: BranchPointEvent = {
        kind: 'branch-point',
        branch: b.info.id,
        value: x[n],
        arclength: b.arclength - ds + loc.s,
        u: x.slice(0, n),
        monitors: this.monitors(x),
        residual: this.sys.residual(x.subarray(0, n), x[n]),
        located: loc.converged,
        multiplicity: 2,
        type: 'unknown',
        criticality: 'undetermined',
        newBranches: [],
        note: `two real eigenvalues crossed zero together (a symmetric or periodic domain?): a branch point of multiplicity two, located on the critical eigenvalue; the determinant cannot see it, and branches are not followed from it`,
      };
      events.push({ type: 'special', point: bp });
      if (!loc.converged) events.push({ type: 'log', level: 'warning', message: `branch ${b.info.id}: branch point of multiplicity two ${where} not located to tolerance (${loc.message})` });
      b.freshNext = true;
    } else if (account && !account.explained) {
      const text = `${changeText(account)} ${where} with no fold, branch point or Hopf point located to explain it, even at the minimum step (a missed event, or a poor eigenvalue solve)`;
      events.push({ type: 'log', level: 'warning', message: `branch ${b.info.id}: ${text}` });
      if (pe.type === 'point') pe.point.unexplained = changeText(account);
    } else if (account && account.real === 0 && seen.fold && !seen.branchPoint) {
      events.push({ type: 'log', level: 'warning', message: `branch ${b.info.id}: a fold was found ${where} but no real eigenvalue crossed zero there (check the eigenvalue count)` });
    }
    const pair = crossingPair(before, after);
    const pairsCrossed = account ? account.pairs !== 0 : before.unstableComplex !== after.unstableComplex;
    if (pair && pairsCrossed) {
      const loc = locateHopf(this.sys, this.stab, xOld, tOld, ds, pair, b.eigenWarm, st.newton, st.hopfTolerance);
      const hopf: HopfPoint = {
        kind: 'hopf',
        branch: b.info.id,
        value: loc.x[n],
        arclength: b.arclength - ds + loc.s,
        u: loc.x.slice(0, n),
        monitors: this.monitors(loc.x),
        residual: this.sys.residual(loc.x.subarray(0, n), loc.x[n]),
        located: loc.converged,
        frequency: loc.frequency,
        period: (2 * Math.PI) / loc.frequency,
        crossing: pair.b.re > pair.a.re ? 'destabilising' : 'stabilising',
        ...hopfPointCriticality(this.problem, loc.x.subarray(0, n), this.sys.params(loc.x[n]), loc.frequency),
      };
      events.push({ type: 'special', point: hopf });
      if (!loc.converged) events.push({ type: 'log', level: 'warning', message: `branch ${b.info.id}: Hopf point ${where} not located to tolerance (${loc.message})` });
      b.freshNext = true;
    }
    return events;
  }

  /** One natural-parameter step: λ moves by the step, Newton at fixed λ from the tangent predictor. */
  private naturalStep(b: BranchState): EngineEvent[] {
    const n = this.n;
    const st = this.settings;
    const dir = st.direction === 'increase' ? 1 : -1;
    let dl = b.step;
    const eLambda = new Float64Array(n + 1);
    eLambda[n] = 1;
    for (;;) {
      const target = b.x[n] + dir * dl;
      const x = new Float64Array(n + 1);
      // predictor along du/dλ (the tangent scaled to a unit λ component)
      const slope = b.tangent[n] !== 0 ? 1 / b.tangent[n] : 0;
      for (let i = 0; i < n; i++) x[i] = b.x[i] + dir * dl * b.tangent[i] * slope;
      x[n] = target;
      const res = correct(this.sys, x, eLambda, x.slice(), { ...this.newtonSettings(b.freshNext), maxUpdate: Math.max(10 * dl, 1) }, this.work);
      if (!res.converged) {
        dl *= 0.5;
        b.freshNext = true;
        if (dl < st.step.min) {
          const nearFold = Math.abs(b.tangent[n]) < 0.2;
          return this.end(
            b,
            nearFold ? 'fold-not-passed' : 'minimum-step',
            nearFold
              ? `Newton found no solution beyond ${st.parameter} = ${fmt(b.x[n])}: the branch turns back at a fold there; natural-parameter continuation cannot pass it (use method: arclength)`
              : `no convergence even at the minimum step near ${st.parameter} = ${fmt(b.x[n])} (${res.message})`,
          );
        }
        continue;
      }
      const { tangent, sign } = this.tangentFrom(eLambda, x, res.factored, b.freshNext);
      if (tangent[n] * dir < 0) for (let i = 0; i <= n; i++) tangent[i] = -tangent[i];
      // an unexplained change of the unstable count splits the step here too
      const stability = this.stab && b.stability ? this.candidateStability(b, x, tangent, sign, dl) : undefined;
      if (stability?.rejection !== undefined) {
        dl *= 0.5;
        b.freshNext = true;
        continue;
      }
      return this.accept(b, x, tangent, sign, dl, res, stability);
    }
  }
}

/**
 * Pitchfork or transcritical, from the new branch's first points on either side of the branch
 * point: offsets a (at distance h₊) and c (at distance h₋, the other way) of the parameter.
 * Fitting λ − λ* = α s + β s² through them (s = h₊ and −h₋) gives the branch's slope α and
 * curvature β; the decision compares the two parts at the probing distance h̄ = (h₊ + h₋)/2, so
 * it depends neither on the units of λ nor on the grid: symmetric (|α| ≤ 0.05·|β|·h̄: the two
 * points sit at the same parameter, a pitchfork) or crossing (a transcritical point; a branch
 * that crosses λ* and soon turns back counts as one too). Offsets within `noise` (what the
 * corrector's tolerance leaves uncertain) of zero on both sides decide nothing.
 */
export function branchShape(a: number, hPlus: number, c: number, hMinus: number, noise: number): 'pitchfork' | 'transcritical' | undefined {
  if (Math.abs(a) <= noise && Math.abs(c) <= noise) return undefined;
  const denominator = hPlus * hMinus * (hPlus + hMinus);
  const alpha = (a * hMinus * hMinus - c * hPlus * hPlus) / denominator;
  const beta = (a * hMinus + c * hPlus) / denominator;
  return Math.abs(alpha) <= 0.05 * Math.abs(beta) * 0.5 * (hPlus + hMinus) ? 'pitchfork' : 'transcritical';
}

/** Branch points of multiplicity two are located a hundred times tighter than simple ones' bracket (both then land near 1e-10). */
function doubleCrossingTolerance(branchPointTolerance: number): number {
  return 1e-2 * branchPointTolerance;
}

/** a − sign·b, field by field (sign −1: the sum). */
function subtractCounters(a: EngineCounters, b: EngineCounters, sign = 1): EngineCounters {
  const out = { ...a, seconds: { ...a.seconds } };
  for (const k of ['factorisations', 'refactorisations', 'solves', 'assemblies', 'eigenSolves', 'eigenFactorisations'] as const) out[k] = a[k] - sign * b[k];
  for (const k of Object.keys(out.seconds) as (keyof EngineCounters['seconds'])[]) out.seconds[k] = a.seconds[k] - sign * (b.seconds[k] ?? 0);
  return out;
}

/** (u, λ) of a special point, as the engine's state vectors hold them. */
function stateOf(p: { u: Float64Array; value: number }): Float64Array {
  const x = new Float64Array(p.u.length + 1);
  x.set(p.u);
  x[p.u.length] = p.value;
  return x;
}

function inRange(v: number, lo: number, hi: number): boolean {
  return v >= lo && v <= hi;
}

function fmt(v: number): string {
  return Number(v.toPrecision(10)).toString();
}
