/**
 * Linear finite-difference operators on a Grid, with boundary conditions folded in.
 *
 * An operator acting on field f is stored as
 *     (L u)_r = Σ_k coef_k · u[col_k]                     (CSR over the grid unknowns)
 *             + Σ affine terms of row r                     (boundary data)
 * where each affine term is one of
 *     value:  coef · (dirichlet value of its slot)          — an eliminated neighbour
 *     flux:   coef · g (neumann flux, or robin value)       — from a ghost node
 *     robin:  coef · β · u_r (β the robin coefficient)      — from a ghost node; linear in u
 * Boundary data may be parameters, so the affine terms are kept symbolic (by slot) and resolved
 * at every evaluation (BoundaryData). Operators are built once; applying one allocates nothing.
 *
 * Stencils (second order, central):
 *   - three-point operators along an axis (Laplacian, variable-coefficient Laplacian, first
 *     derivative), with ghost nodes on neumann/robin sides, u_ghost = u_mirror + 2h(g − β u_b);
 *   - the 1D fourth derivative (1, −4, 6, −4, 1)/h⁴ for beams with pinned (w = w'' = 0) or
 *     clamped (w = w' = 0) ends; the field must be dirichlet (w = value) at both ends.
 */
import type { Params } from '../src/problem/problem.js';
import { type Grid, type BoundaryValue, boundaryValue, boundaryValueDerivative } from './grid.js';

export const AFFINE_VALUE = 0;
export const AFFINE_FLUX = 1;
export const AFFINE_ROBIN = 2;

export interface LinearOperator {
  /** Number of rows and columns (the grid unknowns). */
  readonly size: number;
  readonly rowPtr: Int32Array;
  readonly col: Int32Array;
  readonly coef: Float64Array;
  readonly affineRow: Int32Array;
  readonly affineSlot: Int32Array;
  /** AFFINE_VALUE, AFFINE_FLUX or AFFINE_ROBIN. */
  readonly affineKind: Uint8Array;
  readonly affineCoef: Float64Array;
}

/** Resolved boundary data per slot (see Grid.slots): dirichlet value, flux g, robin β. */
export class BoundaryData {
  readonly value: Float64Array;
  readonly flux: Float64Array;
  readonly beta: Float64Array;

  constructor(private readonly grid: Grid) {
    const n = grid.slots.length;
    this.value = new Float64Array(n);
    this.flux = new Float64Array(n);
    this.beta = new Float64Array(n);
  }

  /** Resolve every slot at parameters p. */
  resolve(p: Params): this {
    const slots = this.grid.slots;
    for (let s = 0; s < slots.length; s++) {
      const c = slots[s].condition;
      this.value[s] = 0;
      this.flux[s] = 0;
      this.beta[s] = 0;
      if (c.kind === 'dirichlet') this.value[s] = boundaryValue(c.value, p);
      else if (c.kind === 'neumann') this.flux[s] = boundaryValue(c.flux, p);
      else if (c.kind === 'robin') {
        this.flux[s] = boundaryValue(c.value, p);
        this.beta[s] = boundaryValue(c.coefficient, p);
      }
    }
    return this;
  }

  /** Fill with ∂(data)/∂(parameter name) (1 where a datum is that parameter). Returns whether any is non-zero. */
  derivative(name: string): boolean {
    const slots = this.grid.slots;
    let any = false;
    const d = (v: BoundaryValue | undefined): number => {
      const x = boundaryValueDerivative(v, name);
      if (x !== 0) any = true;
      return x;
    };
    for (let s = 0; s < slots.length; s++) {
      const c = slots[s].condition;
      this.value[s] = 0;
      this.flux[s] = 0;
      this.beta[s] = 0;
      if (c.kind === 'dirichlet') this.value[s] = d(c.value);
      else if (c.kind === 'neumann') this.flux[s] = d(c.flux);
      else if (c.kind === 'robin') {
        this.flux[s] = d(c.value);
        this.beta[s] = d(c.coefficient);
      }
    }
    return any;
  }

  /** Whether any slot datum depends on parameter `name`. */
  dependsOn(name: string): boolean {
    for (const s of this.grid.slots) {
      const c = s.condition as { value?: BoundaryValue; flux?: BoundaryValue; coefficient?: BoundaryValue };
      if (c.value === name || c.flux === name || c.coefficient === name) return true;
    }
    return false;
  }
}

/** Position weights of a three-point stencil at a node: [low neighbour, centre, high neighbour]. */
export type ThreePointWeights = (position: Float64Array, h: number) => readonly [number, number, number];

/** Fourth-derivative end condition (the field is dirichlet at that end). */
export type BeamEnd = 'pinned' | 'clamped';

class Growable {
  rows = new Int32Array(1024);
  cols = new Int32Array(1024);
  vals = new Float64Array(1024);
  kinds = new Uint8Array(1024);
  n = 0;
  push(r: number, c: number, v: number, k = 0): void {
    if (this.n === this.rows.length) {
      const cap = this.n * 2;
      const grow = <T extends Int32Array | Float64Array | Uint8Array>(a: T, make: (n: number) => T): T => {
        const b = make(cap);
        b.set(a);
        return b;
      };
      this.rows = grow(this.rows, (n) => new Int32Array(n));
      this.cols = grow(this.cols, (n) => new Int32Array(n));
      this.vals = grow(this.vals, (n) => new Float64Array(n));
      this.kinds = grow(this.kinds, (n) => new Uint8Array(n));
    }
    this.rows[this.n] = r;
    this.cols[this.n] = c;
    this.vals[this.n] = v;
    this.kinds[this.n] = k;
    this.n++;
  }
}

/**
 * Collects stencil entries of a linear operator on a grid. Add several stencils (scaled) to one
 * builder to get their sum; `build()` merges duplicate entries.
 */
export class OperatorBuilder {
  private readonly entries = new Growable();
  private readonly affine = new Growable();
  private readonly coords = [0, 0, 0];
  private readonly pos: Float64Array;

  constructor(readonly grid: Grid) {
    this.pos = new Float64Array(grid.dim);
  }

  /** Add coef·u[col] to row r directly (grid unknown numbers). */
  add(row: number, col: number, coef: number): this {
    this.entries.push(row, col, coef);
    return this;
  }

  /** Add an affine boundary term to a row. */
  addAffine(row: number, slot: number, kind: number, coef: number): this {
    this.affine.push(row, slot, coef, kind);
    return this;
  }

  /** coef · u for field f (every unknown of the field). */
  identity(field: number, coef = 1): this {
    const g = this.grid;
    for (let r = 0; r < g.gridUnknowns; r++) if (g.unknownField[r] === field) this.add(r, r, coef);
    return this;
  }

  /**
   * Contribution of "coef · u at integer coordinates c" (a node of the node array along every
   * axis except possibly `axis`, where c[axis] may be −1 or N+1 for a ghost) to row r.
   */
  private addNodeValue(r: number, field: number, axis: number, c: number[], coef: number, centre: number): void {
    const g = this.grid;
    const ax = g.axes[axis];
    const N = ax.intervals;
    let i = c[axis];
    if (ax.periodic) {
      i = ((i % N) + N) % N;
      const cc = c.slice();
      cc[axis] = i;
      this.add(r, g.unknownIndex[g.nodeNumber(cc[0], cc[1], cc[2]) * g.nf + field], coef);
      return;
    }
    if (i < 0 || i > N) {
      // ghost node beyond side s: u_ghost = u_mirror + 2h(g − β u_boundary)
      const side: 0 | 1 = i < 0 ? 0 : 1;
      const slot = g.slotIndex(field, axis, side);
      const kind = g.slots[slot].condition.kind;
      if (kind !== 'neumann' && kind !== 'robin') {
        throw new Error(`internal: ghost node on a ${kind} side`);
      }
      const b = side === 0 ? 0 : N;
      const mirror = 2 * b - i;
      const cc = c.slice();
      cc[axis] = mirror;
      this.addNodeValue(r, field, axis, cc, coef, centre);
      this.addAffine(r, slot, AFFINE_FLUX, coef * 2 * ax.h);
      if (kind === 'robin') {
        if (i !== b - 1 && i !== b + 1) throw new Error(`internal: robin ghost two nodes out`);
        // β multiplies the boundary node value: the row's own unknown when the row sits on it
        cc[axis] = b;
        const rb = g.unknownIndex[g.nodeNumber(cc[0], cc[1], cc[2]) * g.nf + field];
        if (rb !== r) throw new Error(`internal: robin ghost used away from its boundary node`);
        this.addAffine(r, slot, AFFINE_ROBIN, -coef * 2 * ax.h);
      }
      return;
    }
    const node = g.nodeNumber(c[0], c[1], c[2]);
    const k = g.unknownIndex[node * g.nf + field];
    if (k >= 0) {
      this.add(r, k, coef);
      return;
    }
    // an eliminated (dirichlet) node: its value enters as a constant
    const slots = g.eliminatingSlots(field, c);
    for (const s of slots) this.addAffine(r, s, AFFINE_VALUE, coef / slots.length);
  }

  /**
   * A three-point stencil along `axis` for field f: at each unknown, weights(x, h) give the
   * coefficients of the low neighbour, the node and the high neighbour. Scaled by `scale`.
   */
  threePoint(field: number, axis: number, weights: ThreePointWeights, scale = 1): this {
    const g = this.grid;
    if (axis < 0 || axis >= g.dim) throw new Error(`axis ${axis} does not exist on a ${g.dim}D grid`);
    const h = g.axes[axis].h;
    const c = this.coords;
    for (let r = 0; r < g.gridUnknowns; r++) {
      if (g.unknownField[r] !== field) continue;
      const node = g.unknownNode[r];
      g.nodeCoordinates(node, c);
      g.position(node, this.pos);
      const [wl, wc, wh] = weights(this.pos, h);
      const i = c[axis];
      if (wc !== 0) this.add(r, r, scale * wc);
      if (wl !== 0) {
        const cc = c.slice();
        cc[axis] = i - 1;
        this.addNodeValue(r, field, axis, cc, scale * wl, r);
      }
      if (wh !== 0) {
        const cc = c.slice();
        cc[axis] = i + 1;
        this.addNodeValue(r, field, axis, cc, scale * wh, r);
      }
    }
    return this;
  }

  /**
   * Laplacian Σ_a ∂_a(κ ∂_a u) of field f, second order: κ (default 1) is evaluated at the
   * half-way points, (κ_{i+½}(u_{i+1} − u_i) − κ_{i−½}(u_i − u_{i−1}))/h². Scaled by `scale`.
   */
  laplacian(field: number, scale = 1, kappa?: (x: Float64Array) => number): this {
    for (let a = 0; a < this.grid.dim; a++) {
      if (!kappa) {
        this.threePoint(field, a, (_x, h) => [1 / (h * h), -2 / (h * h), 1 / (h * h)], scale);
      } else {
        const y = new Float64Array(this.grid.dim);
        this.threePoint(
          field,
          a,
          (x, h) => {
            y.set(x);
            y[a] = x[a] - h / 2;
            const kl = kappa(y);
            y[a] = x[a] + h / 2;
            const kh = kappa(y);
            return [kl / (h * h), -(kl + kh) / (h * h), kh / (h * h)];
          },
          scale,
        );
      }
    }
    return this;
  }

  /** Central first derivative ∂_a u of field f, (u_{i+1} − u_{i−1})/(2h). Scaled by `scale`. */
  firstDerivative(field: number, axis: number, scale = 1): this {
    return this.threePoint(field, axis, (_x, h) => [-1 / (2 * h), 0, 1 / (2 * h)], scale);
  }

  /**
   * Fourth derivative d⁴w/dx⁴ of field f on a 1D grid, (w_{i−2} − 4w_{i−1} + 6w_i − 4w_{i+1} +
   * w_{i+2})/h⁴, with w dirichlet at both ends and ghost nodes from the end conditions:
   * pinned (w'' = 0): w_{−1} = 2w_0 − w_1; clamped (w' = 0): w_{−1} = w_1 (mirror at x = L).
   */
  fourthDerivative(field: number, ends: readonly [BeamEnd, BeamEnd], scale = 1): this {
    const g = this.grid;
    if (g.dim !== 1) throw new Error(`the fourth-derivative stencil is 1D only (grid is ${g.dim}D)`);
    for (const s of [0, 1] as const) {
      if (g.slot(field, 0, s).condition.kind !== 'dirichlet') {
        throw new Error(`the fourth-derivative stencil needs a dirichlet condition (w = value) at both ends of field '${g.fields[field]}'`);
      }
      if (ends[s] !== 'pinned' && ends[s] !== 'clamped') {
        throw new Error(`beam end condition must be 'pinned' or 'clamped', got '${String(ends[s])}'`);
      }
    }
    const N = g.axes[0].intervals;
    if (N < 4) throw new Error(`the fourth-derivative stencil needs at least 4 intervals, got ${N}`);
    const h = g.axes[0].h;
    const w = [1, -4, 6, -4, 1].map((v) => (scale * v) / h ** 4);
    // value at node j (0..N, or a ghost −1 / N+1) added with coefficient c to row r
    const put = (r: number, j: number, c: number): void => {
      if (j === -1 || j === N + 1) {
        const side = j === -1 ? 0 : 1;
        const b = side === 0 ? 0 : N;
        const inner = side === 0 ? 1 : N - 1;
        if (ends[side] === 'pinned') {
          put(r, b, 2 * c);
          put(r, inner, -c);
        } else {
          put(r, inner, c);
        }
        return;
      }
      if (j === 0 || j === N) {
        this.addAffine(r, g.slotIndex(field, 0, j === 0 ? 0 : 1), AFFINE_VALUE, c);
        return;
      }
      this.add(r, g.unknownIndex[j * g.nf + field], c);
    };
    for (let r = 0; r < g.gridUnknowns; r++) {
      if (g.unknownField[r] !== field) continue;
      const i = g.unknownNode[r];
      for (let o = -2; o <= 2; o++) put(r, i + o, w[o + 2]);
    }
    return this;
  }

  /** Merge duplicates and return the operator (rows sorted by column). */
  build(): LinearOperator {
    const n = this.grid.gridUnknowns;
    const e = this.entries;
    // counting sort by row, then sort each row by column and merge
    const rowPtr = new Int32Array(n + 1);
    for (let k = 0; k < e.n; k++) rowPtr[e.rows[k] + 1]++;
    for (let r = 0; r < n; r++) rowPtr[r + 1] += rowPtr[r];
    const next = rowPtr.slice(0, n);
    const col = new Int32Array(e.n);
    const coef = new Float64Array(e.n);
    for (let k = 0; k < e.n; k++) {
      const q = next[e.rows[k]]++;
      col[q] = e.cols[k];
      coef[q] = e.vals[k];
    }
    // sort each (short) row by column with an insertion sort, then merge duplicates in place
    const outPtr = new Int32Array(n + 1);
    let w = 0;
    for (let r = 0; r < n; r++) {
      const lo = rowPtr[r];
      const hi = rowPtr[r + 1];
      for (let q = lo + 1; q < hi; q++) {
        const cq = col[q];
        const vq = coef[q];
        let t = q - 1;
        while (t >= lo && col[t] > cq) {
          col[t + 1] = col[t];
          coef[t + 1] = coef[t];
          t--;
        }
        col[t + 1] = cq;
        coef[t + 1] = vq;
      }
      outPtr[r] = w;
      for (let q = lo; q < hi; q++) {
        if (w > outPtr[r] && col[w - 1] === col[q]) coef[w - 1] += coef[q];
        else {
          col[w] = col[q];
          coef[w] = coef[q];
          w++;
        }
      }
    }
    outPtr[n] = w;
    const a = this.affine;
    return {
      size: n,
      rowPtr: outPtr,
      col: col.slice(0, w),
      coef: coef.slice(0, w),
      affineRow: a.rows.slice(0, a.n),
      affineSlot: a.cols.slice(0, a.n),
      affineKind: a.kinds.slice(0, a.n),
      affineCoef: a.vals.slice(0, a.n),
    };
  }
}

/**
 * out[r] (=, or += when `accumulate`) scale[field(r)] · (L u)_r, boundary data from `bd`.
 * `fieldScale` undefined means 1 for every field. No allocation.
 */
export function applyOperator(
  op: LinearOperator,
  grid: Grid,
  u: Float64Array,
  bd: BoundaryData,
  out: Float64Array,
  fieldScale?: Float64Array,
  accumulate = false,
): void {
  const { rowPtr, col, coef } = op;
  const uf = grid.unknownField;
  const n = op.size;
  for (let r = 0; r < n; r++) {
    let s = 0;
    for (let q = rowPtr[r]; q < rowPtr[r + 1]; q++) s += coef[q] * u[col[q]];
    const sc = fieldScale ? fieldScale[uf[r]] : 1;
    out[r] = accumulate ? out[r] + sc * s : sc * s;
  }
  addAffine(op, grid, u, bd, out, fieldScale);
}

/** out[r] += scale[field(r)] · (affine part of row r), boundary data from `bd`. */
export function addAffine(op: LinearOperator, grid: Grid, u: Float64Array, bd: BoundaryData, out: Float64Array, fieldScale?: Float64Array): void {
  const { affineRow, affineSlot, affineKind, affineCoef } = op;
  const uf = grid.unknownField;
  for (let t = 0; t < affineRow.length; t++) {
    const r = affineRow[t];
    const s = affineSlot[t];
    const k = affineKind[t];
    const v = k === AFFINE_VALUE ? bd.value[s] : k === AFFINE_FLUX ? bd.flux[s] : bd.beta[s] * u[r];
    out[r] += (fieldScale ? fieldScale[uf[r]] : 1) * affineCoef[t] * v;
  }
}

/**
 * The matrix of the operator's linear part (stencil entries plus the robin β terms), as
 * triplets — for tests and small dense checks.
 */
export function operatorMatrix(op: LinearOperator, bd: BoundaryData): { rows: number[]; cols: number[]; values: number[] } {
  const rows: number[] = [];
  const cols: number[] = [];
  const values: number[] = [];
  for (let r = 0; r < op.size; r++) {
    for (let q = op.rowPtr[r]; q < op.rowPtr[r + 1]; q++) {
      rows.push(r);
      cols.push(op.col[q]);
      values.push(op.coef[q]);
    }
  }
  for (let t = 0; t < op.affineRow.length; t++) {
    if (op.affineKind[t] === AFFINE_ROBIN) {
      rows.push(op.affineRow[t]);
      cols.push(op.affineRow[t]);
      values.push(op.affineCoef[t] * bd.beta[op.affineSlot[t]]);
    }
  }
  return { rows, cols, values };
}

/**
 * Rounding sizes of applying an operator (see Problem.residualMagnitudes):
 * out[r] (+)= scale·(Σ_k |coef_k|·max(|u[col_k]|, 1) + Σ affine |coef·datum|), a robin term
 * counted as |coef·β|·max(|u_r|, 1).
 */
export function operatorRounding(
  op: LinearOperator,
  grid: Grid,
  u: Float64Array,
  bd: BoundaryData,
  out: Float64Array,
  fieldScale?: Float64Array,
  accumulate = false,
): void {
  const { rowPtr, col, coef } = op;
  const uf = grid.unknownField;
  for (let r = 0; r < op.size; r++) {
    let s = 0;
    for (let q = rowPtr[r]; q < rowPtr[r + 1]; q++) s += Math.abs(coef[q]) * Math.max(Math.abs(u[col[q]]), 1);
    const sc = fieldScale ? Math.abs(fieldScale[uf[r]]) : 1;
    out[r] = accumulate ? out[r] + sc * s : sc * s;
  }
  const { affineRow, affineSlot, affineKind, affineCoef } = op;
  for (let t = 0; t < affineRow.length; t++) {
    const r = affineRow[t];
    const s = affineSlot[t];
    const k = affineKind[t];
    const v = k === AFFINE_VALUE ? Math.abs(bd.value[s]) : k === AFFINE_FLUX ? Math.abs(bd.flux[s]) : Math.abs(bd.beta[s]) * Math.max(Math.abs(u[r]), 1);
    out[r] += (fieldScale ? Math.abs(fieldScale[uf[r]]) : 1) * Math.abs(affineCoef[t]) * v;
  }
}
