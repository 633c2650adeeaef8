/**
 * The first Lyapunov coefficient against a closed form: a Hopf normal form written as an
 * expression model (two fields u, v, diffusion, no-flux walls):
 *
 *     u_t = Du Δu + μu − ωv + A u² + B uv + c u(u² + v²)
 *     v_t = Dv Δv + ωu + μv + C v² + E u² + c v(u² + v²)
 *
 * The uniform state 0 has a Hopf point at μ = 0 with frequency ω (the uniform mode; the others
 * are damped by diffusion). For the planar system ẋ = −ωy + f, ẏ = ωx + g the coefficient of the
 * polar normal form ṙ = a r³ is (Guckenheimer & Holmes, *Nonlinear Oscillations, Dynamical
 * Systems, and Bifurcations of Vector Fields*, Springer 1983, (3.4.11))
 *
 *     a = [f_xxx + f_xyy + g_xxy + g_yyy]/16 + [f_xy(f_xx + f_yy) − g_xy(g_xx + g_yy) − f_xx g_xx + f_yy g_yy]/(16ω),
 *
 * here a = c + A(B − 2E)/(8ω). With the critical eigenvector normalised to ⟨q, q⟩ = 1 (the
 * complex amplitude z of x = zq + z̄q̄ then has r = √2|z|), the first Lyapunov coefficient of
 * Kuznetsov's normal form ż = iωz + c₁z|z|², l₁ = Re c₁/ω, is 2a/ω; on the grid, with the
 * weighted inner product, q is uniform with Σ wᵢ|qᵢ|² = 1, which divides l₁ by the domain's
 * measure |Ω|:  l₁ = 2a/(ω|Ω|). Its sign is that of a; the Bautin point (a = 0) is at
 * c = −A(B − 2E)/(8ω).
 */
import { describe, expect, test } from 'vitest';
import { reactionDiffusion } from '../../../discretisations/expression/reaction-diffusion.js';
import { hopfCriticality } from '../../../src/continuation/hopf/criticality.js';
import type { HopfPoint } from '../../../src/continuation/types.js';
import type { CurveSpecialPoint } from '../../../src/continuation/curves/types.js';
import { type Problem, resolveParameters } from '../../../src/problem/problem.js';
import { runProblem, settings } from '../collect.js';
import { curveSettings, runCurve, uniformStart } from '../curves/helpers.js';
import { cx, planarLyapunov, type Vec } from './planar.js';

const base = { mu: 0, omega: 2, c: -1, A: 1, B: 1.5, C: 0.3, E: -0.5 };
type Coefficients = typeof base;

function normalForm(grid: { intervals: number[]; length?: number[] }, p: Coefficients = base): Problem {
  return reactionDiffusion({
    grid,
    fields: ['u', 'v'],
    parameters: p,
    reaction: { u: 'mu*u - omega*v + A*u^2 + B*u*v + c*u*(u^2+v^2)', v: 'omega*u + mu*v + C*v^2 + E*u^2 + c*v*(u^2+v^2)' },
    diffusion: { u: 1, v: 0.5 },
    boundary: 'neumann',
    initial: { u: 0, v: 0 },
  } as never);
}

/** The same problem without its exact second derivatives: every derivative by differences. */
function withoutExactDerivatives(problem: Problem): Problem {
  const { secondDerivative: _s, mixedDerivative: _m, ...rest } = problem as Problem & Record<string, unknown>;
  return Object.assign(Object.create(Object.getPrototypeOf(problem)), rest) as Problem;
}

/** Guckenheimer & Holmes (3.4.11) for this normal form. */
const ghCoefficient = (p: Coefficients): number => p.c + (p.A * (p.B - 2 * p.E)) / (8 * p.omega);
const domain = (grid: { intervals: number[]; length?: number[] }): number => grid.intervals.reduce((m, _n, i) => m * (grid.length?.[i] ?? 1), 1);

const grids = [{ intervals: [6], length: [2] }, { intervals: [4, 3], length: [1, 1.5] }];

describe('first Lyapunov coefficient of a Hopf normal form (expression model, no-flux walls)', () => {
  for (const grid of grids) {
    test(`${grid.intervals.length}D: l₁ = 2a/(ω|Ω|) to 1e-6 with exact and with differenced derivatives, its sign, and the planar formula agrees`, () => {
      for (const c of [-1, 0.4]) {
        const p = { ...base, c };
        const problem = normalForm(grid, p);
        const params = resolveParameters(problem, p);
        const expected = (2 * ghCoefficient(p)) / (p.omega * domain(grid));
        for (const prob of [problem, withoutExactDerivatives(problem)]) {
          const r = hopfCriticality(prob, new Float64Array(prob.size), params, p.omega);
          // Guckenheimer & Holmes 1983, (3.4.11), with the normalisation of the header
          expect(Math.abs(r.lyapunov - expected)).toBeLessThan(1e-6);
          expect(r.criticality).toBe(ghCoefficient(p) < 0 ? 'supercritical' : 'subcritical');
          expect(Math.abs(r.eigenvalue!.im - p.omega)).toBeLessThan(1e-12);
        }
        // the dense planar formula of the test helper (the same normalisation) agrees
        const Bf = (x: Vec, y: Vec): Vec => {
          const [xu, xv] = x;
          const [yu, yv] = y;
          const { add, mul, re } = cx;
          return [
            add(add(mul(re(2 * p.A), mul(xu, yu)), mul(re(p.B), add(mul(xu, yv), mul(xv, yu)))), re(0)),
            add(mul(re(2 * p.C), mul(xv, yv)), mul(re(2 * p.E), mul(xu, yu))),
          ];
        };
        const Cf = (x: Vec, y: Vec, z: Vec): Vec => {
          // c·(u² + v²)·(u, v): C(x, y, z) = 2c[(x·y) z + (x·z) y + (y·z) x] with the bilinear dot
          const { add, mul, re } = cx;
          const dot = (a: Vec, b: Vec) => add(mul(a[0], b[0]), mul(a[1], b[1]));
          const term = (s: ReturnType<typeof dot>, w: Vec): Vec => [mul(s, w[0]), mul(s, w[1])];
          const sum = (a: Vec, b: Vec): Vec => [add(a[0], b[0]), add(a[1], b[1])];
          const t = sum(sum(term(dot(x, y), z), term(dot(x, z), y)), term(dot(y, z), x));
          return [mul(re(2 * p.c), t[0]), mul(re(2 * p.c), t[1])];
        };
        const planar = planarLyapunov(
          [
            [0, -p.omega],
            [p.omega, 0],
          ],
          Bf,
          Cf,
        );
        expect(Math.abs(planar.l1 - (2 * ghCoefficient(p)) / p.omega)).toBeLessThan(1e-12);
      }
    });
  }

  test('one-parameter runs record l₁ and the criticality at the located Hopf point', () => {
    for (const c of [-1, 0.4]) {
      const p = { ...base, c, mu: -0.3 };
      const grid = grids[0];
      const problem = normalForm(grid, p);
      const run = runProblem(problem, p, settings({ parameter: 'mu', bounds: [-0.3, 0.3], step: { initial: 0.05, min: 1e-8, max: 0.1 }, stability: { eigenvalues: 4 } }));
      const hopf = run.specials.filter((s): s is HopfPoint => s.kind === 'hopf');
      expect(hopf).toHaveLength(1);
      expect(Math.abs(hopf[0].value)).toBeLessThan(1e-8);
      // Guckenheimer & Holmes 1983 (3.4.11), normalised as in the header
      expect(Math.abs(hopf[0].lyapunov! - (2 * ghCoefficient(p)) / (p.omega * domain(grid)))).toBeLessThan(1e-6);
      expect(hopf[0].criticality).toBe(c < 0 ? 'supercritical' : 'subcritical');
    }
  });

  test('the Hopf curve in (c, μ) is μ = 0, l₁ changes sign at the Bautin point c = −A(B − 2E)/(8ω) to 1e-6, and nothing else is reported', () => {
    const grid = grids[0];
    const problem = normalForm(grid);
    const run = runCurve(
      problem,
      base,
      curveSettings({ follow: 'hopf', parameter: 'c', free: 'mu', bounds: [-1, 1], eigenvalues: 4, step: { initial: 0.05, min: 1e-9, max: 0.2 } }),
      { start: uniformStart(problem, [0, 0], base), atPoint: true, frequency: base.omega },
    );
    expect(run.ends.map((e) => e.reason)).toEqual(['parameter-bound']);
    for (const q of run.points) {
      expect(Math.abs(q.free)).toBeLessThan(1e-9);
      expect(Math.abs(q.tests.frequency - base.omega)).toBeLessThan(1e-9);
      const expected = (2 * ghCoefficient({ ...base, c: q.parameter })) / (base.omega * domain(grid));
      expect(Math.abs(q.tests['first-lyapunov-coefficient'] - expected)).toBeLessThan(1e-6);
    }
    const specials = run.specials.filter((s): s is CurveSpecialPoint => s.kind !== 'end');
    expect(specials.map((s) => s.kind)).toEqual(['bautin']);
    expect(specials[0].located).toBe(true);
    // Guckenheimer & Holmes 1983 (3.4.11): a = 0
    expect(Math.abs(specials[0].value + (base.A * (base.B - 2 * base.E)) / (8 * base.omega))).toBeLessThan(1e-6);
    expect(Math.abs(specials[0].tests['first-lyapunov-coefficient'])).toBeLessThan(1e-6);
  });
});
