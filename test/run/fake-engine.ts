/**
 * A scripted stand-in for the continuation engine: it yields a fixed sequence of events of the
 * real types (branch starts, points, a fold, a branch point that queues a second branch, ends),
 * with states built from the problem so that monitors and node arrays are real. Its whole state
 * is the index of the next event, so snapshot/resume can be tested on the run layer alone.
 */
import type { ContinuationPoint, ContinuationSettings, EngineEvent, SpecialPoint, StopReason } from '../../src/continuation/types.js';
import type { Params, Problem } from '../../src/problem/problem.js';
import type { EngineFactory, EngineLike } from '../../src/run/run-case.js';

export interface Script {
  /** Points on branch 1 and branch 2. */
  points1: number;
  points2: number;
  /** How branch 1 ends. */
  reason1: StopReason;
  /** Throw instead of yielding the event with this number. */
  throwAt?: number;
  /** Attach stability data to points. */
  stability?: boolean;
  /** Emit a Hopf point on branch 1. */
  hopf?: boolean;
}

export const defaultScript: Script = { points1: 10, points2: 4, reason1: 'parameter-bound' };

function state(problem: Problem, amplitude: number): Float64Array {
  const u = new Float64Array(problem.size);
  for (let k = 0; k < problem.gridUnknowns; k++) u[k] = amplitude * Math.sin((Math.PI * (k + 1)) / (problem.gridUnknowns + 1));
  for (let k = problem.gridUnknowns; k < problem.size; k++) u[k] = 0.25 * amplitude;
  return u;
}

function monitors(problem: Problem, u: Float64Array, p: Params): Record<string, number> {
  const out: Record<string, number> = {};
  for (const m of problem.monitors) out[m.name] = m.evaluate(u, p);
  return out;
}

export function scriptedEvents(problem: Problem, params: Params, settings: ContinuationSettings, script: Script): EngineEvent[] {
  const name = settings.parameter;
  const events: EngineEvent[] = [];
  const lam0 = params[name];
  const point = (branch: number, index: number, lambda: number, amp: number): ContinuationPoint => {
    const u = state(problem, amp);
    const p = { ...params, [name]: lambda };
    return {
      branch,
      index,
      arclength: index * 0.1,
      parameter: lambda,
      u,
      monitors: monitors(problem, u, p),
      step: index === 0 ? 0 : 0.1,
      newtonIterations: 2 + (index % 3),
      residual: 1e-12,
      tangentParameter: 0.5,
      determinantSign: 1,
      ...(script.stability
        ? { stability: { stable: index % 2 === 0 ? true : null, unstableCount: index % 2, unstableComplex: 0, leadingReal: -1 + index * 0.1, leadingImag: 0, eigenvalues: [], complete: true, searched: 'fake' } }
        : {}),
    } as ContinuationPoint;
  };
  const special = (base: ContinuationPoint, extra: Record<string, unknown>): SpecialPoint =>
    ({ branch: base.branch, value: base.parameter, arclength: base.arclength, u: base.u, monitors: base.monitors, residual: 1e-13, ...extra }) as unknown as SpecialPoint;

  events.push({ type: 'branch-start', branch: { id: 1, depth: 0, origin: { kind: 'start' } } });
  let last: ContinuationPoint | undefined;
  for (let i = 0; i < script.points1; i++) {
    const lambda = lam0 + 0.3 * i;
    last = point(1, i, lambda, 0.1 * (i + 1));
    events.push({ type: 'point', point: last });
    if (i === 4) events.push({ type: 'special', point: special(last, { kind: 'fold', located: true, turn: 'maximum' }) });
    if (i === 8 && script.hopf) {
      events.push({ type: 'special', point: special(last, { kind: 'hopf', located: true, frequency: 2, period: Math.PI, crossing: 'destabilising' }) });
    }
    if (i === 6 && script.points2 > 0) {
      events.push({
        type: 'special',
        point: special(last, { kind: 'branch-point', located: true, multiplicity: 1, type: 'pitchfork', criticality: 'supercritical', newBranchDirection: 'increase', newBranches: [2] }),
      });
      events.push({ type: 'log', level: 'info', message: 'queued branch 2' });
    }
  }
  if (last) events.push({ type: 'special', point: special(last, { kind: 'end', reason: script.reason1 }) });
  events.push({ type: 'branch-end', branch: 1, reason: script.reason1, message: `branch 1: ${script.reason1}` });
  if (script.points2 > 0) {
    const origin = lam0 + 0.3 * 6;
    events.push({ type: 'branch-start', branch: { id: 2, depth: 1, origin: { kind: 'branch-point', branch: 1, value: origin } } });
    let l2: ContinuationPoint | undefined;
    for (let i = 0; i < script.points2; i++) {
      l2 = point(2, i, origin + 0.05 * i, -0.2 * (i + 1));
      events.push({ type: 'point', point: l2 });
    }
    events.push({ type: 'special', point: special(l2!, { kind: 'end', reason: 'point-limit' }) });
    events.push({ type: 'branch-end', branch: 2, reason: 'point-limit', message: 'branch 2: point limit' });
  }
  return events;
}

export class FakeEngine implements EngineLike {
  private readonly list: EngineEvent[];
  private next: number;
  disposed = false;

  constructor(problem: Problem, params: Params, settings: ContinuationSettings, private readonly script: Script, options: { state?: unknown }) {
    this.list = scriptedEvents(problem, params, settings, script);
    this.next = options.state ? (options.state as { next: number }).next : 0;
  }

  get canSnapshot(): boolean {
    return true;
  }

  *events(): Generator<EngineEvent, unknown> {
    while (this.next < this.list.length) {
      if (this.script.throwAt === this.next) throw new Error('the fake engine failed on purpose');
      const ev = this.list[this.next++];
      yield ev;
    }
    return { branches: [] };
  }

  snapshot(): unknown {
    return { next: this.next };
  }

  dispose(): void {
    this.disposed = true;
  }
}

export function fakeEngine(script: Script = defaultScript, created: FakeEngine[] = []): EngineFactory {
  return (problem, params, settings, options) => {
    const e = new FakeEngine(problem, params, settings, script, options);
    created.push(e);
    return e;
  };
}
