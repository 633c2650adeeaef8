/**
 * Branches traced elsewhere (BranchHelpers) and taken over in queue order give the events of an
 * engine that traces every branch itself, bit for bit: the helpers here trace in this thread
 * with engines of their own (the real ones are threads, src/run/branch-helpers.ts, checked end
 * to end in test/cli/cores.test.ts), given the branch points known when each branch is handed
 * over. A helper that answers at once, and one still busy when its branch comes up (the engine
 * then traces a later branch out of turn meanwhile, with its spare engine), and one whose every
 * branch is taken back (traced here after all).
 */
import { describe, expect, it } from 'vitest';
import { models } from '../../discretisations/index.js';
import { type BranchHelpers, type BranchTask, type BranchTrace, Continuation, syncIndex } from '../../src/continuation/engine.js';
import { type ContinuationSettings, type EngineEvent, defaultSettings } from '../../src/continuation/types.js';
import { resolveParameters } from '../../src/problem/problem.js';

const every = 5;
const problem = models['allen-cahn'].factory({ grid: { intervals: [40] } } as never);
const params = resolveParameters(problem, { lambda: 1 });
const settings = {
  ...defaultSettings,
  parameter: 'lambda',
  bounds: [0, 45],
  step: { initial: 0.5, min: 1e-8, max: 3 },
  maxPoints: 30,
  branchSwitching: { depth: 2 },
  stability: { eigenvalues: 2 },
} as ContinuationSettings;

/** Every number of an event, in order, with its kind (exact comparison). */
function flat(e: EngineEvent): unknown[] {
  switch (e.type) {
    case 'point': {
      const p = e.point;
      return ['point', p.branch, p.index, p.arclength, p.parameter, p.step, p.newtonIterations, p.residual, p.determinantSign, ...p.u, ...(p.stability ? p.stability.eigenvalues.flatMap((v) => [v.re, v.im]) : [])];
    }
    case 'special':
      return ['special', JSON.stringify({ ...e.point, u: undefined }), ...e.point.u];
    case 'branch-start':
      return ['start', JSON.stringify(e.branch)];
    case 'branch-end':
      return ['end', e.branch, e.reason, e.message];
    case 'log':
      return ['log', e.level, e.message];
  }
}

/** Drive an engine as runCase does (its linear algebra restarts at every sync step) and flatten its events. */
function drive(c: Continuation): unknown[][] {
  const out: unknown[][] = [];
  let due = false;
  for (const e of c.events()) {
    out.push(flat(e));
    if (e.type === 'point' && syncIndex(e.point.index, every)) due = true;
    if (due && c.canSnapshot) {
      due = false;
      c.restartLinearAlgebra();
    }
  }
  return out;
}

/** Helpers in this thread: each branch traced at once by a new engine; `busyFor` answers of busy() before it is ready. */
class HereHelpers implements BranchHelpers {
  readonly syncEvery = every;
  readonly outOfTurn = true;
  readonly traced: number[] = [];
  private readonly traces = new Map<number, BranchTrace>();
  private readonly busyLeft = new Map<number, number>();
  constructor(private readonly busyFor: number, private readonly takeBack = false) {}
  free(): number {
    return 1;
  }
  submit(id: number, task: BranchTask): void {
    const engine = new Continuation(problem, params, settings);
    this.traces.set(id, engine.traceBranch(structuredClone(task), every));
    engine.dispose();
    this.busyLeft.set(id, this.busyFor);
  }
  busy(id: number): boolean {
    const left = this.busyLeft.get(id) ?? 0;
    this.busyLeft.set(id, left - 1);
    return left > 0;
  }
  take(id: number): BranchTrace | undefined {
    if (this.takeBack) return undefined;
    this.traced.push(id);
    return this.traces.get(id);
  }
}

describe('branches traced elsewhere and taken over', () => {
  const plain = new Continuation(problem, params, settings);
  const reference = drive(plain);
  plain.dispose();

  it('the plain run switches branches (the case exercises the helpers)', () => {
    expect(reference.filter((f) => f[0] === 'start').length).toBeGreaterThanOrEqual(5);
  });

  for (const [what, busyFor, takeBack] of [
    ['helpers that answer at once', 0, false],
    ['helpers still busy when their branch comes up', 1, false],
    ['helpers whose every branch is taken back', 0, true],
  ] as const) {
    it(`${what}: the same events, bit for bit`, () => {
      const helpers = new HereHelpers(busyFor, takeBack);
      const c = new Continuation(problem, params, settings, { helpers });
      const events = drive(c);
      c.dispose();
      if (!takeBack) expect(helpers.traced.length, 'branches taken over from helpers').toBeGreaterThanOrEqual(2);
      expect(events.length).toBe(reference.length);
      events.forEach((f, i) => expect(f, `event ${i}`).toEqual(reference[i]));
    });
  }
});
