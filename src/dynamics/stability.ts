/**
 * Stability of a steady state reached by time integration: the rightmost eigenvalues of
 * J v = μ M v (src/linalg/eigen.ts), with eigenvalues on the imaginary axis up to round-off
 * counted apart as neutral — a pattern on a periodic domain can be shifted, which gives
 * eigenvalues at zero that decide nothing about its stability.
 */
import { rightmostEigenvalues } from '../linalg/eigen.js';
import type { Params, Problem } from '../problem/problem.js';

export interface SteadyStability {
  /** true: every eigenvalue found has negative real part (neutral ones aside) and the search covered the right half-plane; false: some have positive real part; null: not certified. */
  stable: boolean | null;
  unstableCount: number;
  /** Eigenvalues with |Re μ| below the neutral tolerance (translation modes of periodic patterns). */
  neutralCount: number;
  /** The rightmost non-neutral eigenvalue. */
  leading: { re: number; im: number } | null;
  eigenvalues: { re: number; im: number }[];
  /** Whether every eigenvalue with real part ≥ 0 is certified found. */
  complete: boolean;
  searched: string;
}

/** |Re μ| below this times the spectrum's scale (at least 1) counts as neutral. */
export const neutralTolerance = 1e-7;

export function steadyStability(problem: Problem, p: Params, u: Float64Array, count: number): SteadyStability {
  const pattern = problem.pattern();
  const values = new Float64Array(pattern.colPtr[pattern.cols]);
  problem.jacobian(u, p, values);
  const r = rightmostEigenvalues({ ...pattern, values }, { count, ...(problem.massDiagonal ? { mass: problem.massDiagonal } : {}) });
  let scale = 1;
  for (const v of r.values) scale = Math.max(scale, Math.hypot(v.re, v.im));
  const tol = neutralTolerance * scale;
  const neutral = r.values.filter((v) => Math.abs(v.re) <= tol);
  const others = r.values.filter((v) => Math.abs(v.re) > tol);
  const unstable = others.filter((v) => v.re > 0).length;
  const certified = r.searchedRegion.certifiedAbove;
  const complete = r.converged && certified !== null && certified <= tol;
  const leading = others[0] ? { re: others[0].re, im: others[0].im } : null;
  return {
    stable: unstable > 0 ? false : complete && leading !== null ? true : null,
    unstableCount: unstable,
    neutralCount: neutral.length,
    leading,
    eigenvalues: r.values.map((v) => ({ re: v.re, im: v.im })),
    complete,
    searched: r.searchedRegion.description,
  };
}

/** The stability in words: `stable (rightmost eigenvalue −0.0012; 2 neutral: shifts of the pattern)`. */
export function stabilityWords(s: SteadyStability): string {
  const f = (x: number) => Number(x.toPrecision(4)).toString();
  const lead = s.leading ? `rightmost eigenvalue ${f(s.leading.re)}${s.leading.im !== 0 ? ` ± ${f(Math.abs(s.leading.im))}i` : ''}` : 'no eigenvalue off the imaginary axis found';
  const neutral = s.neutralCount ? `; ${s.neutralCount} neutral (zero real part: shifts of a pattern)` : '';
  const verdict = s.stable === true ? 'stable' : s.stable === false ? `unstable (${s.unstableCount} eigenvalue${s.unstableCount === 1 ? '' : 's'} with positive real part)` : 'stability not certified';
  return `${verdict} (${lead}${neutral})`;
}
