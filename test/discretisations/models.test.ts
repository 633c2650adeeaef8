/**
 * Built-in reaction–diffusion models at their uniform states against linear-stability formulas:
 *  - allen-cahn (Chafee–Infante), u = 0 with u = 0 on the walls: eigenvalues λ − μ_k, so the
 *    pitchforks sit at λ = μ_k, the discrete Dirichlet Laplacian eigenvalues (standard linear
 *    analysis; μ_k → k²π²);
 *  - brusselator, uniform state (a, b/a): per Fourier mode q² the 2×2 matrix
 *    [[b − 1 − Du q², a²], [−b, −a² − Dv q²]]; Hopf of the uniform mode at b = 1 + a²
 *    (Prigogine & Lefever 1968);
 *  - gray-scott, uniform state (1, 0): eigenvalues −F − Du q² and −(F + k) − Dv q².
 * Here q² runs over the discrete periodic Laplacian eigenvalues (4/h²) sin²(jπ/N).
 */
import { describe, expect, it } from 'vitest';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { models } from '../../discretisations/index.js';
import { resolveParameters } from '../../src/problem/problem.js';
import { denseJacobian, residualOf } from './helpers.js';

function spectrum(m: number[][]): { re: number; im: number }[] {
  const e = new EigenvalueDecomposition(new Matrix(m));
  return e.realEigenvalues.map((re, i) => ({ re, im: e.imaginaryEigenvalues[i] }));
}

function sortC(a: { re: number; im: number }[]): { re: number; im: number }[] {
  return a.slice().sort((x, y) => x.re - y.re || x.im - y.im);
}

function expectSameSpectrum(got: { re: number; im: number }[], want: { re: number; im: number }[], tol: number): void {
  expect(got.length).toBe(want.length);
  // match greedily (eigenvalues may come in any order)
  const left = want.slice();
  for (const g of got) {
    let best = 0;
    let bestD = Infinity;
    left.forEach((w, i) => {
      const d = Math.hypot(g.re - w.re, g.im - w.im);
      if (d < bestD) {
        bestD = d;
        best = i;
      }
    });
    expect(bestD).toBeLessThan(tol);
    left.splice(best, 1);
  }
}

const q2periodic = (N: number, L: number) => Array.from({ length: N }, (_, j) => (4 / (L / N) ** 2) * Math.sin((j * Math.PI) / N) ** 2);

describe('uniform states and their linear stability', () => {
  it('allen-cahn: eigenvalues at u = 0 are λ − μ_k (pitchforks at the discrete Dirichlet eigenvalues)', () => {
    const N = 16;
    const pr = models['allen-cahn'].factory({ grid: { intervals: [N] } });
    const lambda = 30;
    const got = spectrum(denseJacobian(pr, new Float64Array(pr.size), { lambda }));
    const want = Array.from({ length: N - 1 }, (_, k) => ({ re: lambda - (4 * N * N) * Math.sin(((k + 1) * Math.PI) / (2 * N)) ** 2, im: 0 }));
    expectSameSpectrum(got, want, 1e-9 * 4 * N * N);
  });

  it('brusselator: (a, b/a) is a steady state; spectrum per mode; Hopf at b = 1 + a²', () => {
    const N = 8;
    const L = 3;
    const pr = models.brusselator.factory({ grid: { intervals: [N], length: [L] }, boundary: 'periodic' });
    const a = 1.5;
    for (const b of [1.2, 1 + a * a]) {
      const p = resolveParameters(pr, { a, b, Du: 0.2, Dv: 1.1 });
      const u = pr.initialGuess(p);
      expect(Math.max(...residualOf(pr, u, p).map(Math.abs))).toBeLessThan(1e-14);
      const want: { re: number; im: number }[] = [];
      for (const q2 of q2periodic(N, L)) {
        const m11 = b - 1 - 0.2 * q2;
        const m12 = a * a;
        const m21 = -b;
        const m22 = -a * a - 1.1 * q2;
        const tr = m11 + m22;
        const det = m11 * m22 - m12 * m21;
        const disc = tr * tr - 4 * det;
        if (disc >= 0) want.push({ re: (tr + Math.sqrt(disc)) / 2, im: 0 }, { re: (tr - Math.sqrt(disc)) / 2, im: 0 });
        else want.push({ re: tr / 2, im: Math.sqrt(-disc) / 2 }, { re: tr / 2, im: -Math.sqrt(-disc) / 2 });
      }
      const got = spectrum(denseJacobian(pr, u, p));
      expectSameSpectrum(got, want, 1e-9);
      if (b === 1 + a * a) {
        // Hopf of the uniform state at b = 1 + a², ω = a (Prigogine & Lefever 1968):
        // the uniform mode's pair sits on the imaginary axis at ±i a
        const crit = got.filter((e) => Math.abs(e.re) < 1e-12);
        expect(crit.map((e) => Math.abs(e.im))).toEqual([expect.closeTo(a, 10), expect.closeTo(a, 10)]);
      }
    }
  });

  it('gray-scott: (1, 0) is a steady state with eigenvalues −F − Du q², −(F + k) − Dv q²', () => {
    const N = 6;
    const pr = models['gray-scott'].factory({ grid: { intervals: [N, N], length: [1, 1] } });
    const p = { F: 0.03, k: 0.05, Du: 0.002, Dv: 0.001 };
    const u = pr.initialGuess(p);
    expect(Math.max(...residualOf(pr, u, p).map(Math.abs))).toBe(0);
    const q1 = q2periodic(N, 1);
    const want: { re: number; im: number }[] = [];
    for (const qa of q1) for (const qb of q1) want.push({ re: -p.F - p.Du * (qa + qb), im: 0 }, { re: -(p.F + p.k) - p.Dv * (qa + qb), im: 0 });
    expectSameSpectrum(sortC(spectrum(denseJacobian(pr, u, p))), sortC(want), 1e-10);
  });
});

describe('monitors and descriptions', () => {
  it('per-field monitors for two-field models, plain names for one field', () => {
    const gs = models['gray-scott'].factory({ grid: { intervals: [10] }, initial: 'pulse' });
    expect(gs.monitors.map((m) => m.name)).toEqual(['max:u', 'min:u', 'l2-norm:u', 'max:v', 'min:v', 'l2-norm:v']);
    const p = resolveParameters(gs);
    const u = gs.initialGuess(p);
    const val = (name: string) => gs.monitors.find((m) => m.name === name)!.evaluate(u, p);
    expect(val('max:u')).toBe(1);
    expect(val('min:v')).toBeGreaterThanOrEqual(0);
    expect(val('max:v')).toBeCloseTo(0.25, 10); // the pulse peaks at the centre node
    // l2-norm of u = 1 − 0.5 b over a unit periodic domain: close to 1, less than 1
    expect(val('l2-norm:u')).toBeLessThan(1);
    expect(val('l2-norm:u')).toBeGreaterThan(0.9);
    const b = models.bratu.factory({ grid: { intervals: [6, 6] } });
    expect(b.monitors.map((m) => m.name)).toEqual(['max', 'min', 'l2-norm', 'centre']);
    const beam = models['beam-foundation'].factory({ grid: { intervals: [10] } });
    expect(beam.monitors.map((m) => m.name)).toContain('centre');
    const el = models.elastica.factory({ grid: { intervals: [10] } });
    expect(el.monitors.map((m) => m.name)).toEqual(['max', 'min', 'l2-norm', 'end-rotation', 'centre', 'end-shortening', 'end-reaction']);
  });

  it('describe() gives fields, axes, layout, and cautions where results bear on safety', () => {
    const d = models['gray-scott'].factory({ grid: { intervals: [8, 4], length: [2, 1] } }).describe();
    expect(d.fields).toEqual(['u', 'v']);
    expect(d.axes.map((a) => [a.name, a.intervals, a.nodes, a.h])).toEqual([
      ['x', 8, 8, 0.25],
      ['y', 4, 4, 0.25],
    ]);
    expect(d.layout).toMatch(/interleaved/);
    expect(d.caution).toBeUndefined();
    for (const id of ['bratu', 'elastica', 'beam-foundation']) {
      expect(models[id].caution).toMatch(/licensed/);
      expect(models[id].factory({ grid: { intervals: [8] } }).describe().caution).toBe(models[id].caution);
    }
  });
});
