/**
 * Phase condition on periodic domains: a patterned state of a translation-invariant problem has
 * a (near-)neutral translation mode, so J is (nearly) singular; the drift-speed unknown and the
 * condition ∫ u* ∂x u dx = 0 make the bordered Jacobian regular and pin the pattern's phase to
 * the reference u*.
 */
import { describe, expect, it } from 'vitest';
import { Matrix, SingularValueDecomposition } from 'ml-matrix';
import { createReactionDiffusion, type ReactionDiffusionProblem } from '../../discretisations/reaction-diffusion.js';
import { allenCahnReaction } from '../../discretisations/models/allen-cahn.js';
import { models } from '../../discretisations/index.js';
import { checkJacobian } from '../../src/problem/check.js';
import { denseJacobian, newtonDense } from './helpers.js';

const N = 32;
const make = (phase: boolean): ReactionDiffusionProblem =>
  createReactionDiffusion({
    model: 'allen-cahn-periodic',
    summary: 'test',
    fields: ['u'],
    parameters: [{ name: 'lambda', default: 100, description: '' }],
    grid: { intervals: [N] },
    boundaries: { all: { kind: 'periodic' } },
    diffusion: [1],
    reaction: allenCahnReaction,
    initialGuess: (x, _q, out) => {
      out[0] = 0.9 * Math.sin(2 * Math.PI * x[0]);
    },
    phaseCondition: phase,
  });

function minSingular(J: number[][]): { min: number; max: number } {
  const s = new SingularValueDecomposition(new Matrix(J)).diagonal;
  return { min: Math.min(...s), max: Math.max(...s) };
}

describe('phase condition', () => {
  const p = { lambda: 100 };
  const withPhase = make(true);

  it('adds one drift unknown with zero mass and weight 1', () => {
    expect(withPhase.size).toBe(N + 1);
    expect(withPhase.extraUnknowns.map((e) => e.name)).toEqual(['drift-x']);
    expect(withPhase.massDiagonal![N]).toBe(0);
    expect(withPhase.weights[N]).toBe(1);
    expect(withPhase.monitors.some((m) => m.name === 'drift-x')).toBe(true);
  });

  it('makes the Jacobian of a patterned state regular and pins its phase to the reference', () => {
    const u0 = withPhase.initialGuess(p);
    for (let i = 0; i < N; i++) u0[i] += 0.05 * Math.cos(2 * Math.PI * (i / N) * 2); // break the guess's symmetry a little
    const u = newtonDense(withPhase, u0, p);
    // standing pattern: no drift
    expect(Math.abs(u[N])).toBeLessThan(1e-9);
    // the pattern is non-trivial
    expect(Math.max(...u.subarray(0, N))).toBeGreaterThan(0.5);
    // without the phase condition the grid Jacobian is nearly singular (translation mode) ...
    const plain = make(false);
    const Jg = denseJacobian(plain, u.slice(0, N), p);
    const g = minSingular(Jg);
    expect(g.min / g.max).toBeLessThan(1e-6);
    // ... with it, the bordered Jacobian is regular
    const b = minSingular(denseJacobian(withPhase, u, p));
    expect(b.min / b.max).toBeGreaterThan(1e-4);
  });

  it('a reference shifted by m nodes gives the solution shifted by m nodes (exact grid symmetry)', () => {
    const u0 = withPhase.initialGuess(p);
    const u = newtonDense(withPhase, u0, p);
    const m = 5;
    const shifted = make(true);
    const ref = new Float64Array(N);
    for (let i = 0; i < N; i++) ref[(i + m) % N] = u0[i];
    shifted.setPhaseReference(ref);
    const guess = new Float64Array(N + 1);
    for (let i = 0; i < N; i++) guess[(i + m) % N] = u[i] + 0.01;
    const v = newtonDense(shifted, guess, p);
    for (let i = 0; i < N; i++) expect(v[(i + m) % N]).toBeCloseTo(u[i], 9);
  });

  it('analytic Jacobian of gray-scott and brusselator with the phase condition matches differences', () => {
    for (const id of ['gray-scott', 'brusselator']) {
      const pr = models[id].factory({ grid: { intervals: [40] }, boundary: 'periodic', initial: id === 'gray-scott' ? 'pulse' : 'perturbed', 'phase-condition': true });
      const u = pr.initialGuess(Object.fromEntries(pr.parameters.map((s) => [s.name, s.default])));
      u[pr.size - 1] = 0.7;
      const r = checkJacobian(pr, { state: u });
      expect(r.passed).toBe(true);
    }
  });

  it('refuses a phase condition without a periodic axis', () => {
    expect(() => models['gray-scott'].factory({ grid: { intervals: [10] }, boundary: 'neumann', 'phase-condition': true })).toThrow(/needs boundary 'periodic'/);
    expect(() =>
      createReactionDiffusion({
        model: 'x', summary: '', fields: ['u'], parameters: [], grid: { intervals: [5] }, boundaries: { all: { kind: 'neumann' } },
        diffusion: [1], reaction: allenCahnReaction, phaseCondition: true,
      }),
    ).toThrow(/phase condition needs a periodic axis/);
  });
});
