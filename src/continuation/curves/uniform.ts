/**
 * The uniform subspace of a discretised problem: states whose every field takes one value at
 * every node. For reaction–diffusion models with no-flux or periodic walls it is invariant
 * (the diffusion of a uniform state vanishes and the reaction acts node by node), and a field
 * with fixed walls (u = 0 eliminated) can only stay at its wall value (zero for homogeneous
 * conditions): `beam-foundation`'s straight state w = 0, Allen–Cahn's u = 0.
 *
 * Built from the Problem contract alone: the indicator vector e_f of field f is the state that
 * `fromNodeArray` makes of a node array with ones in field f and zeros elsewhere (eliminated
 * nodes drop out, extra unknowns are zero). A field is *free* (its value an unknown of the
 * reduced system) when the start state is uniform in it and J e_f stays in the span of the
 * indicators (checked at the start state); the other fields and the extra unknowns are *held*
 * at their start values. Reduced equations are weighted field averages of F.
 */
import type { Params, Problem } from '../../problem/problem.js';
import { weightedDot } from '../../problem/problem.js';

export interface UniformField {
  name: string;
  /** Indicator vector e_f (length problem.size). */
  indicator: Float64Array;
  /** ⟨e_f, e_f⟩_w: the domain measure of the field. */
  measure: number;
}

export interface UniformSubspace {
  /** Fields whose uniform value is an unknown. */
  free: UniformField[];
  /** Fields held at their start value (fixed walls), by name. */
  held: string[];
  /** The held part of the state: held fields and extra unknowns at their start values, free fields zero. */
  fixed: Float64Array;
}

/** Relative deviation from the span of the indicators above which a field counts as not invariant. */
const invarianceTolerance = 1e-9;

/** Indicator vectors of every field (nodes of field f set to one). */
export function fieldIndicators(problem: Problem, u: Float64Array, p: Params): { name: string; indicator: Float64Array }[] {
  const fields = problem.describe().fields;
  const { shape } = problem.toNodeArray(u, p);
  const nodes = shape.slice(1).reduce((a, b) => a * b, 1);
  const zeroExtras = new Float64Array(problem.extraUnknowns.length);
  return fields.map((name, f) => {
    const data = new Float64Array(shape.reduce((a, b) => a * b, 1));
    data.fill(1, f * nodes, (f + 1) * nodes);
    const e = problem.fromNodeArray(shape, data, p, zeroExtras.length ? zeroExtras : undefined);
    // a model may leave initial-guess values in places the node array does not reach: keep 0/1 only
    for (let i = 0; i < e.length; i++) e[i] = i < problem.gridUnknowns && e[i] === 1 ? 1 : 0;
    return { name, indicator: e };
  });
}

/**
 * The uniform subspace through the state u (see the header). Throws an Error naming the field
 * when u is not uniform.
 */
export function uniformSubspace(problem: Problem, u: Float64Array, p: Params): UniformSubspace {
  const n = problem.size;
  const w = problem.weights;
  const indicators = fieldIndicators(problem, u, p);
  // the state made exactly uniform (each field at its weighted average) before J is looked at:
  // at a state uniform only to rounding J e_f leaves the span of the indicators by as much
  const level = u.slice();
  for (const { name, indicator } of indicators) {
    let lo = Infinity;
    let hi = -Infinity;
    let count = 0;
    for (let i = 0; i < n; i++) {
      if (indicator[i] !== 1) continue;
      count++;
      lo = Math.min(lo, u[i]);
      hi = Math.max(hi, u[i]);
    }
    if (count === 0) continue;
    // uniform up to what a converged Newton point near a branch point keeps: the corrector stops
    // at its residual tolerance, and along the nearly singular critical mode that leaves a
    // variation of about tolerance / |smallest eigenvalue| (1e-9 relative seen on the Turing
    // lines); the curve then holds each field at its average. A state off the uniform branch
    // varies by √(distance to the branch point) — below 1e-6 only within 1e-12 of it
    if (hi - lo > 1e-6 * Math.max(1, Math.abs(lo), Math.abs(hi))) {
      throw new Error(`the state is not uniform: field ${name} varies from ${lo} to ${hi} (a branch-point curve follows a uniform state)`);
    }
    const mean = weightedDot(w, indicator, u) / weightedDot(w, indicator, indicator);
    for (let i = 0; i < n; i++) if (indicator[i] === 1) level[i] = mean;
  }
  const jac = new Float64Array(problem.pattern().colPtr[n]);
  problem.jacobian(level, p, jac);
  const pat = problem.pattern();
  const je = new Float64Array(n);
  const free: UniformField[] = [];
  const held: string[] = [];
  const fixed = level.slice();
  for (const { name, indicator } of indicators) {
    if (!indicator.some((x) => x === 1)) continue;
    // J e_f in the span of the indicators?
    je.fill(0);
    for (let j = 0; j < n; j++) {
      if (indicator[j] === 0) continue;
      for (let k = pat.colPtr[j]; k < pat.colPtr[j + 1]; k++) je[pat.rowIdx[k]] += jac[k];
    }
    let scale = 0;
    for (let i = 0; i < n; i++) scale = Math.max(scale, Math.abs(je[i]));
    const residual = je.slice();
    for (const other of indicators) {
      const m = weightedDot(w, other.indicator, other.indicator);
      if (!(m > 0)) continue;
      const a = weightedDot(w, other.indicator, je) / m;
      for (let i = 0; i < n; i++) residual[i] -= a * other.indicator[i];
    }
    let dev = 0;
    for (let i = 0; i < n; i++) dev = Math.max(dev, Math.abs(residual[i]));
    if (dev <= invarianceTolerance * Math.max(1, scale)) {
      free.push({ name, indicator, measure: weightedDot(w, indicator, indicator) });
      for (let i = 0; i < n; i++) if (indicator[i] === 1) fixed[i] = 0;
    } else {
      held.push(name);
    }
  }
  return { free, held, fixed };
}

/** The state fixed + Σ c_f e_f. */
export function uniformState(space: UniformSubspace, c: ArrayLike<number>, out?: Float64Array): Float64Array {
  const u = out ?? new Float64Array(space.fixed.length);
  u.set(space.fixed);
  space.free.forEach((f, k) => {
    const e = f.indicator;
    for (let i = 0; i < u.length; i++) if (e[i] === 1) u[i] += c[k];
  });
  return u;
}

/** The weighted average of a vector over each free field's nodes. */
export function fieldAverages(space: UniformSubspace, weights: Float64Array, x: Float64Array, out: Float64Array): void {
  space.free.forEach((f, k) => {
    out[k] = weightedDot(weights, f.indicator, x) / f.measure;
  });
}
