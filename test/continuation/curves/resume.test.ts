/**
 * The curve engine resumed from checkpoint files (the real file format) repeats the
 * uninterrupted run event for event, bit for bit: with a queue of curves (mode changes, and the
 * second way of `direction: both`), located codimension-two points, and the borders and scales
 * that live in the system.
 */
import { describe, expect, it } from 'vitest';
import { models } from '../../../discretisations/index.js';
import { CurveContinuation, type CurveState } from '../../../src/continuation/curves/engine.js';
import type { CurveEvent, CurveSettings } from '../../../src/continuation/curves/types.js';
import { resolveParameters } from '../../../src/problem/problem.js';
import { decodeCheckpoint, encodeCheckpoint } from '../../../src/run/checkpoint.js';
import { emptyLedger } from '../../../src/run/run-directory.js';
import { syncEvery } from '../../../src/run/run-case.js';
import { curveSettings, uniformStart } from './helpers.js';

function flat(e: CurveEvent): unknown[] {
  switch (e.type) {
    case 'point': {
      const p = e.point;
      return ['point', p.branch, p.index, p.arclength, p.parameter, p.free, p.step, p.newtonIterations, p.residual, ...Object.values(p.tests), ...(p.mode ?? []), ...p.u];
    }
    case 'special':
      return ['special', e.point.kind, e.point.branch, e.point.value, e.point.free, e.point.arclength, ...e.point.u];
    case 'branch-start':
      return ['start', e.branch.id, e.branch.depth, e.branch.direction];
    case 'branch-end':
      return ['end', e.branch, e.reason];
    case 'log':
      return ['log', e.message];
  }
}

function* drive(c: CurveContinuation, startPoints: number): Generator<{ e: CurveEvent; checkpoint?: { state: CurveState; points: number } }> {
  let points = startPoints;
  let lastSync = startPoints > 0 ? startPoints : -1;
  let seen = startPoints;
  for (const e of c.events()) {
    if (e.type === 'point') points++;
    let checkpoint: { state: CurveState; points: number } | undefined;
    if (c.canSnapshot && points > seen) {
      seen = points;
      const due = lastSync < 0 ? points >= 1 : Math.floor(points / syncEvery) > Math.floor(lastSync / syncEvery);
      if (due) {
        lastSync = points;
        checkpoint = { state: c.snapshot(), points };
        c.restartLinearAlgebra();
      }
    }
    yield { e, ...(checkpoint ? { checkpoint } : {}) };
  }
}

const bytes = (state: CurveState): Uint8Array =>
  encodeCheckpoint({
    format: 'branchline checkpoint',
    version: 1,
    sequence: 1,
    written: '2030-01-01T00:00:00.000Z',
    reason: 'points',
    run: { started: '2030-01-01T00:00:00.000Z', seconds: 1, caseFile: null, resumes: [] },
    case: {},
    ledger: emptyLedger(),
    engine: state,
  });

const brusselator = models.brusselator.factory({ grid: { intervals: [30], length: [15] }, boundary: 'neumann' } as never);
const grayScott = models['gray-scott'].factory({ grid: { intervals: [8] }, boundary: 'neumann' } as never);
const gsStart = (): Float64Array => {
  const F = 0.05;
  const s = 0.1;
  const v = (F + Math.sqrt(F * F - 4 * s * s * F)) / (2 * s);
  return uniformStart(grayScott, [1 - (s * v) / F, v], { F, k: 0.05, Du: 1, Dv: 1 });
};

const cases: { what: string; problem: typeof brusselator; given: Record<string, number>; settings: CurveSettings; start: () => Float64Array; expectKinds: string[] }[] = [
  {
    what: 'Turing lines of the Brusselator with mode changes (a queue of curves)',
    problem: brusselator,
    given: { a: 2, b: 2.5, Du: 1, Dv: 8 },
    settings: curveSettings({ follow: 'branch-point', parameter: 'a', free: 'b', bounds: [1.5, 3.5], step: { initial: 0.05, min: 1e-9, max: 0.1 } }),
    start: () => uniformStart(brusselator, [2, 1.25], { a: 2, b: 2.5, Du: 1, Dv: 8 }),
    expectKinds: ['mode-change'],
  },
  {
    what: 'the Gray–Scott fold curve both ways, through its Bogdanov–Takens point',
    problem: grayScott,
    given: { F: 0.05, k: 0.05, Du: 1, Dv: 1 },
    settings: curveSettings({ follow: 'fold', parameter: 'k', free: 'F', bounds: [0.03, 0.07], freeBounds: [0, 1], direction: 'both', step: { initial: 0.004, min: 1e-9, max: 0.008 } }),
    start: gsStart,
    expectKinds: ['bogdanov-takens'],
  },
  {
    what: 'the Gray–Scott Hopf curve both ways from the first Hopf point met: a Bautin point one way, the Bogdanov–Takens end the other (eigenvalues per point)',
    problem: grayScott,
    given: { F: 0.035, k: 0.05, Du: 1, Dv: 1 },
    settings: curveSettings({ follow: 'hopf', parameter: 'k', free: 'F', bounds: [0.03, 0.07], freeBounds: [0, 1], direction: 'both', freeDirection: 'decrease', eigenvalues: 4, step: { initial: 0.002, min: 1e-9, max: 0.004 } }),
    start: () => {
      const F = 0.035;
      const s = 0.085;
      const v = (F + Math.sqrt(F * F - 4 * s * s * F)) / (2 * s);
      return uniformStart(grayScott, [1 - (s * v) / F, v], { F, k: 0.05, Du: 1, Dv: 1 });
    },
    expectKinds: ['bautin', 'bogdanov-takens'],
  },
];

describe('the curve engine resumed from checkpoint files repeats the uninterrupted run', () => {
  for (const c of cases) {
    it(c.what, () => {
      const params = resolveParameters(c.problem, c.given);
      const whole: unknown[][] = [];
      const checkpoints: { at: number; bytes: Uint8Array; points: number }[] = [];
      const e0 = new CurveContinuation(c.problem, params, c.settings, { start: c.start() });
      for (const { e, checkpoint } of drive(e0, 0)) {
        whole.push(flat(e));
        if (checkpoint) checkpoints.push({ at: whole.length, bytes: bytes(checkpoint.state), points: checkpoint.points });
      }
      e0.dispose();
      expect(whole.filter((f) => f[0] === 'start').length).toBeGreaterThan(1);
      for (const k of c.expectKinds) expect(whole.some((f) => f[0] === 'special' && f[1] === k)).toBe(true);
      expect(checkpoints.length).toBeGreaterThan(5);
      const picks = checkpoints.filter((_, i) => i % Math.ceil(checkpoints.length / 5) === 1);
      let compared = 0;
      for (const k of picks) {
        const state = decodeCheckpoint(k.bytes).engine as CurveState;
        const r = new CurveContinuation(c.problem, params, c.settings, { state });
        let j = k.at;
        for (const { e } of drive(r, k.points)) {
          const a = flat(e);
          const b = whole[j++];
          expect(a.length, `event ${j - 1} resumed at ${k.at}`).toBe(b.length);
          for (let i = 0; i < a.length; i++) {
            if (typeof a[i] === 'number') {
              expect(Object.is(a[i], b[i]), `event ${j - 1}, entry ${i}: ${String(a[i])} against ${String(b[i])}`).toBe(true);
              compared++;
            } else expect(a[i]).toEqual(b[i]);
          }
        }
        r.dispose();
        expect(j, `events after resuming at ${k.at}`).toBe(whole.length);
      }
      expect(compared).toBeGreaterThan(500);
    });
  }
});
