/**
 * Option handling shared by the built-in model factories: unknown keys and bad values give a
 * one-line error naming the model, the option, the value and what is accepted.
 */
import type { FieldBoundaries } from '../grid.js';
import type { GridOptions } from '../../src/problem/problem.js';

export interface OptionSpec {
  readonly name: string;
  readonly description: string;
  /** Accepted values for choice options (first = default). */
  readonly choices?: readonly string[];
}

export const gridOption: OptionSpec = {
  name: 'grid',
  description: 'intervals per axis (1 to 3 entries; the dimension) and optional length per axis (default 1)',
};

export function checkOptions(model: string, options: Record<string, unknown>, specs: readonly OptionSpec[]): void {
  if (options === null || typeof options !== 'object') throw new Error(`model '${model}': options must be an object`);
  const known = specs.map((s) => s.name);
  for (const key of Object.keys(options)) {
    if (options[key] === undefined) continue;
    if (!known.includes(key)) throw new Error(`model '${model}': unknown option '${key}' (accepted: ${known.join(', ')})`);
  }
  if (!options.grid) throw new Error(`model '${model}': option 'grid' is required (${gridOption.description})`);
}

export function choice<T extends string>(model: string, options: Record<string, unknown>, spec: OptionSpec): T {
  const v = options[spec.name];
  const choices = spec.choices ?? [];
  if (v === undefined) return choices[0] as T;
  if (typeof v !== 'string' || !choices.includes(v)) {
    throw new Error(`model '${model}': option '${spec.name}' is '${String(v)}' (accepted: ${choices.join(', ')})`);
  }
  return v as T;
}

export function flag(model: string, options: Record<string, unknown>, name: string): boolean {
  const v = options[name];
  if (v === undefined) return false;
  if (typeof v !== 'boolean') throw new Error(`model '${model}': option '${name}' must be true or false, got ${String(v)}`);
  return v;
}

export function gridOf(options: { grid: GridOptions }): GridOptions {
  return options.grid;
}

export function dimensionCheck(model: string, grid: GridOptions, allowed: readonly number[]): void {
  const d = Array.isArray(grid.intervals) ? grid.intervals.length : 0;
  if (!allowed.includes(d)) {
    throw new Error(`model '${model}': grid has ${d} axes; this model supports ${allowed.map((x) => `${x}D`).join(', ')}`);
  }
}

/** Centre of the domain (physical coordinates). */
export function domainCentre(grid: GridOptions): number[] {
  return grid.intervals.map((_n, a) => (grid.length ? grid.length[a] : 1) / 2);
}

/**
 * The domain options of the two-field pattern models (gray-scott, brusselator): `boundary`
 * (periodic or no-flux on every side) and `phase-condition` (periodic only), as boundary data.
 */
export function patternDomain(
  model: string,
  options: Record<string, unknown>,
  boundarySpec: OptionSpec,
): { boundary: 'periodic' | 'neumann'; phase: boolean; boundaries: FieldBoundaries } {
  const boundary = choice<'periodic' | 'neumann'>(model, options, boundarySpec);
  const phase = flag(model, options, 'phase-condition');
  if (phase && boundary !== 'periodic') throw new Error(`model '${model}': option 'phase-condition' needs boundary 'periodic'`);
  const boundaries: FieldBoundaries = boundary === 'periodic' ? { all: { kind: 'periodic' } } : { all: { kind: 'neumann', flux: 0 } };
  return { boundary, phase, boundaries };
}
