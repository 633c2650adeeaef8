/**
 * Uniform tensor grids (1D, 2D, 3D), vertex-centred, with boundary conditions per field and per
 * side, and the layout of the unknown vector.
 *
 * Grid: `intervals` N per axis, h = length / N, nodes at x_i = i·h. Along an axis the node array
 * holds nodes 0..N (periodic axes: 0..N−1, node N is node 0). Which of those nodes are unknowns
 * depends on the field's boundary condition on each side:
 *   - dirichlet: the boundary node is eliminated (its value is known), not an algebraic row;
 *   - neumann / robin: the boundary node is an unknown; the stencil uses a ghost node
 *     (central differences), u_ghost = u_mirror + 2h·(g − β·u_boundary);
 *   - periodic: both sides of the axis, for every field; nodes 0..N−1 are unknowns.
 * So doubling `intervals` halves h for every boundary type.
 *
 * Boundary conditions use the outward normal n:
 *   dirichlet  u = value
 *   neumann    ∂u/∂n = flux
 *   robin      ∂u/∂n + coefficient·u = value
 * Each number may instead be a parameter name (the value is then read from the parameters at
 * every evaluation, and parameter derivatives account for it).
 *
 * Unknown layout — interleaved: the nodes are visited in C order of the node array (x fastest,
 * then y, then z), and at each node the fields that are unknowns there follow in field order.
 * Why interleaved rather than blocked: the sparse LU applies a fill-reducing ordering of its own
 * (AMD or nested dissection), so its fill barely depends on our numbering; interleaving keeps a
 * node's fields adjacent, which makes the per-node reaction terms and their small dense
 * Jacobian blocks cheap to gather and scatter, and keeps the unordered matrix banded.
 * Extra global unknowns (multipliers, drift speeds) come after all grid unknowns.
 */
import type { AxisDescription, BoundaryKind, GridOptions, Params } from '../src/problem/problem.js';

/** A boundary datum: a fixed number, or the name of a parameter whose value is used. */
export type BoundaryValue = number | string;

export type BoundaryCondition =
  | { readonly kind: 'dirichlet'; readonly value?: BoundaryValue }
  | { readonly kind: 'neumann'; readonly flux?: BoundaryValue }
  | { readonly kind: 'robin'; readonly coefficient: BoundaryValue; readonly value?: BoundaryValue }
  | { readonly kind: 'periodic' };

/** Side names: the low and high end of each axis. */
export const sideNames = ['xmin', 'xmax', 'ymin', 'ymax', 'zmin', 'zmax'] as const;
export type SideName = (typeof sideNames)[number];

/**
 * Boundary conditions of one field: per side, with `all` as the default for sides not named.
 * A missing side with no `all` is an error.
 */
export type FieldBoundaries = Partial<Record<SideName | 'all', BoundaryCondition>>;

const axisNames = ['x', 'y', 'z'] as const;

/** Resolved boundary condition of one (field, axis, side) — a "slot". */
export interface BoundarySlot {
  readonly field: number;
  readonly axis: number;
  /** 0 = low side (xmin), 1 = high side (xmax). */
  readonly side: 0 | 1;
  readonly condition: BoundaryCondition;
}

export interface GridAxis extends AxisDescription {
  readonly periodic: boolean;
}

/** Resolve a boundary datum at parameters p. */
export function boundaryValue(v: BoundaryValue | undefined, p: Params): number {
  if (v === undefined) return 0;
  if (typeof v === 'number') return v;
  const x = p[v];
  if (x === undefined) throw new Error(`boundary condition refers to parameter '${v}', which the model does not have`);
  return x;
}

/** ∂(boundary datum)/∂(parameter `name`): 1 when the datum is that parameter, else 0. */
export function boundaryValueDerivative(v: BoundaryValue | undefined, name: string): number {
  return typeof v === 'string' && v === name ? 1 : 0;
}

function checkPositiveInteger(v: unknown, what: string, min: number): number {
  if (typeof v !== 'number' || !Number.isInteger(v) || v < min) {
    throw new Error(`${what} must be an integer >= ${min}, got ${String(v)}`);
  }
  return v;
}

/**
 * The grid, the boundary conditions of every field and the unknown numbering. Immutable after
 * construction; every index map is a typed array.
 */
export class Grid {
  readonly dim: number;
  readonly axes: readonly GridAxis[];
  readonly fields: readonly string[];
  readonly nf: number;
  /** Node array shape in C order: [nz, ny, nx] with absent axes dropped. */
  readonly nodeShape: readonly number[];
  /** Nodes along x, y, z (1 for absent axes). */
  readonly nx: number;
  readonly ny: number;
  readonly nz: number;
  readonly nodeCount: number;
  /** Boundary slots, index slot = (field·dim + axis)·2 + side. */
  readonly slots: readonly BoundarySlot[];
  /** unknownIndex[node·nf + f]: unknown number, or −1 where field f is eliminated (dirichlet). */
  readonly unknownIndex: Int32Array;
  /** Node and field of each grid unknown. */
  readonly unknownNode: Int32Array;
  readonly unknownField: Int32Array;
  readonly gridUnknowns: number;

  constructor(options: GridOptions, fields: readonly string[], boundaries: readonly FieldBoundaries[] | FieldBoundaries) {
    if (!options || !Array.isArray(options.intervals)) {
      throw new Error(`grid.intervals must be a list of 1 to 3 integers (intervals per axis)`);
    }
    const dim = options.intervals.length;
    if (dim < 1 || dim > 3) throw new Error(`grid.intervals must have 1 to 3 entries (one per axis), got ${dim}`);
    if (options.length !== undefined && !Array.isArray(options.length)) {
      throw new Error(`grid.length must be a list of positive numbers (one per axis), got ${String(options.length)}`);
    }
    if (options.length !== undefined && options.length.length !== dim) {
      throw new Error(`grid.length has ${options.length.length} entries but grid.intervals has ${dim}; give one length per axis`);
    }
    if (fields.length < 1) throw new Error(`a model needs at least one field`);
    if (new Set(fields).size !== fields.length) throw new Error(`field names must be distinct, got ${fields.join(', ')}`);
    this.dim = dim;
    this.fields = fields;
    const nf = fields.length;
    this.nf = nf;

    const perField: FieldBoundaries[] = Array.isArray(boundaries)
      ? (boundaries as FieldBoundaries[])
      : fields.map(() => boundaries as FieldBoundaries);
    if (perField.length !== nf) {
      throw new Error(`boundary conditions given for ${perField.length} fields, the model has ${nf} (${fields.join(', ')})`);
    }

    // resolve slots
    const slots: BoundarySlot[] = [];
    for (let f = 0; f < nf; f++) {
      const fb = perField[f];
      for (const key of Object.keys(fb)) {
        const ok = key === 'all' || sideNames.slice(0, 2 * dim).includes(key as SideName);
        if (!ok) {
          throw new Error(
            `boundary of field '${fields[f]}': unknown side '${key}' for a ${dim}D grid (accepted: all, ${sideNames.slice(0, 2 * dim).join(', ')})`,
          );
        }
      }
      for (let a = 0; a < dim; a++) {
        for (const s of [0, 1] as const) {
          const name = sideNames[2 * a + s];
          const c = fb[name] ?? fb.all;
          if (!c) {
            throw new Error(`boundary of field '${fields[f]}': no condition for side '${name}' (give it, or 'all')`);
          }
          validateCondition(c, `boundary of field '${fields[f]}' on side '${name}'`);
          slots.push({ field: f, axis: a, side: s, condition: c });
        }
      }
    }
    this.slots = slots;

    // axes; periodic must hold on both sides for every field
    const axes: GridAxis[] = [];
    for (let a = 0; a < dim; a++) {
      let periodicCount = 0;
      for (let f = 0; f < nf; f++) {
        for (const s of [0, 1]) if (this.slot(f, a, s as 0 | 1).condition.kind === 'periodic') periodicCount++;
      }
      if (periodicCount !== 0 && periodicCount !== 2 * nf) {
        throw new Error(
          `axis ${axisNames[a]}: periodic boundaries must be set on both sides (${sideNames[2 * a]}, ${sideNames[2 * a + 1]}) for every field`,
        );
      }
      const periodic = periodicCount > 0;
      const N = checkPositiveInteger(options.intervals[a], `grid.intervals[${a}] (axis ${axisNames[a]})`, periodic ? 3 : 2);
      const L = options.length ? options.length[a] : 1;
      if (typeof L !== 'number' || !(L > 0) || !Number.isFinite(L)) {
        throw new Error(`grid.length[${a}] (axis ${axisNames[a]}) must be a positive number, got ${String(L)}`);
      }
      axes.push({ name: axisNames[a], intervals: N, length: L, h: L / N, nodes: periodic ? N : N + 1, periodic });
    }
    this.axes = axes;
    this.nx = axes[0].nodes;
    this.ny = dim > 1 ? axes[1].nodes : 1;
    this.nz = dim > 2 ? axes[2].nodes : 1;
    this.nodeCount = this.nx * this.ny * this.nz;
    this.nodeShape = axes.map((ax) => ax.nodes).reverse();

    // unknown numbering: nodes in C order, fields innermost
    const idx = new Int32Array(this.nodeCount * nf).fill(-1);
    const coords = [0, 0, 0];
    let count = 0;
    for (let node = 0; node < this.nodeCount; node++) {
      this.nodeCoordinates(node, coords);
      for (let f = 0; f < nf; f++) {
        if (this.isEliminated(f, coords)) continue;
        idx[node * nf + f] = count++;
      }
    }
    this.unknownIndex = idx;
    this.gridUnknowns = count;
    if (count === 0) throw new Error(`the grid has no unknowns (every node is a dirichlet boundary node)`);
    this.unknownNode = new Int32Array(count);
    this.unknownField = new Int32Array(count);
    for (let k = 0; k < idx.length; k++) {
      const r = idx[k];
      if (r >= 0) {
        this.unknownNode[r] = Math.floor(k / nf);
        this.unknownField[r] = k % nf;
      }
    }
  }

  slotIndex(field: number, axis: number, side: 0 | 1): number {
    return (field * this.dim + axis) * 2 + side;
  }

  slot(field: number, axis: number, side: 0 | 1): BoundarySlot {
    return this.slots[this.slotIndex(field, axis, side)];
  }

  /** Integer node coordinates (i, j, k) of a node number (absent axes give 0). */
  nodeCoordinates(node: number, out: number[] | Int32Array): void {
    out[0] = node % this.nx;
    const r = (node - out[0]) / this.nx;
    out[1] = r % this.ny;
    out[2] = (r - out[1]) / this.ny;
  }

  /** Node number of integer coordinates (i, j, k). */
  nodeNumber(i: number, j = 0, k = 0): number {
    return i + this.nx * (j + this.ny * k);
  }

  /** Physical coordinates x_i = i·h of a node (length dim). */
  position(node: number, out: Float64Array | number[]): void {
    const c = [0, 0, 0];
    this.nodeCoordinates(node, c);
    for (let a = 0; a < this.dim; a++) out[a] = c[a] * this.axes[a].h;
  }

  /** Whether field f is eliminated (a dirichlet boundary node) at integer coordinates c. */
  isEliminated(f: number, c: ArrayLike<number>): boolean {
    for (let a = 0; a < this.dim; a++) {
      const N = this.axes[a].intervals;
      if (this.axes[a].periodic) continue;
      if (c[a] === 0 && this.slot(f, a, 0).condition.kind === 'dirichlet') return true;
      if (c[a] === N && this.slot(f, a, 1).condition.kind === 'dirichlet') return true;
    }
    return false;
  }

  /**
   * Dirichlet slots that eliminate field f at integer coordinates c (one at a face, two or three
   * at edges and corners, where the node value is their average).
   */
  eliminatingSlots(f: number, c: ArrayLike<number>): number[] {
    const out: number[] = [];
    for (let a = 0; a < this.dim; a++) {
      if (this.axes[a].periodic) continue;
      const N = this.axes[a].intervals;
      if (c[a] === 0 && this.slot(f, a, 0).condition.kind === 'dirichlet') out.push(this.slotIndex(f, a, 0));
      if (c[a] === N && this.slot(f, a, 1).condition.kind === 'dirichlet') out.push(this.slotIndex(f, a, 1));
    }
    return out;
  }

  /**
   * Quadrature weight of each grid unknown: Π_axes h_a, halved along every axis on which the
   * node lies on a neumann or robin boundary (trapezoid rule). sqrt(Σ w u²) is then a discrete
   * L2 norm of the field over the domain.
   */
  unknownWeights(): Float64Array {
    const w = new Float64Array(this.gridUnknowns);
    const c = [0, 0, 0];
    let base = 1;
    for (const ax of this.axes) base *= ax.h;
    for (let r = 0; r < this.gridUnknowns; r++) {
      const f = this.unknownField[r];
      this.nodeCoordinates(this.unknownNode[r], c);
      let wr = base;
      for (let a = 0; a < this.dim; a++) {
        if (this.axes[a].periodic) continue;
        if (c[a] === 0 || c[a] === this.axes[a].intervals) {
          const kind = this.slot(f, a, c[a] === 0 ? 0 : 1).condition.kind;
          if (kind === 'neumann' || kind === 'robin') wr *= 0.5;
        }
      }
      w[r] = wr;
    }
    return w;
  }

  /** Boundary kind per axis and side for a field (for descriptions). */
  boundaryKinds(field: number): BoundaryKind[][] {
    const out: BoundaryKind[][] = [];
    for (let a = 0; a < this.dim; a++) out.push([this.slot(field, a, 0).condition.kind, this.slot(field, a, 1).condition.kind]);
    return out;
  }

  /** Axis descriptions for ProblemDescription. */
  describeAxes(): AxisDescription[] {
    return this.axes.map(({ name, intervals, length, h, nodes }) => ({ name, intervals, length, h, nodes }));
  }

  /** Shape of node arrays: (fields, nz, ny, nx) with absent axes dropped. */
  nodeArrayShape(): number[] {
    return [this.nf, ...this.nodeShape];
  }

  /** One-paragraph description of the unknown layout (for describe()). */
  layoutText(extras: readonly string[] = []): string {
    const ex = extras.length ? `; then the extra unknowns ${extras.join(', ')}` : '';
    return (
      `interleaved: nodes in C order of the (${['z', 'y', 'x'].slice(3 - this.dim).join(', ')}) node array (x fastest), ` +
      `at each node the unknown fields in the order ${this.fields.join(', ')}; dirichlet boundary nodes are left out per field${ex}`
    );
  }

  /** Where a grid unknown sits: its field name and integer node coordinates. */
  locate(r: number): { field: string; node: number[] } {
    const c = [0, 0, 0];
    this.nodeCoordinates(this.unknownNode[r], c);
    return { field: this.fields[this.unknownField[r]], node: c.slice(0, this.dim) };
  }

  /**
   * Values of every (node, field) pair in the node-array layout (fields outermost), dirichlet
   * nodes filled from the boundary data at p (edges/corners: average of the meeting sides).
   */
  toNodeArray(u: Float64Array, p: Params): { shape: number[]; data: Float64Array } {
    const n = this.nodeCount;
    const data = new Float64Array(this.nf * n);
    const c = [0, 0, 0];
    for (let node = 0; node < n; node++) {
      for (let f = 0; f < this.nf; f++) {
        const r = this.unknownIndex[node * this.nf + f];
        if (r >= 0) {
          data[f * n + node] = u[r];
        } else {
          this.nodeCoordinates(node, c);
          data[f * n + node] = this.dirichletNodeValue(f, c, p);
        }
      }
    }
    return { shape: this.nodeArrayShape(), data };
  }

  /** Value of an eliminated node (average of the dirichlet values of the sides it lies on). */
  dirichletNodeValue(f: number, c: ArrayLike<number>, p: Params): number {
    const s = this.eliminatingSlots(f, c);
    let v = 0;
    for (const k of s) v += boundaryValue((this.slots[k].condition as { value?: BoundaryValue }).value, p);
    return s.length ? v / s.length : 0;
  }

  /** Read the grid unknowns from a node array (shape checked). */
  fromNodeArray(shape: readonly number[], data: Float64Array, out: Float64Array): void {
    const expected = this.nodeArrayShape();
    const same = shape.length === expected.length && shape.every((s, i) => s === expected[i]);
    if (!same) {
      throw new Error(
        `solution array has shape (${shape.join(', ')}), this grid needs (${expected.join(', ')}) = (fields${this.dim > 2 ? ', nz' : ''}${this.dim > 1 ? ', ny' : ''}, nx)`,
      );
    }
    if (data.length !== this.nf * this.nodeCount) {
      throw new Error(`solution array holds ${data.length} values, shape (${shape.join(', ')}) needs ${this.nf * this.nodeCount}`);
    }
    const n = this.nodeCount;
    for (let r = 0; r < this.gridUnknowns; r++) out[r] = data[this.unknownField[r] * n + this.unknownNode[r]];
  }

  /**
   * Value of field f at a physical point by multilinear interpolation of the node values
   * (`nodeValues` as from toNodeArray). Periodic axes wrap.
   */
  interpolate(nodeValues: Float64Array, f: number, point: readonly number[]): number {
    const lo = [0, 0, 0];
    const t = [0, 0, 0];
    for (let a = 0; a < this.dim; a++) {
      const ax = this.axes[a];
      let s = point[a] / ax.h;
      if (ax.periodic) s = ((s % ax.intervals) + ax.intervals) % ax.intervals;
      else if (s < 0 || s > ax.intervals) {
        throw new Error(`point ${point[a]} lies outside the domain [0, ${ax.length}] along ${ax.name}`);
      }
      let i = Math.floor(s);
      if (!ax.periodic && i >= ax.intervals) i = ax.intervals - 1;
      lo[a] = i;
      t[a] = s - i;
    }
    let v = 0;
    const corners = 1 << this.dim;
    const base = f * this.nodeCount;
    for (let m = 0; m < corners; m++) {
      let wgt = 1;
      const c = [0, 0, 0];
      for (let a = 0; a < this.dim; a++) {
        const up = (m >> a) & 1;
        wgt *= up ? t[a] : 1 - t[a];
        let i = lo[a] + up;
        if (this.axes[a].periodic) i %= this.axes[a].intervals;
        c[a] = i;
      }
      if (wgt === 0) continue;
      v += wgt * nodeValues[base + this.nodeNumber(c[0], c[1], c[2])];
    }
    return v;
  }
}

function validateCondition(c: BoundaryCondition, where: string): void {
  const checkValue = (v: unknown, key: string): void => {
    if (v === undefined) return;
    if (typeof v === 'number') {
      if (!Number.isFinite(v)) throw new Error(`${where}: ${key} must be a finite number, got ${v}`);
      return;
    }
    if (typeof v !== 'string' || v.length === 0) throw new Error(`${where}: ${key} must be a number or a parameter name, got ${String(v)}`);
  };
  switch (c.kind) {
    case 'dirichlet':
      checkValue(c.value, 'value');
      return;
    case 'neumann':
      checkValue(c.flux, 'flux');
      return;
    case 'robin':
      if (c.coefficient === undefined) throw new Error(`${where}: a robin condition needs a coefficient (∂u/∂n + coefficient·u = value)`);
      checkValue(c.coefficient, 'coefficient');
      checkValue(c.value, 'value');
      return;
    case 'periodic':
      return;
    default:
      throw new Error(`${where}: unknown boundary kind '${(c as { kind: unknown }).kind}' (accepted: dirichlet, neumann, robin, periodic)`);
  }
}

/** The parameter names a set of boundary conditions refers to. */
export function boundaryParameterNames(grid: Grid): string[] {
  const names = new Set<string>();
  for (const s of grid.slots) {
    const c = s.condition as { value?: BoundaryValue; flux?: BoundaryValue; coefficient?: BoundaryValue };
    for (const v of [c.value, c.flux, c.coefficient]) if (typeof v === 'string') names.add(v);
  }
  return [...names];
}
