/**
 * `bratu`: Δu + λ e^u = 0 — the Bratu–Gelfand problem (steady thermal explosion / ignition):
 * u is a scaled temperature rise, λ (`lambda`) the Frank-Kamenetskii parameter. 1D, 2D or 3D.
 *   boundary 'dirichlet' (default): u = 0 on every side (wall held at the ambient temperature);
 *   boundary 'robin': ∂u/∂n + biot·u = 0 (convective cooling with Biot number `biot`).
 * The lower branch of steady states ends at a fold (ignition): 1D λ* = 3.5138307…
 */
import type { ParameterSpec, Problem } from '../../src/problem/problem.js';
import { createReactionDiffusion, type ReactionTerms } from '../reaction-diffusion.js';
import { type OptionSpec, checkOptions, choice, domainCentre, gridOption } from './options.js';

export const ignitionCaution =
  'Model results for ignition and thermal runaway: not a substitute for design codes, safety standards or a licensed engineer\'s judgement; local codes and licensed practice govern.';

export const bratuOptions: readonly OptionSpec[] = [
  gridOption,
  { name: 'boundary', description: 'dirichlet: u = 0 on the walls; robin: convective walls, ∂u/∂n + biot·u = 0', choices: ['dirichlet', 'robin'] },
];

export const bratuParameters: readonly ParameterSpec[] = [
  { name: 'lambda', default: 1, min: 0, description: 'Frank-Kamenetskii parameter λ (reaction strength over conduction)' },
];

export const bratuRobinParameters: readonly ParameterSpec[] = [
  ...bratuParameters,
  { name: 'biot', default: 10, min: 0, description: 'Biot number of the convective walls (robin variant)' },
];

/** Reaction term λ e^u (parameter index 0 is lambda). */
export const bratuReaction: ReactionTerms = {
  value(u, _x, q, out) {
    out[0] = q[0] * Math.exp(u[0]);
  },
  jacobian(u, _x, q, out) {
    out[0] = q[0] * Math.exp(u[0]);
  },
  parameterDerivative(u, _x, _q, j, out) {
    out[0] = j === 0 ? Math.exp(u[0]) : 0;
  },
  secondDerivative(u, _x, q, s, t, out) {
    out[0] = q[0] * Math.exp(u[0]) * s[0] * t[0];
  },
  mixedDerivative(u, _x, _q, j, s, out) {
    out[0] = j === 0 ? Math.exp(u[0]) * s[0] : 0;
  },
  magnitude(u, _x, q, out) {
    out[0] = Math.abs(q[0] * Math.exp(u[0]));
  },
};

export function bratu(options: Record<string, unknown> & { grid: import('../../src/problem/problem.js').GridOptions }): Problem {
  checkOptions('bratu', options, bratuOptions);
  const boundary = choice<'dirichlet' | 'robin'>('bratu', options, bratuOptions[1]);
  const robin = boundary === 'robin';
  return createReactionDiffusion({
    model: 'bratu',
    summary: robin
      ? 'Bratu–Gelfand problem Δu + λ e^u = 0 with convective walls ∂u/∂n + biot·u = 0'
      : 'Bratu–Gelfand problem Δu + λ e^u = 0 with u = 0 on the walls',
    caution: ignitionCaution,
    fields: ['u'],
    parameters: robin ? bratuRobinParameters : bratuParameters,
    grid: options.grid,
    boundaries: robin ? { all: { kind: 'robin', coefficient: 'biot', value: 0 } } : { all: { kind: 'dirichlet', value: 0 } },
    diffusion: [1],
    reaction: bratuReaction,
    pointMonitors: [{ name: 'centre', description: 'u at the centre of the domain', field: 'u', at: domainCentre(options.grid) }],
  });
}
