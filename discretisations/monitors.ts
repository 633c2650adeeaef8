/**
 * Standard monitors for grid problems: max, min and l2-norm of each field (names `max`, `min`,
 * `l2-norm` for single-field models, `max:u`, `min:u`, `l2-norm:u` per field otherwise), and
 * the value of a field at a named point.
 *
 * max and min run over every node of the field, dirichlet boundary values included (what a
 * plot of the field shows); l2-norm is sqrt(Σ w u²) over the field's unknowns with the
 * problem's quadrature weights (dirichlet nodes carry no weight).
 */
import type { Monitor, Params } from '../src/problem/problem.js';
import { type Grid, boundaryValue } from './grid.js';

export function fieldMonitors(grid: Grid, weights: Float64Array): Monitor[] {
  const out: Monitor[] = [];
  const single = grid.nf === 1;
  for (let f = 0; f < grid.nf; f++) {
    const name = grid.fields[f];
    const suffix = single ? '' : `:${name}`;
    const rows: number[] = [];
    for (let r = 0; r < grid.gridUnknowns; r++) if (grid.unknownField[r] === f) rows.push(r);
    const idx = Int32Array.from(rows);
    const dirichletSlots = grid.slots
      .map((s, k) => ({ s, k }))
      .filter(({ s }) => s.field === f && s.condition.kind === 'dirichlet')
      .map(({ s }) => s.condition as { value?: number | string });
    const boundaryExtreme = (p: Params, sign: number): number => {
      let m = -Infinity;
      for (const c of dirichletSlots) m = Math.max(m, sign * boundaryValue(c.value, p));
      return m;
    };
    out.push({
      name: `max${suffix}`,
      description: `largest value of ${name} over the grid nodes`,
      evaluate(u: Float64Array, p: Params): number {
        let m = boundaryExtreme(p, 1);
        for (let k = 0; k < idx.length; k++) if (u[idx[k]] > m) m = u[idx[k]];
        return m;
      },
    });
    out.push({
      name: `min${suffix}`,
      description: `smallest value of ${name} over the grid nodes`,
      evaluate(u: Float64Array, p: Params): number {
        let m = -boundaryExtreme(p, -1);
        for (let k = 0; k < idx.length; k++) if (u[idx[k]] < m) m = u[idx[k]];
        return m;
      },
    });
    out.push({
      name: `l2-norm${suffix}`,
      description: `L2 norm of ${name}, √(∫${name}²) by the grid's quadrature weights: it grows with the domain (√(domain size) for ${name} ≡ 1); divide by that for a root-mean-square`,
      evaluate(u: Float64Array): number {
        let s = 0;
        for (let k = 0; k < idx.length; k++) s += weights[idx[k]] * u[idx[k]] * u[idx[k]];
        return Math.sqrt(s);
      },
    });
  }
  return out;
}

/**
 * Value of field f at a physical point (multilinear interpolation between the nodes around it;
 * exactly the node value when the point is a node).
 */
export function pointMonitor(grid: Grid, name: string, description: string, f: number, at: readonly number[]): Monitor {
  if (at.length !== grid.dim) throw new Error(`monitor '${name}': point has ${at.length} coordinates, the grid is ${grid.dim}D`);
  // precompute the interpolation stencil: corners with weights
  const lo: number[] = [];
  const t: number[] = [];
  for (let a = 0; a < grid.dim; a++) {
    const ax = grid.axes[a];
    if (!Number.isFinite(at[a])) throw new Error(`monitor '${name}': coordinate ${at[a]} is not a number`);
    let s = at[a] / ax.h;
    if (ax.periodic) s = ((s % ax.intervals) + ax.intervals) % ax.intervals;
    else if (s < -1e-12 || s > ax.intervals + 1e-12) {
      throw new Error(`monitor '${name}': point ${at[a]} lies outside the domain [0, ${ax.length}] along ${ax.name}`);
    }
    s = Math.min(Math.max(s, 0), ax.intervals);
    // snap to a node when within round-off
    if (Math.abs(s - Math.round(s)) < 1e-9) s = Math.round(s);
    let i = Math.floor(s);
    if (!ax.periodic && i >= ax.intervals) i = ax.intervals - 1;
    lo.push(i);
    t.push(s - i);
  }
  const cornerIdx: number[] = [];
  const cornerW: number[] = [];
  const cornerCoords: number[][] = [];
  for (let m = 0; m < 1 << grid.dim; m++) {
    let w = 1;
    const c = [0, 0, 0];
    for (let a = 0; a < grid.dim; a++) {
      const up = (m >> a) & 1;
      w *= up ? t[a] : 1 - t[a];
      let i = lo[a] + up;
      if (grid.axes[a].periodic) i %= grid.axes[a].intervals;
      c[a] = i;
    }
    if (w === 0) continue;
    cornerIdx.push(grid.unknownIndex[grid.nodeNumber(c[0], c[1], c[2]) * grid.nf + f]);
    cornerW.push(w);
    cornerCoords.push(c);
  }
  return {
    name,
    description,
    evaluate(u: Float64Array, p: Params): number {
      let v = 0;
      for (let k = 0; k < cornerIdx.length; k++) {
        const r = cornerIdx[k];
        v += cornerW[k] * (r >= 0 ? u[r] : grid.dirichletNodeValue(f, cornerCoords[k], p));
      }
      return v;
    },
  };
}
