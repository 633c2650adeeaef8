/**
 * The criticality of a Hopf point located on a branch (one-parameter runs): at the located state
 * the critical eigenvalue is refined by Newton's method on the complex bordered system
 * (./complex-border.ts: the eigenvalue of J − μM nearest to i·frequency, with its right and left
 * eigenvectors), then the first Lyapunov coefficient follows (./lyapunov.ts). No I/O; the engine
 * calls `hopfCriticality` where it records a Hopf point.
 */
import type { LUOptions } from '../../linalg/lu.js';
import type { Params, Problem } from '../../problem/problem.js';
import { ComplexNullBorder } from './complex-border.js';
import { FirstLyapunovCoefficient, type HopfCriticalityWord, criticalityOf } from './lyapunov.js';

export interface HopfCriticality {
  /** The first Lyapunov coefficient l₁ (critical eigenvector normalised to ⟨q, q⟩ = 1 in the weighted inner product); NaN when undetermined. */
  lyapunov: number;
  criticality: HopfCriticalityWord;
  /** The refined critical eigenvalue μ = re + i·im (re ≈ 0 at a located Hopf point). */
  eigenvalue?: { re: number; im: number };
  /** Why the criticality is undetermined, in words. */
  note?: string;
}

/** l₁ and the criticality at a Hopf point (u, p) whose critical pair is near ±i·frequency. */
export function hopfCriticality(problem: Problem, u: Float64Array, p: Params, frequency: number, luOptions: LUOptions = {}): HopfCriticality {
  const J = new Float64Array(problem.pattern().colPtr[problem.size]);
  const border = new ComplexNullBorder(problem, luOptions);
  const l1 = new FirstLyapunovCoefficient(problem, luOptions);
  try {
    problem.jacobian(u, p, J);
    const guess = { re: 0, im: Math.abs(frequency) };
    border.initialise(J, guess);
    const mu = border.eigenvalueNear(J, guess);
    if (!mu || !(Math.abs(mu.im) > 0)) {
      return { lyapunov: NaN, criticality: 'undetermined', note: 'the critical eigenvalue could not be refined at the located point' };
    }
    // the pair with positive imaginary part: conjugate the vectors if Newton went to −iω
    if (mu.im < 0) {
      for (let i = 1; i < border.x.length; i += 2) {
        border.x[i] = -border.x[i];
        border.y[i] = -border.y[i];
      }
    }
    const omega = Math.abs(mu.im);
    const r = l1.compute(u, p, omega, border.x, border.y, J);
    return { lyapunov: r.value, criticality: criticalityOf(r.value), eigenvalue: { re: mu.re, im: omega }, ...(r.note ? { note: r.note } : {}) };
  } catch (e) {
    return { lyapunov: NaN, criticality: 'undetermined', note: `the criticality could not be computed (${(e as Error).message})` };
  } finally {
    border.dispose();
    l1.dispose();
  }
}

/** The criticality fields of a located Hopf point of a branch (the engine's one call). */
export function hopfPointCriticality(problem: Problem, u: Float64Array, p: Params, frequency: number): { lyapunov: number; criticality: HopfCriticalityWord; criticalityNote?: string } {
  const c = hopfCriticality(problem, u, p, frequency);
  return { lyapunov: c.lyapunov, criticality: c.criticality, ...(c.note ? { criticalityNote: c.note } : {}) };
}
