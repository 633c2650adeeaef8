/**
 * Property tests (fast-check): the linearisations of the augmented curve systems agree with
 * central finite differences of their residuals (borders held fixed), and their bordered solves
 * invert those linearisations — at random states and parameters (not on the curve: the
 * systems are defined everywhere their bordered matrix is regular), on small grids of several
 * models, an expression model included.
 */
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { models } from '../../../discretisations/index.js';
import { reactionDiffusion } from '../../../discretisations/expression/reaction-diffusion.js';
import { BranchPointSystem } from '../../../src/continuation/curves/branch-point-system.js';
import { checkAugmentedSystem } from '../../../src/continuation/curves/check.js';
import { FoldSystem } from '../../../src/continuation/curves/fold-system.js';
import { HopfSystem } from '../../../src/continuation/curves/hopf-system.js';
import { uniformSubspace } from '../../../src/continuation/curves/uniform.js';
import type { Problem } from '../../../src/problem/problem.js';
import type { AugmentedSystem } from '../../../src/continuation/curves/augmented.js';
import { resolveParameters } from '../../../src/problem/problem.js';
import { uniformStart } from './helpers.js';

interface FoldCase {
  name: string;
  problem: () => Problem;
  parameter: string;
  free: string;
  ranges: Record<string, [number, number]>;
  amp: number;
}

const foldCases: FoldCase[] = [
  { name: 'bratu 1D robin', problem: () => models.bratu.factory({ grid: { intervals: [8] }, boundary: 'robin' } as never), parameter: 'biot', free: 'lambda', ranges: { lambda: [0.2, 3], biot: [0.1, 20] }, amp: 1 },
  { name: 'bratu 2D robin, the roles of the parameters swapped', problem: () => models.bratu.factory({ grid: { intervals: [5, 4] }, boundary: 'robin' } as never), parameter: 'lambda', free: 'biot', ranges: { lambda: [0.2, 3], biot: [0.1, 20] }, amp: 1 },
  { name: 'gray-scott 1D neumann', problem: () => models['gray-scott'].factory({ grid: { intervals: [6] }, boundary: 'neumann', initial: 'pulse' } as never), parameter: 'k', free: 'F', ranges: { F: [0.01, 0.1], k: [0.01, 0.1], Du: [0.1, 1], Dv: [0.1, 1] }, amp: 0.3 },
  { name: 'beam-foundation clamped with an imperfection', problem: () => models['beam-foundation'].factory({ grid: { intervals: [10] }, ends: 'clamped' } as never), parameter: 'imperfection', free: 'P', ranges: { P: [0, 40], kf: [10, 200], k3: [-50, 100], imperfection: [-0.2, 0.2] }, amp: 0.3 },
  {
    name: 'expression model (finite-difference second derivatives)',
    problem: () => reactionDiffusion({ grid: { intervals: [7] }, fields: ['u'], parameters: { p1: 0.1, p2: 1 }, reaction: { u: 'p1 + p2*u - u^3 + 0.1*sin(u)' }, diffusion: { u: 1 }, boundary: 'neumann', initial: { u: 0.5 } } as never),
    parameter: 'p2',
    free: 'p1',
    ranges: { p1: [-1, 1], p2: [-1, 2] },
    amp: 0.5,
  },
];

/** Borders set up at the state u, then the linearisation against differences and the solve against the linearisation. */
function expectAgreement(sys: AugmentedSystem, u: Float64Array, p: Record<string, number>, seed: number): void {
  try {
    const y = sys.fromState(u, p);
    sys.initialise(y);
    const r = checkAugmentedSystem(sys, y, { seed, directions: 3 });
    expect(r.jacobianError).toBeLessThan(1e-6);
    expect(r.solveError).toBeLessThan(1e-8);
  } finally {
    sys.dispose();
  }
}

function draw(problem: Problem, ranges: Record<string, [number, number]>, t: number[]): Record<string, number> {
  const p: Record<string, number> = {};
  Object.entries(ranges).forEach(([k, [lo, hi]], i) => (p[k] = lo + (hi - lo) * t[i % t.length]));
  return { ...resolveParameters(problem, {}), ...p };
}

describe('fold system: linearisation against central differences, bordered solve against the linearisation', () => {
  for (const c of foldCases) {
    it(c.name, () => {
      const problem = c.problem();
      fc.assert(
        fc.property(fc.array(fc.double({ min: 0, max: 1, noNaN: true }), { minLength: 4, maxLength: 4 }), fc.integer({ min: 1, max: 1e6 }), (t, seed) => {
          const p = draw(problem, c.ranges, t);
          const u = problem.initialGuess(p);
          for (let i = 0; i < u.length; i++) u[i] += c.amp * Math.sin(seed * (i + 1));
          expectAgreement(new FoldSystem(problem, p, c.parameter, c.free), u, p, seed);
        }),
        { numRuns: 12 },
      );
    });
  }
});

describe('branch-point system (uniform state)', () => {
  it('brusselator 1D and 2D neumann, and the beam’s straight state', () => {
    const cases: { problem: Problem; values: (p: Record<string, number>) => number[]; parameter: string; free: string; ranges: Record<string, [number, number]> }[] = [
      { problem: models.brusselator.factory({ grid: { intervals: [6] }, boundary: 'neumann' } as never), values: (p) => [p.a, p.b / p.a], parameter: 'a', free: 'b', ranges: { a: [0.5, 3], b: [0.5, 6], Du: [0.2, 2], Dv: [1, 10] } },
      { problem: models.brusselator.factory({ grid: { intervals: [4, 3] }, boundary: 'neumann' } as never), values: (p) => [p.a + 0.1, p.b / p.a], parameter: 'b', free: 'Dv', ranges: { a: [0.5, 3], b: [0.5, 6], Du: [0.2, 2], Dv: [1, 10] } },
      { problem: models['beam-foundation'].factory({ grid: { intervals: [9] }, ends: 'pinned' } as never), values: () => [0], parameter: 'kf', free: 'P', ranges: { P: [0, 60], kf: [0, 300] } },
    ];
    for (const c of cases) {
      fc.assert(
        fc.property(fc.array(fc.double({ min: 0, max: 1, noNaN: true }), { minLength: 4, maxLength: 4 }), fc.integer({ min: 1, max: 1e6 }), (t, seed) => {
          const p = draw(c.problem, c.ranges, t);
          const u = uniformStart(c.problem, c.values(p), p);
          expectAgreement(new BranchPointSystem(c.problem, p, c.parameter, c.free, uniformSubspace(c.problem, u, p)), u, p, seed);
        }),
        { numRuns: 8 },
      );
    }
  });
});

describe('Hopf system: linearisation against central differences, bordered solve against the linearisation', () => {
  const hopfCases: { name: string; problem: () => Problem; parameter: string; free: string; ranges: Record<string, [number, number]>; amp: number }[] = [
    { name: 'brusselator 1D neumann', problem: () => models.brusselator.factory({ grid: { intervals: [6] }, boundary: 'neumann' } as never), parameter: 'a', free: 'b', ranges: { a: [0.5, 3], b: [1, 8], Du: [0.5, 2], Dv: [0.5, 8] }, amp: 0.3 },
    { name: 'gray-scott 2D neumann', problem: () => models['gray-scott'].factory({ grid: { intervals: [3, 2] }, boundary: 'neumann', initial: 'pulse' } as never), parameter: 'k', free: 'F', ranges: { F: [0.01, 0.1], k: [0.01, 0.1], Du: [0.1, 1], Dv: [0.1, 1] }, amp: 0.2 },
    {
      name: 'expression model (finite-difference second derivatives)',
      problem: () => reactionDiffusion({ grid: { intervals: [5] }, fields: ['u', 'v'], parameters: { mu: 0.1, c: -1 }, reaction: { u: 'mu*u - 2*v + c*u*(u^2+v^2) + 0.1*sin(u*v)', v: '2*u + mu*v + c*v*(u^2+v^2) + u^2' }, diffusion: { u: 1, v: 0.5 }, boundary: 'neumann', initial: { u: 0.2, v: -0.1 } } as never),
      parameter: 'c',
      free: 'mu',
      ranges: { mu: [-1, 1], c: [-2, 2] },
      amp: 0.5,
    },
  ];
  for (const c of hopfCases) {
    it(c.name, () => {
      const problem = c.problem();
      fc.assert(
        fc.property(fc.array(fc.double({ min: 0, max: 1, noNaN: true }), { minLength: 4, maxLength: 4 }), fc.integer({ min: 1, max: 1e6 }), fc.double({ min: 0.2, max: 3, noNaN: true }), fc.boolean(), (t, seed, omega, atZero) => {
          const p = draw(problem, c.ranges, t);
          const u = problem.initialGuess(p);
          for (let i = 0; i < u.length; i++) u[i] += c.amp * Math.sin(seed * (i + 1));
          // any frequency (the system is defined off the curve too), and ω = 0 (the Bogdanov–Takens end)
          expectAgreement(new HopfSystem(problem, p, c.parameter, c.free, atZero ? 0 : omega, 0), u, p, seed);
        }),
        { numRuns: 10 },
      );
    });
  }
});
