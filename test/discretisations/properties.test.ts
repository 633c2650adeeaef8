/**
 * Property tests: for every built-in model, in 1D and 2D and for each boundary type, the
 * analytic Jacobian, the parameter derivatives and the exact second derivatives agree with
 * central finite differences (relative error < 1e-6, in the checker's measure) at random
 * states and parameters. Grids are small so the whole file runs in seconds.
 */
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import type { Params, Problem } from '../../src/problem/problem.js';
import { checkJacobian, summariseCheck } from '../../src/problem/check.js';
import { models } from '../../discretisations/index.js';
import { createReactionDiffusion } from '../../discretisations/reaction-diffusion.js';
import { grayScottReaction } from '../../discretisations/models/gray-scott.js';

function lcg(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return s / 4294967296;
  };
}

/** A random state around the model's initial guess with amplitude `amp`. */
function randomState(pr: Problem, p: Params, seed: number, amp: number): Float64Array {
  const rnd = lcg(seed);
  const u = pr.initialGuess(p);
  for (let i = 0; i < u.length; i++) u[i] += amp * (2 * rnd() - 1);
  return u;
}

function randomParams(pr: Problem, seed: number, overrides: Record<string, [number, number]>): Params {
  const rnd = lcg(seed ^ 0x9e3779b9);
  const out: Record<string, number> = {};
  for (const s of pr.parameters) {
    const range = overrides[s.name] ?? [s.default * 0.5, s.default * 1.5 + 0.1];
    out[s.name] = range[0] + (range[1] - range[0]) * rnd();
  }
  return out;
}

interface Case {
  name: string;
  make: () => Problem;
  ranges: Record<string, [number, number]>;
  amp: number;
}

const cases: Case[] = [
  { name: 'bratu 1D dirichlet', make: () => models.bratu.factory({ grid: { intervals: [9] } }), ranges: { lambda: [0, 3.5] }, amp: 1 },
  { name: 'bratu 2D dirichlet', make: () => models.bratu.factory({ grid: { intervals: [6, 5], length: [1, 1.5] } }), ranges: { lambda: [0, 6] }, amp: 1 },
  { name: 'bratu 1D robin', make: () => models.bratu.factory({ grid: { intervals: [8] }, boundary: 'robin' }), ranges: { lambda: [0, 3], biot: [0, 20] }, amp: 1 },
  { name: 'bratu 2D robin', make: () => models.bratu.factory({ grid: { intervals: [5, 6] }, boundary: 'robin' }), ranges: { lambda: [0, 3], biot: [0, 20] }, amp: 1 },
  { name: 'bratu 3D dirichlet', make: () => models.bratu.factory({ grid: { intervals: [4, 3, 4] } }), ranges: { lambda: [0, 9] }, amp: 1 },
  { name: 'allen-cahn 1D dirichlet', make: () => models['allen-cahn'].factory({ grid: { intervals: [10] } }), ranges: { lambda: [0, 50] }, amp: 1.5 },
  { name: 'allen-cahn 2D neumann', make: () => models['allen-cahn'].factory({ grid: { intervals: [5, 6] }, boundary: 'neumann' }), ranges: { lambda: [0, 50] }, amp: 1.5 },
  { name: 'allen-cahn 2D periodic', make: () => models['allen-cahn'].factory({ grid: { intervals: [5, 4] }, boundary: 'periodic' }), ranges: { lambda: [0, 50] }, amp: 1.5 },
  { name: 'gray-scott 1D periodic', make: () => models['gray-scott'].factory({ grid: { intervals: [12] }, initial: 'pulse' }), ranges: { F: [0, 0.1], k: [0, 0.1], Du: [1e-3, 1e-2], Dv: [1e-3, 1e-2] }, amp: 0.3 },
  { name: 'gray-scott 1D periodic with phase condition', make: () => models['gray-scott'].factory({ grid: { intervals: [12] }, initial: 'pulse', 'phase-condition': true }), ranges: { F: [0, 0.1], k: [0, 0.1], Du: [1e-3, 1e-2], Dv: [1e-3, 1e-2] }, amp: 0.3 },
  { name: 'gray-scott 2D neumann', make: () => models['gray-scott'].factory({ grid: { intervals: [5, 6] }, boundary: 'neumann', initial: 'pulse' }), ranges: { F: [0, 0.1], k: [0, 0.1], Du: [1e-3, 1e-2], Dv: [1e-3, 1e-2] }, amp: 0.3 },
  { name: 'gray-scott 2D periodic with phase conditions', make: () => models['gray-scott'].factory({ grid: { intervals: [5, 4] }, initial: 'pulse', 'phase-condition': true }), ranges: { F: [0, 0.1], k: [0, 0.1], Du: [1e-3, 1e-2], Dv: [1e-3, 1e-2] }, amp: 0.3 },
  { name: 'brusselator 1D neumann', make: () => models.brusselator.factory({ grid: { intervals: [10] }, initial: 'perturbed' }), ranges: { a: [0.5, 3], b: [0.5, 6], Du: [0.1, 2], Dv: [1, 10] }, amp: 0.5 },
  { name: 'brusselator 2D periodic', make: () => models.brusselator.factory({ grid: { intervals: [4, 5] }, boundary: 'periodic', initial: 'perturbed' }), ranges: { a: [0.5, 3], b: [0.5, 6], Du: [0.1, 2], Dv: [1, 10] }, amp: 0.5 },
  { name: 'brusselator 1D periodic with phase condition', make: () => models.brusselator.factory({ grid: { intervals: [10] }, boundary: 'periodic', initial: 'perturbed', 'phase-condition': true }), ranges: { a: [0.5, 3], b: [0.5, 6], Du: [0.1, 2], Dv: [1, 10] }, amp: 0.5 },
  { name: 'elastica', make: () => models.elastica.factory({ grid: { intervals: [16] } }), ranges: { lambda: [0, 40] }, amp: 1.5 },
  { name: 'beam-foundation pinned', make: () => models['beam-foundation'].factory({ grid: { intervals: [10], length: [2] } }), ranges: { P: [0, 50], EI: [0.5, 2], kf: [0, 200], k3: [-100, 100], imperfection: [-0.3, 0.3] }, amp: 0.5 },
  { name: 'beam-foundation clamped', make: () => models['beam-foundation'].factory({ grid: { intervals: [10] }, ends: 'clamped' }), ranges: { P: [0, 50], EI: [0.5, 2], kf: [0, 200], k3: [-100, 100], imperfection: [-0.3, 0.3] }, amp: 0.5 },
  {
    // the generic core with everything at once: per-field and per-side boundary kinds,
    // parameter-valued boundary data, a variable diffusion profile, 3D
    name: 'generic core, mixed boundaries, 3D, variable diffusion',
    make: () =>
      createReactionDiffusion({
        model: 'mixed',
        summary: 'test system',
        fields: ['u', 'v'],
        parameters: [
          { name: 'F', default: 0.04, description: '' },
          { name: 'k', default: 0.06, description: '' },
          { name: 'Du', default: 0.5, description: '' },
          { name: 'g', default: 0.2, description: 'boundary datum' },
          { name: 'beta', default: 2, description: 'robin coefficient' },
        ],
        grid: { intervals: [3, 4, 3] },
        boundaries: [
          { xmin: { kind: 'dirichlet', value: 'g' }, xmax: { kind: 'robin', coefficient: 'beta', value: 'g' }, ymin: { kind: 'periodic' }, ymax: { kind: 'periodic' }, all: { kind: 'neumann', flux: 'g' } },
          { xmin: { kind: 'neumann', flux: 0.1 }, xmax: { kind: 'dirichlet', value: 0.3 }, ymin: { kind: 'periodic' }, ymax: { kind: 'periodic' }, zmin: { kind: 'robin', coefficient: 1, value: 'g' }, zmax: { kind: 'dirichlet', value: 'g' } },
        ],
        diffusion: ['Du', { value: (q) => 0.5 * q[2] + q[1], derivative: (_q, j) => (j === 2 ? 0.5 : j === 1 ? 1 : 0) }],
        diffusionProfile: [(x) => 1 + 0.5 * x[0] * x[1], undefined],
        reaction: grayScottReaction,
        initialGuess: (x, _q, out) => {
          out[0] = 1 - 0.2 * x[0];
          out[1] = 0.3 + 0.1 * x[2];
        },
      }),
    ranges: { F: [0, 0.1], k: [0, 0.1], Du: [0.1, 1], g: [-1, 1], beta: [0, 5] },
    amp: 0.5,
  },
];

describe('analytic derivatives agree with central finite differences (fast-check)', () => {
  for (const c of cases) {
    it(c.name, () => {
      const pr = c.make();
      fc.assert(
        fc.property(fc.integer({ min: 0, max: 2 ** 31 - 1 }), fc.double({ min: 0.1, max: 1, noNaN: true }), (seed, scale) => {
          const p = randomParams(pr, seed, c.ranges);
          const u = randomState(pr, p, seed, c.amp * scale);
          const r = checkJacobian(pr, { state: u, parameters: p, tolerance: 1e-6 });
          if (!r.passed) throw new Error(summariseCheck(r).join('\n'));
          // every stored entry was compared, and the second-order checks ran where supplied
          expect(r.jacobian.maxRelativeError).toBeLessThan(1e-6);
          if (pr.secondDerivative) expect(r.secondOrder.length).toBe(1 + pr.parameters.length);
        }),
        { numRuns: 15 },
      );
    });
  }
});
