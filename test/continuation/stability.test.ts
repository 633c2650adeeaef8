import { describe, expect, test } from 'vitest';
import { runModel, settings } from './collect.js';
import type { BranchPointEvent, FoldPoint, HopfPoint } from '../../src/continuation/types.js';

/** Discrete eigenvalue of −d²/dx² for mode k on a grid of spacing h over length L (LeVeque, Finite Difference Methods for ODEs and PDEs, SIAM 2007, §2.10, from memory; the closed forms are checked against ml-matrix in test/discretisations/laplacian.test.ts). */
const q = (k: number, h: number, length: number) => (4 / (h * h)) * Math.sin((k * Math.PI * h) / (2 * length)) ** 2;

describe('stability along branches', () => {
  test('1D Bratu: the lower branch is stable, the upper has exactly one positive eigenvalue, and the change happens at the fold', () => {
    const run = runModel('bratu', { grid: { intervals: [60] } }, { lambda: 0.5 }, settings({ parameter: 'lambda', bounds: [0, 10], step: { initial: 0.3, min: 1e-8, max: 0.5 }, stopWhen: [{ monitor: 'max', above: 4 }], stability: { eigenvalues: 4 } }));
    const fold = run.specials.find((s): s is FoldPoint => s.kind === 'fold')!;
    expect(fold.located).toBe(true);
    for (const p of run.points) {
      expect(p.stability?.complete).toBe(true);
      const beforeFold = p.arclength < fold.arclength;
      expect(p.stability?.stable).toBe(beforeFold);
      expect(p.stability?.unstableCount).toBe(beforeFold ? 0 : 1);
      if (!beforeFold) expect(p.stability?.leadingImag).toBe(0);
    }
  });

  test('Brusselator with equal diffusion: the uniform state loses stability at a Hopf point b = 1 + a² with ω = a', () => {
    const a = 2;
    const run = runModel('brusselator', { grid: { intervals: [20] } }, { a, b: 3, Du: 1, Dv: 1 }, settings({ parameter: 'b', bounds: [0, 7], step: { initial: 0.4, min: 1e-8, max: 0.5 }, stability: { eigenvalues: 4 } }));
    const hopfs = run.specials.filter((s): s is HopfPoint => s.kind === 'hopf');
    expect(hopfs).toHaveLength(1);
    // Prigogine & Lefever 1968: Hopf of the uniform state at b = 1 + a², frequency ω = a
    expect(hopfs[0].located).toBe(true);
    expect(Math.abs(hopfs[0].value - (1 + a * a))).toBeLessThan(1e-8);
    expect(Math.abs(hopfs[0].frequency - a)).toBeLessThan(1e-8);
    expect(hopfs[0].crossing).toBe('destabilising');
    for (const p of run.points) {
      const expectedUnstable = p.parameter > 1 + a * a;
      expect(p.stability?.stable).toBe(!expectedUnstable);
      if (expectedUnstable) expect(p.stability?.unstableComplex).toBe(2);
    }
    // no determinant sign change: a Hopf point is not a branch point
    expect(run.specials.filter((s) => s.kind === 'branch-point')).toHaveLength(0);
  });

  test('Brusselator with Dv/Du large and no-flux ends: a real (Turing-type) crossing first, at the discrete dispersion relation', () => {
    const a = 2;
    const Du = 1;
    const Dv = 8;
    const length = 20;
    const intervals = 40;
    const h = length / intervals;
    // mode k of the uniform state: det = 0 at b_k = (1 + Du q_k)(a² + Dv q_k)/(Dv q_k); the smallest over k ≥ 1 is critical
    const bk = Array.from({ length: intervals }, (_, i) => i + 1).map((k) => ((1 + Du * q(k, h, length)) * (a * a + Dv * q(k, h, length))) / (Dv * q(k, h, length)));
    const bCritical = Math.min(...bk);
    // continuum limit (1 + a√(Du/Dv))² (Nicolis & Prigogine 1977): the discrete value lies at or above it
    expect(bCritical).toBeGreaterThanOrEqual((1 + a * Math.sqrt(Du / Dv)) ** 2 - 1e-12);
    expect(bCritical - (1 + a * Math.sqrt(Du / Dv)) ** 2).toBeLessThan(0.05);
    const run = runModel('brusselator', { grid: { intervals: [intervals], length: [length] } }, { a, b: 2, Du, Dv }, settings({ parameter: 'b', bounds: [0, bCritical + 0.3], step: { initial: 0.2, min: 1e-8, max: 0.3 }, stability: { eigenvalues: 4 }, branchSwitching: { depth: 0 } }));
    const bps = run.specials.filter((s): s is BranchPointEvent => s.kind === 'branch-point' && s.branch === 1);
    // every discrete mode crossing below the bound is found, each a simple real crossing, the first at bCritical
    const expected = bk.filter((b) => b < bCritical + 0.3).sort((x, y) => x - y);
    expect(bps.map((b) => b.multiplicity)).toEqual(expected.map(() => 1));
    bps.forEach((b, i) => expect(Math.abs(b.value - expected[i])).toBeLessThan(1e-7 * expected[i]));
    expect(run.specials.filter((s) => s.kind === 'hopf')).toHaveLength(0);
    for (const p of run.branch(1)) {
      expect(p.stability?.stable).toBe(p.parameter < bCritical);
      expect(p.stability?.unstableCount).toBe(Math.min(4, expected.filter((b) => b < p.parameter).length));
      if (p.parameter > bCritical) expect(p.stability?.leadingImag).toBe(0);
    }
  });

  test('elastica (singular mass, end constraint): straight strut stable below π², the first buckled branch stable above it', () => {
    const run = runModel('elastica', { grid: { intervals: [40] } }, { lambda: 2 }, settings({ parameter: 'lambda', bounds: [0, 16], step: { initial: 0.5, min: 1e-8, max: 1 }, maxPoints: 60, branchSwitching: { depth: 1 }, stability: { eigenvalues: 3 } }));
    const bp = run.specials.find((s): s is BranchPointEvent => s.kind === 'branch-point' && s.branch === 1)!;
    expect(Math.abs(bp.value - Math.PI ** 2)).toBeLessThan(0.01 * Math.PI ** 2); // Euler: λ = π²
    for (const p of run.branch(1)) {
      if (Math.abs(p.parameter - bp.value) < 1e-6) continue;
      expect(p.stability?.stable).toBe(p.parameter < bp.value);
    }
    expect(bp.criticality).toBe('supercritical');
    for (const id of bp.newBranches) {
      const buckled = run.branch(id).slice(1); // point 0 is the branch point itself
      expect(buckled.length).toBeGreaterThan(3);
      for (const p of buckled) expect(p.stability?.stable).toBe(true);
    }
  });

  test('two real eigenvalues crossing together (2D square, symmetric modes) are reported as a branch point of multiplicity two', () => {
    const intervals = 12;
    const h = 1 / intervals;
    const run = runModel('allen-cahn', { grid: { intervals: [intervals, intervals] } }, { lambda: 1 }, settings({ parameter: 'lambda', bounds: [0, 60], step: { initial: 1, min: 1e-8, max: 3 }, maxPoints: 60, branchSwitching: { depth: 0 }, stability: { eigenvalues: 4 } }));
    const q1 = q(1, h, 1);
    const q2 = q(2, h, 1);
    const bps = run.specials.filter((s): s is BranchPointEvent => s.kind === 'branch-point' && s.branch === 1);
    // u = 0 linearised: Δu + λu, eigenvalues λ − (q_i + q_j); modes (1,2) and (2,1) cross together at λ = q1 + q2
    const simple = bps.find((b) => Math.abs(b.value - 2 * q1) < 1e-6 * q1);
    expect(simple?.multiplicity).toBe(1);
    const double = bps.find((b) => b.multiplicity === 2);
    expect(double).toBeDefined();
    expect(double!.located).toBe(true);
    expect(Math.abs(double!.value - (q1 + q2))).toBeLessThan(1e-6 * (q1 + q2));
  });
});
