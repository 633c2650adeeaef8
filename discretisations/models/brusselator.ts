/**
 * `brusselator`: two fields,
 *   u_t = a − (b + 1) u + u² v + Du Δu
 *   v_t = b u − u² v + Dv Δv
 * on 1D or 2D domains with no-flux walls or periodic axes. The uniform state (a, b/a) exists for
 * all parameters; it loses stability to a Hopf bifurcation at b = 1 + a² and to stationary
 * (Turing) patterns at b = (1 + a √(Du/Dv))² on large domains.
 */
import type { GridOptions, ParameterSpec, Problem } from '../../src/problem/problem.js';
import { createReactionDiffusion, type ReactionTerms } from '../reaction-diffusion.js';
import { type OptionSpec, checkOptions, choice, dimensionCheck, gridOption, patternDomain } from './options.js';

export const brusselatorOptions: readonly OptionSpec[] = [
  gridOption,
  { name: 'boundary', description: 'neumann: no-flux walls; periodic: every axis periodic', choices: ['neumann', 'periodic'] },
  { name: 'initial', description: 'uniform: the state (a, b/a); perturbed: plus a small cosine along x', choices: ['uniform', 'perturbed'] },
  { name: 'phase-condition', description: 'true: add a drift-speed unknown per periodic axis that removes the translation mode' },
];

// parameter order: a, b, Du, Dv (the reaction uses indices 0 and 1)
export const brusselatorParameters: readonly ParameterSpec[] = [
  { name: 'a', default: 2, min: 0, description: 'feed concentration a' },
  { name: 'b', default: 2, min: 0, description: 'control concentration b' },
  { name: 'Du', default: 1, min: 0, description: 'diffusion coefficient of u' },
  { name: 'Dv', default: 8, min: 0, description: 'diffusion coefficient of v' },
];

export const brusselatorReaction: ReactionTerms = {
  coupling: [true, true, true, true],
  value(w, _x, q, out) {
    const u = w[0];
    const v = w[1];
    const uuv = u * u * v;
    out[0] = q[0] - (q[1] + 1) * u + uuv;
    out[1] = q[1] * u - uuv;
  },
  jacobian(w, _x, q, out) {
    const u = w[0];
    const v = w[1];
    out[0] = -(q[1] + 1) + 2 * u * v;
    out[1] = u * u;
    out[2] = q[1] - 2 * u * v;
    out[3] = -u * u;
  },
  parameterDerivative(w, _x, _q, j, out) {
    if (j === 0) {
      out[0] = 1;
      out[1] = 0;
    } else if (j === 1) {
      out[0] = -w[0];
      out[1] = w[0];
    } else {
      out[0] = 0;
      out[1] = 0;
    }
  },
  secondDerivative(w, _x, _q, s, t, out) {
    const u = w[0];
    const v = w[1];
    const h = 2 * v * s[0] * t[0] + 2 * u * (s[0] * t[1] + s[1] * t[0]);
    out[0] = h;
    out[1] = -h;
  },
  mixedDerivative(_w, _x, _q, j, s, out) {
    if (j === 1) {
      out[0] = -s[0];
      out[1] = s[0];
    } else {
      out[0] = 0;
      out[1] = 0;
    }
  },
  magnitude(w, _x, q, out) {
    const u = w[0];
    const uuv = Math.abs(u * u * w[1]);
    out[0] = Math.abs(q[0]) + Math.abs((q[1] + 1) * u) + uuv;
    out[1] = Math.abs(q[1] * u) + uuv;
  },
};

export function brusselator(options: Record<string, unknown> & { grid: GridOptions }): Problem {
  const m = 'brusselator';
  checkOptions(m, options, brusselatorOptions);
  dimensionCheck(m, options.grid, [1, 2]);
  const { boundary, phase, boundaries: bc } = patternDomain(m, options, brusselatorOptions[1]);
  const initial = choice<'uniform' | 'perturbed'>(m, options, brusselatorOptions[2]);
  const lx = options.grid.length ? options.grid.length[0] : 1;
  return createReactionDiffusion({
    model: m,
    summary: `Brusselator reaction–diffusion system, ${boundary} boundaries`,
    fields: ['u', 'v'],
    parameters: brusselatorParameters,
    grid: options.grid,
    boundaries: bc,
    diffusion: ['Du', 'Dv'],
    reaction: brusselatorReaction,
    initialGuess: (x, q, out) => {
      const a = q[0];
      const b = q[1];
      const pert = initial === 'perturbed' ? 0.1 * Math.cos((2 * Math.PI * x[0]) / lx) : 0;
      out[0] = a * (1 + pert);
      out[1] = a !== 0 ? b / a : 0;
    },
    phaseCondition: phase,
  });
}
