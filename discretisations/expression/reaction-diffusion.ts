/**
 * `reaction-diffusion`: a reaction–diffusion system defined by expressions in the case file,
 *
 *   ∂u_f/∂t = D_f(p) Δu_f + R_f(u, p, x)      for every field f,
 *
 * assembled by the same code as the built-in models (../reaction-diffusion.ts), so an
 * expression model with the built-in kinetics reproduces the built-in numbers to round-off.
 *
 * Options (all keys full lowercase words):
 *   grid:        { intervals: [...], length?: [...] }            1D, 2D or 3D
 *   fields:      [u, v, ...]                                     names used in the expressions
 *   parameters:  { name: default, ... } or { name: { default, description?, min?, max? } }
 *   reaction:    { field: expression in the fields, parameters and x, y, z }   (every field)
 *   diffusion:   { field: number | parameter name | expression in the parameters } (every field)
 *   boundary:    a kind for every side of every field ('neumann', 'dirichlet', 'periodic'), or
 *                per side { all?, xmin?, xmax?, ymin?, ... } for every field, or per field
 *                { u: <kind or per-side>, v: ... }. A side's condition is a kind word (zero
 *                data) or { kind: dirichlet, value } | { kind: neumann, flux } |
 *                { kind: robin, coefficient, value } | { kind: periodic }, where each datum is
 *                a number or a parameter name; robin means ∂u/∂n + coefficient·u = value.
 *   initial:     { field: expression in the parameters and x, y, z } (default 0)
 *   phase-condition: true adds a drift unknown per periodic axis (see ../reaction-diffusion.ts)
 *
 * Expressions are compiled by ./compile.ts (checked parsing, symbolic derivatives, generated
 * JavaScript); the Jacobian pattern holds only the couplings the expressions have, and exact
 * second and mixed derivatives are supplied too.
 */
import type { GridOptions, ParameterSpec, Problem } from '../../src/problem/problem.js';
import { isReservedColumnName, reservedColumnNames } from '../../src/problem/names.js';
import { type BoundaryCondition, type FieldBoundaries, sideNames } from '../grid.js';
import { createReactionDiffusion, type DiffusionSpec, type ReactionDiffusionProblem } from '../reaction-diffusion.js';
import { type OptionSpec, checkOptions, flag, gridOption } from '../models/options.js';
import { COORDINATES, ExpressionError, checkName, compileReaction, compileScalar, type CompiledScalar, expressionLimitsText } from './compile.js';
import { reactionTerms } from './terms.js';

const MODEL = 'reaction-diffusion';

export const reactionDiffusionOptions: readonly OptionSpec[] = [
  gridOption,
  { name: 'fields', description: 'list of field names, e.g. [u, v]' },
  { name: 'parameters', description: 'parameter names with default values, e.g. {F: 0.04, k: 0.06}, or {name: {default, description, min, max}}' },
  { name: 'reaction', description: `reaction term per field: an expression in the fields, the parameters and x, y, z (every expression: ${expressionLimitsText})` },
  { name: 'diffusion', description: 'diffusion coefficient per field: a number, a parameter name or an expression in the parameters' },
  {
    name: 'boundary',
    description:
      'neumann, dirichlet, robin or periodic for every side of every field; or per side {all, xmin, xmax, ...}; or per field {u: ..., v: ...}; a side is a kind word or {kind, value | flux | coefficient}; robin (convective): {kind: robin, coefficient: c, value: g} means ∂u/∂n + c·u = g',
  },
  { name: 'initial', description: 'initial state per field: an expression in the parameters and x, y, z (default 0)' },
  { name: 'phase-condition', description: 'true: add a drift-speed unknown per periodic axis that removes the translation mode' },
];

export const userModelCaution =
  'User-defined model: where its results bear on ignition, thermal runaway or other safety questions they are not a substitute for design codes, safety standards or a licensed engineer\'s judgement; local codes and licensed practice govern.';

const BOUNDARY_KINDS = ['neumann', 'dirichlet', 'robin', 'periodic'] as const;

function fail(message: string): never {
  throw new Error(`model '${MODEL}': ${message}`);
}

function isPlainObject(v: unknown): v is Record<string, unknown> {
  return v !== null && typeof v === 'object' && !Array.isArray(v);
}

function describeValue(v: unknown): string {
  if (typeof v === 'string') return v.length > 60 ? `'${v.slice(0, 57)}...'` : `'${v}'`;
  if (Array.isArray(v)) return 'a list';
  if (v === null) return 'null';
  if (typeof v === 'object') return 'an object';
  return String(v);
}

/** Rethrow compiler errors with the model name in front (one line). */
function withModel<T>(f: () => T): T {
  try {
    return f();
  } catch (err) {
    if (err instanceof ExpressionError) fail(err.message);
    throw err;
  }
}

function readFields(raw: unknown): string[] {
  if (!Array.isArray(raw) || raw.length === 0 || raw.some((f) => typeof f !== 'string')) {
    fail(`option 'fields' must be a non-empty list of names, got ${describeValue(raw)}`);
  }
  const fields = raw as string[];
  for (const f of fields) {
    withModel(() => checkName(f, 'field'));
    if (f === 'all' || (sideNames as readonly string[]).includes(f)) {
      fail(`field name '${f}' is reserved for boundary sides (all, ${sideNames.join(', ')})`);
    }
  }
  const seen = new Set<string>();
  for (const f of fields) {
    if (seen.has(f)) fail(`field '${f}' is named twice in option 'fields'`);
    seen.add(f);
  }
  return fields;
}

function readParameters(raw: unknown, fields: readonly string[]): ParameterSpec[] {
  if (raw === undefined) return [];
  if (!isPlainObject(raw)) fail(`option 'parameters' must map names to default values, e.g. {F: 0.04}, got ${describeValue(raw)}`);
  const out: ParameterSpec[] = [];
  for (const [name, v] of Object.entries(raw)) {
    withModel(() => checkName(name, 'parameter'));
    if (isReservedColumnName(name)) fail(`parameter name '${name}' is reserved for an output column (reserved: ${reservedColumnNames.join(', ')})`);
    if (fields.includes(name)) fail(`'${name}' is both a field and a parameter name`);
    const where = `parameter '${name}'`;
    if (typeof v === 'number') {
      if (!Number.isFinite(v)) fail(`${where}: the default must be a finite number, got ${v}`);
      out.push({ name, default: v, description: `parameter ${name} (user-defined)` });
      continue;
    }
    if (!isPlainObject(v)) fail(`${where}: give a default number or {default, description, min, max}, got ${describeValue(v)}`);
    for (const key of Object.keys(v)) {
      if (!['default', 'description', 'min', 'max'].includes(key)) fail(`${where}: unknown key '${key}' (accepted: default, description, min, max)`);
    }
    const num = (key: string, required: boolean): number | undefined => {
      const x = v[key];
      if (x === undefined && !required) return undefined;
      if (typeof x !== 'number' || !Number.isFinite(x)) fail(`${where}: '${key}' must be a finite number, got ${describeValue(x)}`);
      return x;
    };
    const def = num('default', true) as number;
    const min = num('min', false);
    const max = num('max', false);
    if (min !== undefined && max !== undefined && min > max) fail(`${where}: min ${min} is larger than max ${max}`);
    if ((min !== undefined && def < min) || (max !== undefined && def > max)) {
      fail(`${where}: the default ${def} lies outside [${min ?? '-inf'}, ${max ?? 'inf'}]`);
    }
    const description = v.description === undefined ? `parameter ${name} (user-defined)` : v.description;
    if (typeof description !== 'string') fail(`${where}: 'description' must be text, got ${describeValue(description)}`);
    out.push({ name, default: def, description, ...(min !== undefined ? { min } : {}), ...(max !== undefined ? { max } : {}) });
  }
  return out;
}

/** Per-field map option (reaction, diffusion, initial): keys must be field names. */
function perField(raw: unknown, option: string, fields: readonly string[], required: boolean): Record<string, unknown> {
  if (raw === undefined) {
    if (required) fail(`option '${option}' is required (one entry per field: ${fields.join(', ')})`);
    return {};
  }
  if (!isPlainObject(raw)) fail(`option '${option}' must map field names to expressions, got ${describeValue(raw)}`);
  for (const key of Object.keys(raw)) {
    if (!fields.includes(key)) fail(`option '${option}' names unknown field '${key}' (fields: ${fields.join(', ')})`);
  }
  if (required) {
    for (const f of fields) if (raw[f] === undefined) fail(`option '${option}' has no entry for field '${f}' (one entry per field: ${fields.join(', ')})`);
  }
  return raw;
}

function readCondition(raw: unknown, where: string): BoundaryCondition {
  if (typeof raw === 'string') {
    if (raw === 'neumann') return { kind: 'neumann', flux: 0 };
    if (raw === 'dirichlet') return { kind: 'dirichlet', value: 0 };
    if (raw === 'periodic') return { kind: 'periodic' };
    if (raw === 'robin') fail(`${where}: a robin condition needs a coefficient: {kind: robin, coefficient, value}`);
    fail(`${where}: unknown boundary kind ${describeValue(raw)} (accepted: ${BOUNDARY_KINDS.join(', ')})`);
  }
  if (!isPlainObject(raw)) fail(`${where}: expected a kind word or {kind, ...}, got ${describeValue(raw)}`);
  const kind = raw.kind;
  const keysFor: Record<string, string[]> = { dirichlet: ['value'], neumann: ['flux'], robin: ['coefficient', 'value'], periodic: [] };
  if (typeof kind !== 'string' || !Object.hasOwn(keysFor, kind)) {
    fail(`${where}: unknown boundary kind ${describeValue(kind)} (accepted: ${BOUNDARY_KINDS.join(', ')})`);
  }
  for (const key of Object.keys(raw)) {
    if (key !== 'kind' && !keysFor[kind].includes(key)) {
      fail(`${where}: key '${key}' does not belong to a ${kind} condition (accepted: kind${keysFor[kind].map((k) => ', ' + k).join('')})`);
    }
  }
  // the grid validates the data (finite numbers or parameter names) with its own messages
  return raw as unknown as BoundaryCondition;
}

function readSides(raw: unknown, where: string): FieldBoundaries {
  if (typeof raw === 'string') return { all: readCondition(raw, where) };
  if (!isPlainObject(raw)) fail(`${where}: expected a kind word or per-side conditions {all, xmin, ...}, got ${describeValue(raw)}`);
  if ('kind' in raw) return { all: readCondition(raw, where) };
  const out: Record<string, BoundaryCondition> = {};
  for (const [side, c] of Object.entries(raw)) {
    if (side !== 'all' && !(sideNames as readonly string[]).includes(side)) {
      fail(`${where}: unknown side '${side}' (accepted: all, ${sideNames.join(', ')})`);
    }
    out[side] = readCondition(c, `${where} on side '${side}'`);
  }
  return out as FieldBoundaries;
}

function readBoundaries(raw: unknown, fields: readonly string[]): FieldBoundaries[] {
  if (raw === undefined) fail(`option 'boundary' is required (${reactionDiffusionOptions[5].description})`);
  if (isPlainObject(raw) && !('kind' in raw)) {
    const keys = Object.keys(raw);
    const fieldKeys = keys.filter((k) => fields.includes(k));
    if (fieldKeys.length > 0) {
      if (fieldKeys.length !== keys.length) {
        const other = keys.find((k) => !fields.includes(k));
        fail(`option 'boundary' mixes field names and '${other}': give conditions per field (${fields.join(', ')}) or per side for every field, not both`);
      }
      return fields.map((f) => {
        if (raw[f] === undefined) fail(`option 'boundary' has no entry for field '${f}' (one per field: ${fields.join(', ')})`);
        return readSides(raw[f], `boundary of field '${f}'`);
      });
    }
  }
  const shared = readSides(raw, 'boundary');
  return fields.map(() => shared);
}

function readDiffusion(raw: Record<string, unknown>, fields: readonly string[], names: readonly string[]): DiffusionSpec[] {
  return fields.map((f) => {
    const d = raw[f];
    const label = `diffusion for field '${f}'`;
    if (typeof d === 'number') {
      if (!Number.isFinite(d) || d < 0) fail(`${label}: must be a finite number >= 0, got ${d}`);
      return d;
    }
    if (typeof d === 'string' && names.includes(d.trim())) return d.trim();
    const s: CompiledScalar = withModel(() => compileScalar(d, label, names));
    if (s.constant) {
      const v = s.value([]);
      if (!(v >= 0)) fail(`${label}: evaluates to ${v}; a diffusion coefficient must be >= 0`);
      return v;
    }
    return { value: (q: Float64Array) => s.value(q), derivative: (q: Float64Array, j: number) => s.gradient(q, j) };
  });
}

/** Factory of the `reaction-diffusion` model. */
export function reactionDiffusion(options: Record<string, unknown> & { grid: GridOptions }): ReactionDiffusionProblem {
  checkOptions(MODEL, options, reactionDiffusionOptions);
  const fields = readFields(options.fields);
  const parameters = readParameters(options.parameters, fields);
  const names = parameters.map((s) => s.name);
  const dim = Array.isArray(options.grid?.intervals) ? options.grid.intervals.length : 0;
  if (dim < 1 || dim > 3) fail(`grid.intervals must have 1 to 3 entries (one per axis), got ${describeValue(options.grid?.intervals)}`);
  const coordinates = COORDINATES.slice(0, dim);

  const reactionText = perField(options.reaction, 'reaction', fields, true);
  const compiled = withModel(() => compileReaction({ fields, parameters: names, reaction: reactionText, coordinates }));
  const terms = withModel(() => reactionTerms(compiled, dim));

  const diffusion = readDiffusion(perField(options.diffusion, 'diffusion', fields, true), fields, names);
  const boundaries = readBoundaries(options.boundary, fields);

  const initialText = perField(options.initial, 'initial', fields, false);
  const initialSymbols = [...names, ...coordinates];
  const initial = fields.map((f) =>
    initialText[f] === undefined ? undefined : withModel(() => compileScalar(initialText[f], `initial for field '${f}'`, initialSymbols)),
  );
  const scratch = new Float64Array(initialSymbols.length);
  const initialGuess = (x: Float64Array, q: Float64Array, out: Float64Array): void => {
    scratch.set(q.subarray(0, names.length), 0);
    for (let d = 0; d < dim; d++) scratch[names.length + d] = x[d];
    for (let f = 0; f < fields.length; f++) out[f] = initial[f] ? initial[f]!.value(scratch) : 0;
  };

  const summary =
    `expression-defined reaction–diffusion system in ${fields.join(', ')}: ` +
    fields.map((f) => `${f}_t = D_${f}·Δ${f} + ${String(reactionText[f])}`).join('; ');

  try {
    return createReactionDiffusion({
      model: MODEL,
      summary,
      caution: userModelCaution,
      fields,
      parameters,
      grid: options.grid,
      boundaries,
      diffusion,
      reaction: terms,
      initialGuess,
      phaseCondition: flag(MODEL, options, 'phase-condition'),
    });
  } catch (err) {
    // the shared assembly's messages name the model already, the grid's do not
    if (err instanceof Error && !err.message.startsWith(`model '${MODEL}'`)) fail(err.message);
    throw err;
  }
}


/** Name, one-line summary, options, caution and factory of the model (for listings and case files). */
export const reactionDiffusionModel = {
  name: MODEL,
  summary: 'reaction–diffusion system given by expressions: fields, parameters, reaction terms, diffusion coefficients, boundary conditions',
  options: reactionDiffusionOptions,
  caution: userModelCaution,
  create: reactionDiffusion as (options: Record<string, unknown> & { grid: GridOptions }) => Problem,
};
