/**
 * Finite-difference discretisations and the built-in models.
 *
 * `models` is the registry the command line lists (`branchline models`) and builds cases from:
 * id → { description, parameters, options, factory }. The grid, stencil, pattern and monitor
 * helpers are exported for models written in code (a case's `model: ./my-model.mjs`).
 */
import type { GridOptions, ParameterSpec, Problem } from '../src/problem/problem.js';
import type { OptionSpec } from './models/options.js';
import { bratu, bratuOptions, bratuParameters, bratuRobinParameters } from './models/bratu.js';
import { allenCahn, allenCahnOptions, allenCahnParameters } from './models/allen-cahn.js';
import { grayScott, grayScottOptions, grayScottParameters } from './models/gray-scott.js';
import { brusselator, brusselatorOptions, brusselatorParameters } from './models/brusselator.js';
import { elastica, elasticaOptions, elasticaParameters } from './models/elastica.js';
import { beamFoundation, beamFoundationOptions, beamFoundationParameters } from './models/beam-foundation.js';
import { reactionDiffusion, reactionDiffusionOptions, userModelCaution } from './expression/reaction-diffusion.js';

export interface ModelEntry {
  /** One line for listings. */
  readonly description: string;
  /** Parameters with defaults (for variants with extra parameters, the union, noted in the description). */
  readonly parameters: readonly ParameterSpec[];
  /** Options the factory accepts besides the grid. */
  readonly options: readonly OptionSpec[];
  /** Supported dimensions. */
  readonly dimensions: readonly number[];
  /** Safety caution shown with results, when the model bears on safety. */
  readonly caution?: string;
  readonly factory: (options: Record<string, unknown> & { grid: GridOptions }) => Problem;
}

import { ignitionCaution } from './models/bratu.js';
import { bucklingCaution } from './models/elastica.js';

export const models: Readonly<Record<string, ModelEntry>> = Object.freeze({
  bratu: {
    description: 'Bratu–Gelfand ignition problem Δu + λ e^u = 0, cold walls, or convective walls (boundary: robin, parameter biot)',
    parameters: bratuRobinParameters,
    options: bratuOptions,
    dimensions: [1, 2, 3],
    caution: ignitionCaution,
    factory: bratu,
  },
  'allen-cahn': {
    description: 'Allen–Cahn (Chafee–Infante) equation Δu + λ(u − u³) = 0, pitchforks from u = 0',
    parameters: allenCahnParameters,
    options: allenCahnOptions,
    dimensions: [1, 2, 3],
    factory: allenCahn,
  },
  'gray-scott': {
    description: 'Gray–Scott reaction–diffusion system (u, v), steady patterns on periodic or no-flux domains',
    parameters: grayScottParameters,
    options: grayScottOptions,
    dimensions: [1, 2],
    factory: grayScott,
  },
  brusselator: {
    description: 'Brusselator reaction–diffusion system (u, v), uniform state and Turing patterns',
    parameters: brusselatorParameters,
    options: brusselatorOptions,
    dimensions: [1, 2],
    factory: brusselator,
  },
  elastica: {
    description: 'Euler elastica, pinned–pinned strut under end load λ = PL²/EI, with the end-level constraint',
    parameters: elasticaParameters,
    options: elasticaOptions,
    dimensions: [1],
    caution: bucklingCaution,
    factory: elastica,
  },
  'beam-foundation': {
    description: 'beam on a softening elastic foundation under axial load P, pinned or clamped ends',
    parameters: beamFoundationParameters,
    options: beamFoundationOptions,
    dimensions: [1],
    caution: bucklingCaution,
    factory: beamFoundation,
  },
  'reaction-diffusion': {
    description: 'reaction–diffusion system given by expressions: fields, parameters, reaction terms, diffusion coefficients, boundary conditions',
    parameters: [],
    options: reactionDiffusionOptions,
    dimensions: [1, 2, 3],
    caution: userModelCaution,
    factory: reactionDiffusion,
  },
} satisfies Record<string, ModelEntry>);

/** The registry entry of a model id, with a one-line error listing the known ids otherwise. */
export function modelEntry(id: string): ModelEntry {
  const e = Object.prototype.hasOwnProperty.call(models, id) ? models[id] : undefined;
  if (!e) throw new Error(`unknown model '${id}' (built-in models: ${Object.keys(models).join(', ')})`);
  return e;
}

export { bratuParameters };
export type { OptionSpec };
export { bratu, allenCahn, grayScott, brusselator, elastica, beamFoundation };
export { reactionDiffusion };
export { ignitionCaution, bucklingCaution };
export * from './grid.js';
export * from './operator.js';
export * from './pattern.js';
export * from './monitors.js';
export * from './memory.js';
export * from './reaction-diffusion.js';
export * from './initial-state.js';
export { bratuReaction } from './models/bratu.js';
export { allenCahnReaction } from './models/allen-cahn.js';
export { grayScottReaction } from './models/gray-scott.js';
export { brusselatorReaction } from './models/brusselator.js';
