/**
 * `allen-cahn` (Chafee–Infante form): Δu + λ (u − u³) = 0. The trivial state u = 0 exists for
 * every λ; with u = 0 on the walls, branches bifurcate from it (pitchforks) where λ equals an
 * eigenvalue of −Δ — for the discrete problem, of the discrete Laplacian. 1D, 2D or 3D.
 */
import type { GridOptions, ParameterSpec, Problem } from '../../src/problem/problem.js';
import type { FieldBoundaries } from '../grid.js';
import { createReactionDiffusion, type ReactionTerms } from '../reaction-diffusion.js';
import { type OptionSpec, checkOptions, choice, domainCentre, gridOption } from './options.js';

export const allenCahnOptions: readonly OptionSpec[] = [
  gridOption,
  { name: 'boundary', description: 'dirichlet: u = 0 on the walls; neumann: no flux; periodic: every axis periodic', choices: ['dirichlet', 'neumann', 'periodic'] },
];

export const allenCahnParameters: readonly ParameterSpec[] = [
  { name: 'lambda', default: 1, min: 0, description: 'reaction strength λ relative to diffusion' },
];

/** Reaction λ(u − u³) (parameter index 0 is lambda). */
export const allenCahnReaction: ReactionTerms = {
  value(u, _x, q, out) {
    const v = u[0];
    out[0] = q[0] * (v - v * v * v);
  },
  jacobian(u, _x, q, out) {
    const v = u[0];
    out[0] = q[0] * (1 - 3 * v * v);
  },
  parameterDerivative(u, _x, _q, j, out) {
    const v = u[0];
    out[0] = j === 0 ? v - v * v * v : 0;
  },
  secondDerivative(u, _x, q, s, t, out) {
    out[0] = -6 * q[0] * u[0] * s[0] * t[0];
  },
  mixedDerivative(u, _x, _q, j, s, out) {
    out[0] = j === 0 ? (1 - 3 * u[0] * u[0]) * s[0] : 0;
  },
  magnitude(u, _x, q, out) {
    const v = Math.abs(u[0]);
    out[0] = Math.abs(q[0]) * (v + v * v * v);
  },
};

export function allenCahn(options: Record<string, unknown> & { grid: GridOptions }): Problem {
  checkOptions('allen-cahn', options, allenCahnOptions);
  const boundary = choice<'dirichlet' | 'neumann' | 'periodic'>('allen-cahn', options, allenCahnOptions[1]);
  const bc: FieldBoundaries =
    boundary === 'dirichlet'
      ? { all: { kind: 'dirichlet', value: 0 } }
      : boundary === 'neumann'
        ? { all: { kind: 'neumann', flux: 0 } }
        : { all: { kind: 'periodic' } };
  return createReactionDiffusion({
    model: 'allen-cahn',
    summary: `Allen–Cahn (Chafee–Infante) equation Δu + λ(u − u³) = 0, ${boundary} boundaries`,
    fields: ['u'],
    parameters: allenCahnParameters,
    grid: options.grid,
    boundaries: bc,
    diffusion: [1],
    reaction: allenCahnReaction,
    pointMonitors: [{ name: 'centre', description: 'u at the centre of the domain', field: 'u', at: domainCentre(options.grid) }],
  });
}
