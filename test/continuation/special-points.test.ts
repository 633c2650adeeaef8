/**
 * Special points past the first bifurcation (issue 11): double crossings located on the critical
 * eigenvalue, no branch point invented from real eigenvalues merging into a complex pair, branch
 * types that do not depend on the grid, and every change of the unstable count explained.
 */
import { describe, expect, test } from 'vitest';
import { models } from '../../discretisations/index.js';
import { branchShape } from '../../src/continuation/engine.js';
import type { BranchPointEvent, HopfPoint, SpecialPoint } from '../../src/continuation/types.js';
import { runModel, runProblem, settings } from './collect.js';

/** Discrete Dirichlet Laplacian eigenvalue per direction, (4/h²) sin²(kπh/2) (the eigenvectors are sin(kπx): from memory, any numerical-analysis text). */
const q = (k: number, h: number) => (4 / (h * h)) * Math.sin((k * Math.PI * h) / 2) ** 2;

const branchPoints = (s: SpecialPoint[]) => s.filter((p): p is BranchPointEvent => p.kind === 'branch-point');

describe('branch points of multiplicity two', () => {
  test('2D square, Allen–Cahn u = 0: modes (1,2) and (2,1) cross together at λ = q1 + q2, located to 1e-10', () => {
    const intervals = 12;
    const h = 1 / intervals;
    const run = runModel('allen-cahn', { grid: { intervals: [intervals, intervals] } }, { lambda: 1 }, settings({ parameter: 'lambda', bounds: [0, 60], step: { initial: 1, min: 1e-8, max: 3 }, maxPoints: 60, branchSwitching: { depth: 0 }, stability: { eigenvalues: 4 } }));
    const bps = branchPoints(run.specials);
    // u = 0 linearised: Δu + λu, eigenvalues λ − (q_i + q_j) (exact discrete formula)
    const exactDouble = q(1, h) + q(2, h);
    const double = bps.filter((b) => b.multiplicity === 2);
    expect(double).toHaveLength(1);
    expect(double[0].located).toBe(true);
    expect(Math.abs(double[0].value - exactDouble)).toBeLessThan(1e-10 * exactDouble);
    // the simple one before it (mode (1,1)) as precisely
    const exactSimple = 2 * q(1, h);
    const simple = bps.filter((b) => b.multiplicity === 1);
    expect(simple).toHaveLength(1);
    expect(Math.abs(simple[0].value - exactSimple)).toBeLessThan(1e-10 * exactSimple);
    // every count change explained (no point carries an unexplained change)
    expect(run.points.filter((p) => p.unexplained)).toEqual([]);
  });
});

describe('Gray–Scott uniform states: two positive real eigenvalues merging into a pair is no branch point', () => {
  // the non-trivial uniform state: u v = F + k and F(1 − u) = u v², so (F + k) v² − F v + F(F + k) = 0
  const k = 0.05;
  const uniform = (F: number) => {
    const v = (F + Math.sqrt(F * F - 4 * F * (F + k) ** 2)) / (2 * (F + k));
    return { u: (F + k) / v, v };
  };
  // fold where the discriminant vanishes: F = 4(F + k)², the smaller root (exact)
  const foldF = (1 - 4 * 2 * k - Math.sqrt((1 - 8 * k) ** 2 - 64 * k * k)) / 8;
  // Hopf of the uniform mode where the trace k − v² vanishes: F² + (2k − √k)F + k² = 0, smaller root (exact)
  const hopfF = (Math.sqrt(k) - 2 * k - Math.sqrt((Math.sqrt(k) - 2 * k) ** 2 - 4 * k * k)) / 2;

  for (const boundary of ['neumann', 'periodic'] as const) {
    test(`${boundary} walls, 16 intervals: a Hopf point and a fold at their exact values, no branch point, every count change explained`, () => {
      const problem = models['gray-scott'].factory({ grid: { intervals: [16] }, boundary } as never);
      const nodes = boundary === 'periodic' ? 16 : 17;
      const s = uniform(0.03);
      const data = new Float64Array(2 * nodes);
      data.fill(s.u, 0, nodes);
      data.fill(s.v, nodes);
      const params = { F: 0.03, k, Du: 0.01, Dv: 0.01 };
      const start = problem.fromNodeArray([2, nodes], data, params);
      const run = runProblem(problem, params, settings({ parameter: 'F', bounds: [0.001, 0.06], direction: 'decrease', maxPoints: 200, stability: { eigenvalues: 6 } }), { start });
      expect(branchPoints(run.specials)).toEqual([]);
      const folds = run.specials.filter((p) => p.kind === 'fold');
      expect(folds).toHaveLength(1);
      expect(Math.abs(folds[0].value - foldF)).toBeLessThan(1e-9);
      const hopf = run.specials.filter((p): p is HopfPoint => p.kind === 'hopf');
      expect(hopf).toHaveLength(1);
      expect(Math.abs(hopf[0].value - hopfF)).toBeLessThan(1e-7);
      // past the fold, near F = 0.0193, two positive real eigenvalues meet and leave as a pair
      // (trace² = 4 det): the count stays 2, nothing is reported there
      expect(run.points.filter((p) => p.unexplained)).toEqual([]);
      expect(run.warnings).toEqual([]);
    });
  }
});

describe('branch types do not depend on the grid', () => {
  test('elastica: the secondary branch point on the mode-1 branch (where the ends touch) is a pitchfork at 80 and at 160 intervals', () => {
    const values: number[] = [];
    for (const intervals of [80, 160]) {
      const run = runModel('elastica', { grid: { intervals: [intervals] } }, { lambda: 1 }, settings({ parameter: 'lambda', bounds: [0, 23], step: { initial: 0.5, min: 1e-8, max: 1 }, maxPoints: 80, branchSwitching: { depth: 1 }, stability: { eigenvalues: 3 } }));
      const secondary = branchPoints(run.specials).filter((b) => b.branch !== 1);
      // both halves of the mode-1 branch (θ and −θ) meet it; the branch through it is symmetric
      expect(secondary).toHaveLength(2);
      for (const b of secondary) {
        expect(b.type).toBe('pitchfork');
        expect(b.criticality).toBe('subcritical');
        values.push(b.value);
      }
      expect(run.points.filter((p) => p.unexplained)).toEqual([]);
    }
    // the same point on both grids, to O(h²) (a difference of about 3e-3 from 80 to 160 intervals)
    expect(Math.abs(values[0] - values[2])).toBeLessThan(1e-2);
  });

  test('the shape rule compares slope and curvature of λ along the new branch, not raw offsets', () => {
    // λ − λ* = α s + β s² sampled at s = h and −h: pitchfork when |α| ≤ 0.05 |β| h
    const offsets = (alpha: number, beta: number, hp: number, hm: number) => [alpha * hp + beta * hp * hp, -alpha * hm + beta * hm * hm];
    for (const scale of [1e-6, 1, 1e6]) {
      const [a, c] = offsets(0, 2 * scale, 0.3, 0.15);
      expect(branchShape(a, 0.3, c, 0.15, 1e-12)).toBe('pitchfork');
      const [a2, c2] = offsets(0.01 * scale, 2 * scale, 0.3, 0.3);
      expect(branchShape(a2, 0.3, c2, 0.3, 1e-12)).toBe('pitchfork');
      const [a3, c3] = offsets(1 * scale, 0.1 * scale, 0.3, 0.15);
      expect(branchShape(a3, 0.3, c3, 0.15, 1e-12)).toBe('transcritical');
      // crosses λ* and turns back soon: still transcritical (both offsets on one side)
      const [a4, c4] = offsets(0.5 * scale, 2 * scale, 0.3, 0.3);
      expect(a4 * c4).toBeGreaterThan(0);
      expect(branchShape(a4, 0.3, c4, 0.3, 1e-12)).toBe('transcritical');
    }
    expect(branchShape(1e-14, 0.3, -1e-14, 0.3, 1e-12)).toBeUndefined();
  });
});
