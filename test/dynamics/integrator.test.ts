/**
 * The integrator's mechanics: algebraic unknowns of index 1 (against a closed-form solution) and
 * the refusal of index 2, blow-up in finite time past the Bratu fold, the steady state below it
 * (against an independent dense Newton solve), snapshots at exact times, the drift report, the
 * oscillation watch on known signals, and bit-for-bit resumption from a snapshot.
 */
import { describe, expect, it } from 'vitest';
import { initialStateBuilder, models } from '../../discretisations/index.js';
import { DynamicsError, TimeIntegration } from '../../src/dynamics/integrator.js';
import { algebraicIndexProblem } from '../../src/dynamics/algebraic.js';
import { defaultTimeSettings, outcomeText } from '../../src/dynamics/types.js';
import { emptyWatch, observe, steadyOscillation, transientOscillation } from '../../src/dynamics/watch.js';
import { resolveParameters } from '../../src/problem/problem.js';
import { toyProblem } from '../continuation/collect.js';
import { newtonDense } from '../discretisations/helpers.js';
import { integrate, maxDifference } from './helpers.js';

describe('algebraic unknowns', () => {
  // u' = −u + w, 0 = u² − w: w follows u, and u' = −u + u², whose solution from u₀ = 1/2 is
  // u = 1/(1 + e^t) (a Bernoulli equation; standard closed form)
  const dae = {
    ...toyProblem(
      2,
      (u, _l, out) => {
        out[0] = -u[0] + u[1];
        out[1] = u[0] * u[0] - u[1];
      },
      (u) => [
        [-1, 1],
        [2 * u[0], -1],
      ],
      (_u, _l, out) => out.fill(0),
      [0.5, 0],
    ),
    massDiagonal: Float64Array.from([1, 0]),
  };

  it('are integrated as an index-1 system from a consistent start (the closed-form solution)', () => {
    const r = integrate(dae, { lambda: 0 }, { end: 3, relativeTolerance: 1e-8, absoluteTolerance: 1e-12, steadyTolerance: 1e-15 });
    // the start was made consistent: w = u²
    expect(r.steps[0].u[1]).toBeCloseTo(0.25, 14);
    for (const s of r.steps) {
      const exact = 1 / (1 + Math.exp(s.time));
      expect(Math.abs(s.u[0] - exact)).toBeLessThan(2e-6);
      expect(Math.abs(s.u[1] - s.u[0] * s.u[0])).toBeLessThan(1e-9);
    }
  });

  it('of index 2 (a phase condition) are refused with one sentence saying why', () => {
    const gs = models['gray-scott'].factory({ grid: { intervals: [16] }, boundary: 'periodic', 'phase-condition': true, initial: 'pulse' });
    const why = algebraicIndexProblem(gs);
    expect(why).toMatch(/drift-x .*do not enter their own equations.*index 2/);
    expect(why).not.toMatch(/\n/);
    const p = resolveParameters(gs, {});
    expect(() => [...new TimeIntegration(gs, p, { ...defaultTimeSettings, end: 1 }).events()]).toThrow(DynamicsError);
  });
});

describe('ignition (Bratu–Gelfand, u_t = u″ + λeᵘ, cold walls)', () => {
  const bratu = models.bratu.factory({ grid: { intervals: [40] } });

  it('below the fold λ* ≈ 3.5138 settles at the cool steady state (the same as a dense Newton solve)', () => {
    const p = resolveParameters(bratu, { lambda: 2 });
    const r = integrate(bratu, p, { end: 100 });
    expect(r.outcome.kind).toBe('steady');
    const reference = newtonDense(bratu, new Float64Array(bratu.size), p);
    expect(maxDifference(r.final, reference)).toBeLessThan(1e-9);
  });

  it('past the fold blows up in finite time: no steady state is left (thermal runaway)', () => {
    // beyond λ* = 3.5138… (exact for the continuum: Bratu 1914; the value from memory) there is no steady state
    const p = resolveParameters(bratu, { lambda: 5 });
    const r = integrate(bratu, p, { end: 100, blowUp: 1e3 });
    expect(r.outcome.kind).toBe('blown-up');
    if (r.outcome.kind === 'blown-up') expect(r.outcome.time).toBeLessThan(5);
  });
});

describe('unstable steady states', () => {
  // Allen–Cahn at λ = 20 (between π² and 4π²): u = 0 is unstable with one positive eigenvalue
  // λ − μ₁ (μ₁ the grid's first Laplacian eigenvalue), the one-signed states ±u₁ are stable
  // (Chafee & Infante 1974)
  const ac = models['allen-cahn'].factory({ grid: { intervals: [30] } });
  const p = resolveParameters(ac, { lambda: 20 });
  const u0 = initialStateBuilder(ac, { values: { u: 0 }, noise: { amplitude: 1e-9, seed: 5 } }).build(p);

  it('are taken as the result without eigenvalues, and passed by with them, on to a stable state', () => {
    const blind = integrate(ac, p, { end: 100 }, { start: u0 });
    expect(blind.outcome).toMatchObject({ kind: 'steady', time: 0 });
    expect(Math.max(...blind.final.map(Math.abs))).toBeLessThan(1e-12);
    const seeing = integrate(ac, p, { end: 100, stability: { eigenvalues: 2 } }, { start: u0 });
    expect(seeing.logs.some((l) => /near a steady state that is unstable/.test(l))).toBe(true);
    expect(seeing.logs.some((l) => /has left the unstable steady state/.test(l))).toBe(true);
    expect(seeing.outcome.kind).toBe('steady');
    if (seeing.outcome.kind === 'steady') expect(seeing.outcome.stability?.stable).toBe(true);
    expect(Math.max(...seeing.final.map(Math.abs))).toBeGreaterThan(0.5);
    expect(new Set(Array.from(seeing.final, Math.sign)).size).toBe(1);
  });

  it('are the result when the state never leaves them (an exactly symmetric start), and say so', () => {
    const r = integrate(ac, p, { end: 50, stability: { eigenvalues: 2 } }, { start: new Float64Array(ac.size) });
    expect(r.outcome.kind).toBe('steady');
    if (r.outcome.kind === 'steady') expect(r.outcome.stability?.stable).toBe(false);
    expect(outcomeText(r.outcome)).toMatch(/an unstable one, which the state did not leave/);
  });
});

describe('snapshots, drift and oscillation reports', () => {
  const heat = models['allen-cahn'].factory({ grid: { intervals: [20] } });
  const p = resolveParameters(heat, { lambda: 0 });
  const h = 1 / 20;
  const u0 = Float64Array.from({ length: heat.size }, (_, i) => Math.sin(Math.PI * (i + 1) * h));
  const mu = (4 / h ** 2) * Math.sin((Math.PI * h) / 2) ** 2; // LeVeque, Finite Difference Methods for ODEs and PDEs, SIAM 2007, §2.10, from memory

  it('hands out states at the scheduled times (interpolated) and reports the residual’s fall at the time limit', () => {
    const r = integrate(heat, p, { end: 0.3, snapshots: { every: 0.05 }, relativeTolerance: 1e-7, absoluteTolerance: 1e-11, steadyTolerance: 1e-14 }, { start: u0 });
    expect(r.snapshots.map((s) => s.time)).toEqual([0.05, 0.1, 0.15, 0.2, 0.25, 0.3].map((t) => expect.closeTo(t, 12)));
    for (const s of r.snapshots) expect(maxDifference(s.u, u0.map((v) => v * Math.exp(-mu * s.time)))).toBeLessThan(1e-5);
    expect(r.outcome.kind).toBe('drifting');
    if (r.outcome.kind === 'drifting') {
      expect(r.outcome.limit).toBe('time');
      expect(r.outcome.falling).toBe(true);
      // the residual of e^{−μt} sin(πx) falls tenfold every ln(10)/μ
      expect(Math.abs(r.outcome.timePerDecade! / (Math.log(10) / mu) - 1)).toBeLessThan(0.02);
    }
  });

  it('tells a steady oscillation from a damped one', () => {
    const steady = emptyWatch(['a']);
    const damped = emptyWatch(['a']);
    for (let k = 0; k <= 400; k++) {
      const t = k * 0.05;
      observe(steady, t, [2 + Math.sin(2 * t)], 1);
      observe(damped, t, [2 + Math.exp(-0.1 * t) * Math.sin(2 * t)], 1);
    }
    const s = steadyOscillation(steady);
    expect(s?.period).toBeCloseTo(Math.PI, 4);
    expect(s?.amplitudes.a).toBeCloseTo(2, 3);
    expect(steadyOscillation(damped)).toBeUndefined();
    const d = transientOscillation(damped, 20);
    expect(d?.period).toBeCloseTo(Math.PI, 3);
    // the amplitude shrinks by e^{−0.1·π} per period
    expect(d?.amplitudeRatio).toBeCloseTo(Math.exp(-0.1 * Math.PI), 2);
  });
});

describe('resuming', () => {
  it('from a snapshot taken right after a restart of the linear algebra repeats the run bit for bit', () => {
    const problem = models['gray-scott'].factory({ grid: { intervals: [40], length: [0.3] }, boundary: 'neumann', initial: 'pulse' });
    const p = resolveParameters(problem, { F: 0.04, k: 0.064 });
    const settings = { ...defaultTimeSettings, end: 3000, snapshots: 'none' as const };
    const whole = new TimeIntegration(problem, p, settings);
    let saved: ReturnType<TimeIntegration['snapshot']> | undefined;
    let last: Float64Array | undefined;
    for (const e of whole.events()) {
      if (e.type === 'step' && e.record.step === 30 && whole.canSnapshot) {
        whole.restartLinearAlgebra();
        saved = whole.snapshot();
      }
      if (e.type === 'end') last = e.u;
    }
    whole.dispose();
    expect(saved).toBeDefined();
    const resumed = new TimeIntegration(problem, p, settings, { state: saved });
    let again: Float64Array | undefined;
    for (const e of resumed.events()) if (e.type === 'end') again = e.u;
    resumed.dispose();
    expect(Array.from(again!)).toEqual(Array.from(last!));
  });
});
