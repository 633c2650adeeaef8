/**
 * `gray-scott`: two fields (u the substrate, v the autocatalyst),
 *   u_t = Du Δu − u v² + F (1 − u)
 *   v_t = Dv Δv + u v² − (F + k) v
 * steady states on 1D or 2D domains, periodic (optionally with a phase condition) or no-flux.
 * The uniform state (u, v) = (1, 0) exists for all parameters; patterned states need a pulse.
 */
import type { GridOptions, ParameterSpec, Problem } from '../../src/problem/problem.js';
import { createReactionDiffusion, type ReactionTerms } from '../reaction-diffusion.js';
import { type OptionSpec, checkOptions, choice, dimensionCheck, domainCentre, gridOption, patternDomain } from './options.js';

export const grayScottOptions: readonly OptionSpec[] = [
  gridOption,
  { name: 'boundary', description: 'periodic: every axis periodic; neumann: no-flux walls', choices: ['periodic', 'neumann'] },
  { name: 'initial', description: 'uniform: the state (1, 0); pulse: a smooth spot of v at the centre', choices: ['uniform', 'pulse'] },
  { name: 'phase-condition', description: 'true: add a drift-speed unknown per periodic axis that removes the translation mode' },
];

// parameter order: F, k, Du, Dv (the reaction uses indices 0 and 1)
export const grayScottParameters: readonly ParameterSpec[] = [
  { name: 'F', default: 0.04, min: 0, description: 'feed rate F' },
  { name: 'k', default: 0.06, min: 0, description: 'removal rate k of the autocatalyst' },
  { name: 'Du', default: 2e-5, min: 0, description: 'diffusion coefficient of u' },
  { name: 'Dv', default: 1e-5, min: 0, description: 'diffusion coefficient of v' },
];

export const grayScottReaction: ReactionTerms = {
  coupling: [true, true, true, true],
  value(w, _x, q, out) {
    const u = w[0];
    const v = w[1];
    const uvv = u * v * v;
    out[0] = -uvv + q[0] * (1 - u);
    out[1] = uvv - (q[0] + q[1]) * v;
  },
  jacobian(w, _x, q, out) {
    const u = w[0];
    const v = w[1];
    out[0] = -v * v - q[0];
    out[1] = -2 * u * v;
    out[2] = v * v;
    out[3] = 2 * u * v - (q[0] + q[1]);
  },
  parameterDerivative(w, _x, _q, j, out) {
    if (j === 0) {
      out[0] = 1 - w[0];
      out[1] = -w[1];
    } else if (j === 1) {
      out[0] = 0;
      out[1] = -w[1];
    } else {
      out[0] = 0;
      out[1] = 0;
    }
  },
  secondDerivative(w, _x, _q, s, t, out) {
    const u = w[0];
    const v = w[1];
    const h = -2 * v * (s[0] * t[1] + s[1] * t[0]) - 2 * u * s[1] * t[1];
    out[0] = h;
    out[1] = -h;
  },
  mixedDerivative(_w, _x, _q, j, s, out) {
    if (j === 0) {
      out[0] = -s[0];
      out[1] = -s[1];
    } else if (j === 1) {
      out[0] = 0;
      out[1] = -s[1];
    } else {
      out[0] = 0;
      out[1] = 0;
    }
  },
  magnitude(w, _x, q, out) {
    const u = w[0];
    const v = w[1];
    const uvv = Math.abs(u * v * v);
    out[0] = uvv + Math.abs(q[0] * (1 - u));
    out[1] = uvv + Math.abs((q[0] + q[1]) * v);
  },
};

export function grayScott(options: Record<string, unknown> & { grid: GridOptions }): Problem {
  const m = 'gray-scott';
  checkOptions(m, options, grayScottOptions);
  dimensionCheck(m, options.grid, [1, 2]);
  const { boundary, phase, boundaries: bc } = patternDomain(m, options, grayScottOptions[1]);
  const initial = choice<'uniform' | 'pulse'>(m, options, grayScottOptions[2]);
  const centre = domainCentre(options.grid);
  return createReactionDiffusion({
    model: m,
    summary: `Gray–Scott reaction–diffusion system, ${boundary} boundaries`,
    fields: ['u', 'v'],
    parameters: grayScottParameters,
    grid: options.grid,
    boundaries: bc,
    diffusion: ['Du', 'Dv'],
    reaction: grayScottReaction,
    initialGuess: (x, _q, out) => {
      let b = 0;
      if (initial === 'pulse') {
        let r2 = 0;
        for (let a = 0; a < x.length; a++) r2 += ((x[a] - centre[a]) / (0.1 * centre[a])) ** 2;
        b = Math.exp(-r2);
      }
      out[0] = 1 - 0.5 * b;
      out[1] = 0.25 * b;
    },
    phaseCondition: phase,
  });
}
