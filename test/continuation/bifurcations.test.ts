import { describe, expect, test } from 'vitest';
import { runModel, runProblem, settings } from './collect.js';
import { models } from '../../discretisations/index.js';
import type { BranchPointEvent, FoldPoint } from '../../src/continuation/types.js';
import { analyseRefinement } from '../../src/refine/index.js';

/** Discrete eigenvalue of −d²/dx² with the standard 3-point stencil: (4/h²) sin²(nπh/2) (LeVeque, Finite Difference Methods for ODEs and PDEs, SIAM 2007, §2.10, from memory; the closed forms are checked against ml-matrix in test/discretisations/laplacian.test.ts). */
const mu = (n: number, h: number) => (4 / (h * h)) * Math.sin((n * Math.PI * h) / 2) ** 2;

function branchPoints(specials: { kind: string }[]): BranchPointEvent[] {
  return specials.filter((s): s is BranchPointEvent => s.kind === 'branch-point');
}

describe('2D Bratu on the unit square', () => {
  test('one fold, second order over 32, 64, 128 intervals, Richardson value within 2e-6 of 6.8081244', () => {
    const samples: { h: number; value: number }[] = [];
    for (const n of [32, 64, 128]) {
      const run = runModel('bratu', { grid: { intervals: [n, n] } }, { lambda: 1 }, settings({ parameter: 'lambda', bounds: [0, 10], step: { initial: 1, min: 1e-8, max: 1.5 }, stopWhen: [{ monitor: 'max', above: 2.5 }] }));
      const folds = run.specials.filter((s): s is FoldPoint => s.kind === 'fold');
      expect(folds).toHaveLength(1);
      expect(folds[0].located).toBe(true);
      samples.push({ h: 1 / n, value: folds[0].value });
    }
    const result = analyseRefinement(samples, { expectedOrder: 2 });
    expect(Math.abs(result.order - 2)).toBeLessThan(0.05);
    // 6.8081244: the continuum fold of 2D Bratu on the unit square, widely reported (from memory)
    expect(Math.abs(result.extrapolated - 6.8081244)).toBeLessThan(2e-6);
  });
});

describe('beam on a softening elastic foundation, pinned ends', () => {
  test('branch points from w = 0 at P_n = EI μ_n + kf/μ_n and a subcritical first buckled branch', () => {
    const intervals = 60;
    const h = 1 / intervals;
    const EI = 1;
    const kf = 100;
    const run = runModel('beam-foundation', { grid: { intervals: [intervals] }, ends: 'pinned' }, { P: 1, EI, kf, k3: 50 }, settings({ parameter: 'P', bounds: [0, 60], step: { initial: 1, min: 1e-8, max: 3 }, maxPoints: 80 }));
    const bps = branchPoints(run.specials.filter((s) => s.branch === 1));
    // Timoshenko & Gere, Theory of Elastic Stability: P_n = EI μ_n + kf/μ_n, μ_n = (nπ/L)²;
    // with the discrete μ_n = (4/h²) sin²(nπh/2) the standard stencil makes it exact.
    const expected = [1, 2].map((n) => EI * mu(n, h) + kf / mu(n, h));
    expect(bps).toHaveLength(2);
    for (let k = 0; k < 2; k++) expect(Math.abs(bps[k].value - expected[k])).toBeLessThan(1e-7 * expected[k]);
    expect(bps[0].type).toBe('pitchfork');
    // a softening foundation (k3 > 0): the buckled branch leaves towards lower loads
    expect(bps[0].criticality).toBe('subcritical');
    expect(bps[0].newBranchDirection).toBe('decrease');
    expect(bps[0].newBranches).toHaveLength(2);
    const child = run.branch(bps[0].newBranches[0]);
    expect(child[child.length - 1].parameter).toBeLessThan(bps[0].value);
  });

  test('with a stiffening foundation (k3 < 0) the same branch point is supercritical', () => {
    const run = runModel('beam-foundation', { grid: { intervals: [40] }, ends: 'pinned' }, { P: 1, kf: 100, k3: -50 }, settings({ parameter: 'P', bounds: [0, 30], step: { initial: 1, min: 1e-8, max: 3 }, maxPoints: 40, branchSwitching: { depth: 1 } }));
    const bp = branchPoints(run.specials)[0];
    expect(bp.type).toBe('pitchfork');
    expect(bp.criticality).toBe('supercritical');
  });
});

describe('Allen–Cahn (Chafee–Infante) u″ + λ(u − u³) = 0 on (0, 1), Dirichlet', () => {
  test('pitchforks from u = 0 at the discrete Laplacian eigenvalues, both halves followed, u ↦ −u symmetric', () => {
    const intervals = 40;
    const h = 1 / intervals;
    const run = runModel('allen-cahn', { grid: { intervals: [intervals] } }, { lambda: 1 }, settings({ parameter: 'lambda', bounds: [0, 100], step: { initial: 0.5, min: 1e-8, max: 2 }, maxPoints: 150, branchSwitching: { depth: 1 } }));
    const bps = branchPoints(run.specials.filter((s) => s.branch === 1));
    expect(bps).toHaveLength(3);
    for (let n = 1; n <= 3; n++) {
      // linearisation u″ + λu = 0: branch points where λ equals a discrete eigenvalue (exact for the stencil)
      expect(Math.abs(bps[n - 1].value - mu(n, h))).toBeLessThan(1e-8 * mu(n, h));
      expect(bps[n - 1].type).toBe('pitchfork');
      expect(bps[n - 1].criticality).toBe('supercritical');
      expect(bps[n - 1].newBranches).toHaveLength(2);
      const [a, b] = bps[n - 1].newBranches.map((id) => run.branch(id));
      expect(a.length).toBeGreaterThan(3);
      expect(a.length).toBe(b.length);
      for (let k = 0; k < a.length; k++) {
        expect(Math.abs(a[k].parameter - b[k].parameter)).toBeLessThan(1e-8 * (1 + a[k].parameter));
        for (let i = 0; i < a[k].u.length; i++) expect(Math.abs(a[k].u[i] + b[k].u[i])).toBeLessThan(1e-8);
      }
      // the two halves are different branches: they leave u = 0 in opposite directions
      expect(a[a.length - 1].monitors.max).toBeGreaterThan(0.1);
    }
  });
});

describe('Allen–Cahn: a pitchfork reached along its pair of symmetric branches', () => {
  // Traced from the one-signed state u₁ at λ = 50 towards smaller λ, the branch comes down to
  // u = 0 at the first discrete eigenvalue μ₁ = (4/h²) sin²(πh/2) (standard finite-difference
  // result) and goes on as −u₁: λ turns there, but the turn is the pitchfork (the u ↦ −u symmetry
  // of u″ + λ(u − u³)), not a fold. Its type and criticality must be those seen from u = 0
  // (the test above): supercritical, since u₁ exists for λ > μ₁ where u = 0 is unstable.
  test('one branch point, a supercritical pitchfork at μ₁, and no fold', () => {
    const intervals = 40;
    const h = 1 / intervals;
    const start = new Float64Array(intervals - 1);
    for (let i = 0; i < start.length; i++) start[i] = Math.sin((Math.PI * (i + 1)) / intervals);
    const problem = models['allen-cahn'].factory({ grid: { intervals: [intervals] } });
    const run = runProblem(problem, { lambda: 50 }, settings({ parameter: 'lambda', direction: 'decrease', bounds: [0, 50], step: { initial: 0.5, min: 1e-8, max: 2 }, maxPoints: 130, branchSwitching: { depth: 0 } }), { start });
    expect(run.points[0].monitors.max).toBeGreaterThan(0.5); // started on u₁, not on u = 0
    expect(run.specials.filter((s) => s.kind === 'fold')).toHaveLength(0);
    const bps = branchPoints(run.specials);
    expect(bps).toHaveLength(1);
    expect(Math.abs(bps[0].value - mu(1, h))).toBeLessThan(1e-8 * mu(1, h));
    expect(bps[0].type).toBe('pitchfork');
    expect(bps[0].criticality).toBe('supercritical');
    // and the branch went on past it as −u₁: λ rises again
    const last = run.points[run.points.length - 1];
    expect(last.parameter).toBeGreaterThan(bps[0].value);
    expect(last.monitors.max).toBe(0);
    expect(last.monitors.min).toBeLessThan(-0.1);
  });
});

/** Complete elliptic integral of the first kind by the arithmetic–geometric mean: K(k) = π / (2 AGM(1, √(1 − k²))). */
function ellipticK(k: number): number {
  let a = 1;
  let b = Math.sqrt(1 - k * k);
  for (let i = 0; i < 40; i++) [a, b] = [(a + b) / 2, Math.sqrt(a * b)];
  return Math.PI / (2 * a);
}

describe('Euler elastica, pinned–pinned', () => {
  test('branch points at the discrete λ_n ≈ n²π² and the mode-1 branch λ = (2K(k))², k = sin(α/2), to O(h²)', () => {
    const maxErr: number[] = [];
    for (const intervals of [40, 80]) {
      const h = 1 / intervals;
      const run = runModel('elastica', { grid: { intervals: [intervals] } }, { lambda: 1 }, settings({ parameter: 'lambda', bounds: [0, 45], step: { initial: 0.5, min: 1e-8, max: 1 }, maxPoints: 80, branchSwitching: { depth: 1 }, stopWhen: [{ monitor: 'end-rotation', above: 2 }, { monitor: 'end-rotation', below: -2 }] }));
      const bps = branchPoints(run.specials.filter((s) => s.branch === 1));
      expect(bps.length).toBe(2);
      // Euler: λ_n = n²π²; the linearisation θ″ + λθ = r with ∫θ = 0 and θ′ = 0 at the ends has the
      // discrete Neumann eigenvalues (4/h²) sin²(nπh/2) (discrete cosine modes; the closed forms are checked against ml-matrix in test/discretisations/laplacian.test.ts) as its exact values
      for (let n = 1; n <= 2; n++) {
        expect(Math.abs(bps[n - 1].value - mu(n, h))).toBeLessThan(1e-8 * mu(n, h));
        expect(Math.abs(bps[n - 1].value - n * n * Math.PI * Math.PI)).toBeLessThan(0.01 * n * n * Math.PI * Math.PI);
      }
      expect(bps[0].criticality).toBe('supercritical');
      // mode-1 post-buckling (Timoshenko & Gere, Theory of Elastic Stability): λ = (2K(k))², k = sin(α/2), α = θ(0)
      const mode1 = run.branch(bps[0].newBranches[0]).filter((p) => Math.abs(p.monitors['end-rotation']) > 0.3 && Math.abs(p.monitors['end-rotation']) < 2);
      expect(mode1.length).toBeGreaterThan(4);
      let worst = 0;
      for (const p of mode1) {
        const alpha = Math.abs(p.monitors['end-rotation']);
        const exact = (2 * ellipticK(Math.sin(alpha / 2))) ** 2;
        worst = Math.max(worst, Math.abs(p.parameter - exact) / exact);
      }
      maxErr.push(worst);
    }
    expect(maxErr[1]).toBeLessThan(2e-3);
    // second order: halving h divides the error by about 4 (points differ between grids, hence the margin)
    expect(maxErr[0] / maxErr[1]).toBeGreaterThan(3);
  });
});
