/**
 * The search for several steady states at fixed parameters by deflated Newton (./newton.ts),
 * from a list of initial guesses, in the manner of Farrell, Birkisson & Funke (2015):
 *
 *   - Newton's method on the deflated residual starts from a guess; a state it converges to is
 *     new unless it lies within `distinct` of a known state (modulo translation on periodic
 *     axes): then it is counted as found again (deflation makes this rare, not impossible);
 *   - every new state is deflated from all later solves, and the same guess is solved again;
 *   - when a guess fails (or finds a known state) the search moves on to the next guess; guesses
 *     are taken in turn, and one is solved again only when states were found since it last
 *     failed (it could only end elsewhere with more states deflated);
 *   - the search ends when `maxStates` states are known, after `maxSolves` solves, or when every
 *     guess has failed with every known state deflated (`exhausted`).
 *
 * Every state comes with its monitors, the solve and guess that found it, how many solves ended
 * at it, and with `stability.eigenvalues` its rightmost eigenvalues (../dynamics/stability.ts:
 * neutral translation modes of patterns are counted apart).
 *
 * No I/O: `events()` yields one event per solve (and log lines, and the end); the whole mutable
 * state is a plain object (`snapshot()`, and `options.state` to resume), taken between solves.
 * Each solve depends only on its guess and the states known when it starts, so a resumed search
 * repeats the uninterrupted one exactly.
 */
import { type SteadyStability, steadyStability } from '../dynamics/stability.js';
import type { Params, Problem } from '../problem/problem.js';
import { Deflation, type DeflationSettings, defaultDeflation } from './deflation.js';
import { DeflatedNewton, type DeflatedNewtonSettings, type SolveFailure, defaultDeflatedNewton } from './newton.js';

export interface SearchSettings {
  /** Stop once this many distinct states are known. */
  maxStates: number;
  /** Stop after this many solves. */
  maxSolves: number;
  deflation: DeflationSettings;
  newton: DeflatedNewtonSettings;
  /**
   * Two states are one when their root-mean-square distance (modulo translation where measured
   * so) is below this times max(1, the larger one's root-mean-square norm).
   */
  distinct: number;
  /** Rightmost eigenvalues of every state found (0 or absent: none). */
  stability?: { eigenvalues: number };
}

export const defaultSearchSettings: SearchSettings = {
  maxStates: 20,
  maxSolves: 100,
  deflation: defaultDeflation,
  newton: defaultDeflatedNewton,
  distinct: 1e-6,
};

/** An initial guess: a full state vector and how it was written (for messages). */
export interface Guess {
  label: string;
  u: Float64Array;
}

export interface FoundState {
  /** Number of the state, from 1, in the order found. */
  id: number;
  u: Float64Array;
  /** The solve that found it (from 1) and its guess (from 1). */
  solve: number;
  guess: number;
  /** Newton iterations of that solve and the scaled residual it ended with. */
  iterations: number;
  residual: number;
  monitors: Record<string, number>;
  /** Solves that ended at this state (the first included). */
  solves: number;
  /** Its root-mean-square norm and the distance to the nearest state found before it (Infinity for the first). */
  norm: number;
  separation: number;
  stability?: SteadyStability;
}

export type SolveOutcome = 'new' | 'repeat' | 'failed';

export interface SolveRecord {
  solve: number;
  guess: number;
  outcome: SolveOutcome;
  /** The state found (new or repeat). */
  state?: number;
  /** States deflated during the solve. */
  deflated: number;
  iterations: number;
  residual: number;
  failure?: SolveFailure;
  message?: string;
  /** For a repeat: its distance to the known state. */
  distance?: number;
}

export type SearchEndReason = 'max-states' | 'max-solves' | 'exhausted';

export const searchEndText: Record<SearchEndReason, string> = {
  'max-states': 'the number of states asked for was reached',
  'max-solves': 'the limit on solves was reached',
  exhausted: 'every guess failed with every state found deflated',
};

export type SearchEvent =
  | { type: 'solve-start'; solve: number; guess: number; deflated: number }
  | { type: 'solve'; record: SolveRecord; state?: FoundState }
  | { type: 'log'; level: 'info' | 'warning'; message: string }
  | { type: 'end'; reason: SearchEndReason; states: number; solves: number };

/** Everything a search needs to go on exactly where it was. */
export interface SearchState {
  version: 1;
  states: FoundState[];
  solves: SolveRecord[];
  /** Per guess: the number of known states when it last failed (−1: not yet failed). */
  failedWith: number[];
  /** The guess to solve next. */
  cursor: number;
  done: boolean;
  endReason?: SearchEndReason;
  counters: { iterations: number; residuals: number; factorisations: number };
}

const outcomes: readonly SolveOutcome[] = ['new', 'repeat', 'failed'];
const endReasons = Object.keys(searchEndText) as SearchEndReason[];

/**
 * Why a saved search state (a snapshot read back) cannot go on with a problem of `size` unknowns
 * and `guesses` guesses, in words ("has …"), or undefined when it fits: the states numbered from 1
 * in order, each of `size` finite values and found by the solve that says so, the solves numbered
 * from 1, the guess cursor and the per-guess record in range.
 */
export function checkSearchState(s: SearchState, size: number, guesses: number): string | undefined {
  const whole = (x: unknown, lo: number, hi: number): boolean => Number.isInteger(x) && (x as number) >= lo && (x as number) <= hi;
  if (s === null || typeof s !== 'object' || s.version !== 1) return 'is not a search state of this version';
  if (!Array.isArray(s.states) || !Array.isArray(s.solves) || !Array.isArray(s.failedWith)) return 'has no states, solves or guess record';
  if (s.failedWith.length !== guesses) return `has ${s.failedWith.length} guess${s.failedWith.length === 1 ? '' : 'es'}, this search ${guesses}`;
  if (!s.failedWith.every((f) => whole(f, -1, s.states.length))) return 'has a guess record out of range';
  if (!whole(s.cursor, 0, guesses - 1)) return `has the guess cursor ${String(s.cursor)} out of range`;
  if (typeof s.done !== 'boolean' || (s.done && !endReasons.includes(s.endReason!))) return 'has no valid end';
  const c = s.counters;
  if (!c || ![c.iterations, c.residuals, c.factorisations].every((x) => whole(x, 0, Number.MAX_SAFE_INTEGER))) return 'has no valid counters';
  for (const [i, r] of s.solves.entries()) {
    if (!r || r.solve !== i + 1) return `has solves not numbered 1, 2, … (solve ${i + 1})`;
    if (!whole(r.guess, 1, guesses) || !outcomes.includes(r.outcome)) return `has solve ${i + 1} with a bad guess or outcome`;
    if (r.outcome !== 'failed' && !whole(r.state, 1, s.states.length)) return `has solve ${i + 1} ending at a state it does not hold`;
  }
  for (const [i, st] of s.states.entries()) {
    if (!st || st.id !== i + 1) return `has states not numbered 1, 2, … (state ${i + 1})`;
    if (!(st.u instanceof Float64Array) || st.u.length !== size) return `has state ${i + 1} with ${st.u instanceof Float64Array ? st.u.length : 'no'} values, the problem has ${size} unknowns`;
    for (let k = 0; k < size; k++) if (!Number.isFinite(st.u[k])) return `has state ${i + 1} with a value that is not finite`;
    const by = s.solves[st.solve - 1];
    if (!by || by.outcome !== 'new' || by.state !== st.id || by.guess !== st.guess) return `has state ${i + 1} that its solve ${String(st.solve)} did not find`;
    if (!whole(st.solves, 1, s.solves.length)) return `has state ${i + 1} with a bad count of solves`;
  }
  return undefined;
}

export class DeflatedSearch {
  private readonly state: SearchState;
  private readonly deflation: Deflation;
  private readonly newton: DeflatedNewton;

  constructor(
    readonly problem: Problem,
    readonly params: Params,
    readonly settings: SearchSettings,
    readonly guesses: readonly Guess[],
    options: { state?: SearchState } = {},
  ) {
    if (guesses.length === 0) throw new Error('a search needs at least one initial guess');
    for (const g of guesses) if (g.u.length !== problem.size) throw new Error(`guess ${g.label} has ${g.u.length} values, the problem has ${problem.size} unknowns`);
    this.state = options.state
      ? structuredClone(options.state)
      : { version: 1, states: [], solves: [], failedWith: guesses.map(() => -1), cursor: 0, done: false, counters: { iterations: 0, residuals: 0, factorisations: 0 } };
    const bad = options.state ? checkSearchState(this.state, problem.size, guesses.length) : undefined;
    if (bad) throw new Error(`the saved search ${bad}`);
    this.deflation = new Deflation(problem, params, settings.deflation);
    for (const s of this.state.states) this.deflation.add(s.u);
    this.newton = new DeflatedNewton(problem, params, this.deflation, settings.newton);
  }

  /** A copy of the whole mutable state (take it between solves). */
  snapshot(): SearchState {
    return structuredClone(this.state);
  }

  get states(): readonly FoundState[] {
    return this.state.states;
  }

  get solves(): readonly SolveRecord[] {
    return this.state.solves;
  }

  get counters(): SearchState['counters'] {
    return { ...this.state.counters };
  }

  /** Why the search should stop now (undefined: go on), and the next guess otherwise. */
  private next(): { reason: SearchEndReason } | { guess: number } {
    const s = this.state;
    if (s.states.length >= this.settings.maxStates) return { reason: 'max-states' };
    if (s.solves.length >= this.settings.maxSolves) return { reason: 'max-solves' };
    const m = this.guesses.length;
    for (let k = 0; k < m; k++) {
      const g = (s.cursor + k) % m;
      if (s.failedWith[g] !== s.states.length) return { guess: g };
    }
    return { reason: 'exhausted' };
  }

  private monitors(u: Float64Array): Record<string, number> {
    const out: Record<string, number> = {};
    for (const m of this.problem.monitors) out[m.name] = m.evaluate(u, this.params);
    return out;
  }

  *events(): Generator<SearchEvent, void, void> {
    const s = this.state;
    const dist = this.deflation.distance;
    while (!s.done) {
      const step = this.next();
      if ('reason' in step) {
        s.done = true;
        s.endReason = step.reason;
        yield { type: 'end', reason: step.reason, states: s.states.length, solves: s.solves.length };
        return;
      }
      const g = step.guess;
      s.cursor = g;
      const number = s.solves.length + 1;
      yield { type: 'solve-start', solve: number, guess: g + 1, deflated: s.states.length };
      const u = Float64Array.from(this.guesses[g].u);
      const before = { ...this.newton.counters };
      const result = this.newton.solve(u);
      s.counters.iterations += this.newton.counters.iterations - before.iterations;
      s.counters.residuals += this.newton.counters.residuals - before.residuals;
      s.counters.factorisations += this.newton.counters.factorisations - before.factorisations;
      const base = { solve: number, guess: g + 1, deflated: s.states.length, iterations: result.iterations, residual: result.residual };
      if (!result.converged) {
        s.failedWith[g] = s.states.length;
        s.cursor = (g + 1) % this.guesses.length;
        const record: SolveRecord = { ...base, outcome: 'failed', ...(result.failure ? { failure: result.failure } : {}), ...(result.message ? { message: result.message } : {}) };
        s.solves.push(record);
        yield { type: 'solve', record };
        continue;
      }
      // converged: a new state, or one found before (within `distinct`, modulo translation)
      const norm = dist.norm(u);
      const distances = this.deflation.distances(u);
      let nearest = -1;
      for (let i = 0; i < distances.length; i++) if (nearest < 0 || distances[i] < distances[nearest]) nearest = i;
      const same = nearest >= 0 && distances[nearest] <= this.settings.distinct * Math.max(1, norm, s.states[nearest].norm);
      if (same) {
        const known = s.states[nearest];
        known.solves++;
        s.failedWith[g] = s.states.length;
        s.cursor = (g + 1) % this.guesses.length;
        const record: SolveRecord = { ...base, outcome: 'repeat', state: known.id, distance: distances[nearest] };
        s.solves.push(record);
        yield { type: 'log', level: 'warning', message: `solve ${number} (guess ${g + 1}) converged to state ${known.id} again (distance ${distances[nearest].toExponential(2)}): deflation did not keep it away; a larger deflation power or shift helps` };
        yield { type: 'solve', record };
        continue;
      }
      const found: FoundState = {
        id: s.states.length + 1,
        u: Float64Array.from(u),
        solve: number,
        guess: g + 1,
        iterations: result.iterations,
        residual: result.residual,
        monitors: this.monitors(u),
        solves: 1,
        norm,
        separation: nearest >= 0 ? distances[nearest] : Infinity,
      };
      const k = this.settings.stability?.eigenvalues ?? 0;
      if (k > 0) {
        try {
          found.stability = steadyStability(this.problem, this.params, u, k);
        } catch (e) {
          yield { type: 'log', level: 'warning', message: `state ${found.id}: its eigenvalues could not be computed (${(e as Error).message})` };
        }
      }
      s.states.push(found);
      this.deflation.add(found.u);
      const record: SolveRecord = { ...base, outcome: 'new', state: found.id };
      s.solves.push(record);
      yield { type: 'solve', record, state: found };
    }
  }

  dispose(): void {
    this.newton.dispose();
  }
}
