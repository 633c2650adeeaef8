/**
 * The Brusselator with Du = Dv: diffusion cannot destabilise the uniform state (a, b/a), which
 * loses stability at the Hopf point b = 1 + a² to oscillations of frequency ω = a at onset, so the
 * period tends to 2π/a (Prigogine & Lefever 1968; at b = 1 + a² the Jacobian has trace 0 and
 * determinant a²). Past it the integration must be reported oscillating, with a period that moves
 * to 2π/a as b comes down to 1 + a²; before it the uniform state is reached.
 */
import { describe, expect, it } from 'vitest';
import { initialStateBuilder, models } from '../../discretisations/index.js';
import { resolveParameters } from '../../src/problem/problem.js';
import { outcomeText } from '../../src/dynamics/types.js';
import { integrate } from './helpers.js';

const a = 2;
const onset = 1 + a * a;
const problem = models.brusselator.factory({ grid: { intervals: [4] }, boundary: 'neumann' });

function run(b: number) {
  const p = resolveParameters(problem, { a, b, Du: 1, Dv: 1 });
  // the uniform state with u raised by a fifth (uniform: diffusion plays no part)
  const u0 = initialStateBuilder(problem, { values: { u: 1.2 * a, v: b / a } }).build(p);
  return integrate(problem, p, { end: 2000 }, { start: u0 });
}

describe('the Brusselator with equal diffusion', () => {
  it('oscillates past b = 1 + a², with a period tending to 2π/a at onset (Prigogine & Lefever 1968)', () => {
    const offsets = [0.4, 0.2, 0.1];
    const periods = offsets.map((d) => {
      const r = run(onset + d);
      expect(r.outcome.kind, outcomeText(r.outcome)).toBe('oscillating');
      return r.outcome.kind === 'oscillating' ? r.outcome.period : NaN;
    });
    const target = (2 * Math.PI) / a;
    // closer to onset, closer to 2π/a
    const gaps = periods.map((T) => Math.abs(T - target));
    expect(gaps[1]).toBeLessThan(gaps[0]);
    expect(gaps[2]).toBeLessThan(gaps[1]);
    // the period moves linearly in b − b_Hopf near onset: extrapolated to the onset it is 2π/a
    const extrapolated = 2 * periods[2] - periods[1];
    expect(Math.abs(extrapolated / target - 1)).toBeLessThan(0.01);
  });

  it('settles at the uniform state (a, b/a) before the Hopf point', () => {
    const b = onset - 0.3;
    const r = run(b);
    expect(r.outcome.kind).toBe('steady');
    const n = problem.size / 2;
    for (let i = 0; i < n; i++) {
      expect(Math.abs(r.final[2 * i] - a)).toBeLessThan(1e-9);
      expect(Math.abs(r.final[2 * i + 1] - b / a)).toBeLessThan(1e-9);
    }
  });
});
