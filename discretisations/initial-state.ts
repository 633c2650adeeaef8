/**
 * Initial states written down, for any Problem (built-in, expression-defined or written in
 * code): the same forms everywhere, evaluated on the problem's node array (`toNodeArray` /
 * `fromNodeArray`, shape (fields, nz, ny, nx), nodes at i·h along each axis):
 *
 *   - a base state: the model's own initial guess (for models with named states, e.g.
 *     gray-scott's `pulse`, the factory's option), or a node array given by the caller (a .npy
 *     file read by the run layer, a state of an earlier run);
 *   - per field, a number or an expression in the parameters and the coordinates x, y, z
 *     (compiled by ./expression/compile.ts; refused with a one-line message naming the field);
 *   - per extra unknown (constraint multipliers, drift speeds), a number;
 *   - seeded noise on top: uniform on [−A, A] per node, independently, with A for every field
 *     or per field; the generator is seeded (src/linalg/random.ts), so a seed reproduces the
 *     same state on every machine.
 *
 * Extra unknowns start from the base state (the model's guess: 0 for drift speeds; the
 * elastica's own value for its multiplier; or the values recorded with a saved state) unless a
 * number is given under their name. Dirichlet boundary nodes keep their boundary values: what the
 * forms put there is dropped by `fromNodeArray`.
 *
 * `initialStateBuilder` checks and compiles once; `build` makes a state for given parameter
 * values (and optionally another seed: the deflated-Newton search draws several).
 */
import type { Params, Problem } from '../src/problem/problem.js';
import { seededRandom } from '../src/linalg/random.js';
import { COORDINATES, compileScalar, type CompiledScalar } from './expression/compile.js';

export interface InitialStateSpec {
  /** Per field a number or an expression text; per extra unknown a number. */
  readonly values?: Readonly<Record<string, number | string>>;
  /** Uniform noise on [−A, A] per node: A for every field, or per field. */
  readonly noise?: { readonly amplitude: number | Readonly<Record<string, number>>; readonly seed: number };
}

export interface InitialStateBuilder {
  readonly spec: InitialStateSpec;
  /** Whether the spec changes nothing (no values, no noise). */
  readonly empty: boolean;
  /**
   * The state at parameters p: `base` (a full state vector, default the model's initial guess)
   * with the per-field values, extras and noise of the spec applied. `seed` overrides the noise seed.
   */
  build(p: Params, base?: Float64Array, seed?: number): Float64Array;
}

/** An error in an initial-state spec: `field` is the key it is about (e.g. `u`, `noise.amplitude`). */
export class InitialStateError extends Error {
  override name = 'InitialStateError';
  constructor(
    readonly field: string,
    detail: string,
  ) {
    super(detail);
  }
}

/** Check and compile `spec` for `problem`; throws InitialStateError naming the offending key. */
export function initialStateBuilder(problem: Problem, spec: InitialStateSpec): InitialStateBuilder {
  const d = problem.describe();
  const fields = d.fields;
  const extras = problem.extraUnknowns.map((e) => e.name);
  const dim = d.axes.length;
  const coordinates = COORDINATES.slice(0, dim);
  const names = problem.parameters.map((s) => s.name);
  const symbols = [...names, ...coordinates];
  const accepted = `a field (${fields.join(', ') || 'none'})${extras.length ? `, an extra unknown (${extras.join(', ')})` : ''}, from or noise`;

  const perField: ({ value: number } | { expr: CompiledScalar } | undefined)[] = fields.map(() => undefined);
  const extraValues: Record<string, number> = {};
  for (const [key, v] of Object.entries(spec.values ?? {})) {
    const f = fields.indexOf(key);
    if (f < 0 && extras.includes(key)) {
      if (typeof v !== 'number' || !Number.isFinite(v)) throw new InitialStateError(key, `the extra unknown ${key} takes a finite number, got ${JSON.stringify(v)}`);
      extraValues[key] = v;
      continue;
    }
    if (f < 0) throw new InitialStateError(key, `'${key}' is not accepted here (accepted: ${accepted})`);
    if (typeof v === 'number') {
      if (!Number.isFinite(v)) throw new InitialStateError(key, `${v} is not a finite number`);
      perField[f] = { value: v };
    } else if (typeof v === 'string') {
      let expr: CompiledScalar;
      try {
        expr = compileScalar(v, `initial for field '${key}'`, symbols);
      } catch (e) {
        throw new InitialStateError(key, (e as Error).message.replace(/^initial for field '[^']*': /, ''));
      }
      perField[f] = expr.constant ? { value: expr.value([]) } : { expr };
    } else {
      throw new InitialStateError(key, `expected a number or an expression in ${[...coordinates, ...names].join(', ')}`);
    }
  }
  const amplitude = new Float64Array(fields.length);
  if (spec.noise) {
    const a = spec.noise.amplitude;
    if (typeof a === 'number') {
      if (!(a >= 0 && Number.isFinite(a))) throw new InitialStateError('noise.amplitude', `${a} is not accepted (accepted: a number >= 0, or one per field)`);
      amplitude.fill(a);
    } else {
      for (const [key, v] of Object.entries(a)) {
        const f = fields.indexOf(key);
        if (f < 0) throw new InitialStateError('noise.amplitude', `'${key}' is not a field of the model (fields: ${fields.join(', ')})`);
        if (!(typeof v === 'number' && v >= 0 && Number.isFinite(v))) throw new InitialStateError(`noise.amplitude`, `${String(v)} for field ${key} is not accepted (accepted: a number >= 0)`);
        amplitude[f] = v;
      }
    }
    const s = spec.noise.seed;
    if (!Number.isInteger(s) || s < 0 || s > 4294967295) throw new InitialStateError('noise.seed', `${s} is not accepted (accepted: a whole number from 0 to 4294967295)`);
  }
  const noisy = amplitude.some((a) => a > 0);
  const empty = perField.every((x) => x === undefined) && Object.keys(extraValues).length === 0 && !noisy;

  return {
    spec,
    empty,
    build(p, base, seed) {
      const u0 = base ? Float64Array.from(base) : problem.initialGuess(p);
      if (u0.length !== problem.size) throw new Error(`the base state has ${u0.length} values, the problem has ${problem.size} unknowns`);
      let u = u0;
      if (perField.some((x) => x !== undefined) || noisy) {
        const { shape, data } = problem.toNodeArray(u0, p);
        const nodes = data.length / Math.max(1, fields.length);
        const axes = d.axes;
        const nx = axes[0]?.nodes ?? 1;
        const ny = axes[1]?.nodes ?? 1;
        const a = new Float64Array(symbols.length);
        names.forEach((name, j) => (a[j] = p[name] ?? Number.NaN));
        const x0 = names.length;
        perField.forEach((v, f) => {
          if (!v) return;
          const out = data.subarray(f * nodes, (f + 1) * nodes);
          if ('value' in v) {
            out.fill(v.value);
            return;
          }
          for (let k = 0; k < nodes; k++) {
            a[x0] = (k % nx) * axes[0].h;
            if (dim > 1) a[x0 + 1] = (Math.floor(k / nx) % ny) * axes[1].h;
            if (dim > 2) a[x0 + 2] = Math.floor(k / (nx * ny)) * axes[2].h;
            out[k] = v.expr.value(a);
          }
        });
        if (noisy) {
          const random = seededRandom(seed ?? spec.noise!.seed);
          for (let f = 0; f < fields.length; f++) {
            const A = amplitude[f];
            for (let k = 0; k < nodes; k++) {
              const r = random();
              if (A > 0) data[f * nodes + k] += A * (2 * r - 1);
            }
          }
        }
        u = problem.fromNodeArray(shape, data, p, extras.length ? u0.slice(problem.gridUnknowns) : undefined);
      }
      for (const [key, v] of Object.entries(extraValues)) u[problem.gridUnknowns + extras.indexOf(key)] = v;
      for (let i = 0; i < u.length; i++) {
        if (!Number.isFinite(u[i])) {
          const loc = problem.locateUnknown?.(i);
          const where = loc ? (loc.kind === 'extra' ? `the extra unknown ${loc.name}` : `field ${loc.field} at node (${loc.node.join(', ')})`) : `unknown ${i}`;
          throw new InitialStateError(loc?.kind === 'grid' ? loc.field : '', `the initial state is not finite at ${where} (an expression outside its domain?)`);
        }
      }
      return u;
    },
  };
}
