/**
 * The generic reaction–diffusion discretisation: every built-in reaction–diffusion model
 * (bratu, allen-cahn, gray-scott, brusselator) and the expression-defined `reaction-diffusion`
 * model are instances of `createReactionDiffusion`, so they share one assembly code path.
 *
 *   F_f(u) = D_f(p) · ∇·(κ_f(x) ∇u_f)  +  R_f(u, x, p)   [+ Σ_a c_a ∂_a u_f   (phase condition)]
 *
 * for fields f = 0..nf−1 on a Grid (see grid.ts for the grid, boundary conditions and the
 * interleaved unknown layout). Residual and Jacobian write straight into preallocated arrays
 * with index maps computed once (no allocation, no search per call).
 *
 * ## Interface for reaction terms (`ReactionTerms`)
 * The reaction is evaluated node by node. At each node that carries at least one unknown:
 *   - `u`   Float64Array(nf): the field values at the node (dirichlet-eliminated fields get
 *           their boundary value);
 *   - `x`   Float64Array(dim): the node position (filled only when `usesPosition` is true);
 *   - `q`   Float64Array: the parameter values, in the order of `spec.parameters`;
 *   - `out` the result, written (not accumulated) by the callback:
 *       value                  out[a]        = R_a(u, x, q)
 *       jacobian               out[a·nf + b] = ∂R_a/∂u_b          (row-major nf×nf)
 *       parameterDerivative    out[a]        = ∂R_a/∂q_j           (j = parameter index)
 *       secondDerivative?      out[a]        = Σ_bc ∂²R_a/∂u_b∂u_c s_b t_c
 *       mixedDerivative?       out[a]        = Σ_b ∂²R_a/∂u_b∂q_j s_b
 *       magnitude?             out[a]        = Σ_t |t| over the summands t of R_a (the sizes
 *                                              the Newton convergence test measures against;
 *                                              without it, |R_a| counts as one term)
 * `coupling` (row-major nf×nf booleans) says which ∂R_a/∂u_b can be non-zero; it fixes the
 * Jacobian pattern (default: all). When both optional second-order callbacks are given the
 * problem exposes exact `secondDerivative`/`mixedDerivative`; otherwise the engine uses
 * directional finite differences (src/problem/derivatives.ts).
 *
 * Diffusion coefficient per field: a number, a parameter name, or {value(q), derivative(q, j)}.
 * Optional spatial profile κ_f(x) (variable-coefficient Laplacian, evaluated at half-way points).
 *
 * ## Phase condition (periodic axes)
 * With `phaseCondition`, every periodic axis a gets an extra unknown `drift-<axis>` (c_a, zero
 * mass) and the equation ∫ u* · ∂_a u dx = 0 (summed over fields, discrete: Σ_r w_r u*_r
 * (D_a u)_r), where u* is a fixed reference profile (default: the initial guess; replace it
 * with `setPhaseReference`, e.g. with a converged patterned state); the residual gets + c_a ∂_a u_f.
 * This removes the neutral translation mode of patterned states on periodic domains: J is
 * then regular along the branch, and at a converged state c_a = 0 for reflection-symmetric
 * systems (or the drift speed of a travelling pattern otherwise). A spatially uniform reference
 * gives a zero row (singular J): set a patterned reference first.
 */
import type {
  ExtraUnknown,
  Monitor,
  ParameterSpec,
  Params,
  Problem,
  ProblemDescription,
  UnknownLocation,
  GridOptions,
} from '../src/problem/problem.js';
import type { CscPattern } from '../src/linalg/sparse.js';
import { Grid, type FieldBoundaries, boundaryParameterNames } from './grid.js';
import { BoundaryData, OperatorBuilder, type LinearOperator, applyOperator, addAffine, operatorRounding, AFFINE_ROBIN } from './operator.js';
import { PatternBuilder } from './pattern.js';
import { assertFactorMemory, estimateFactorMemory, defaultFactorMemoryLimit } from './memory.js';
import { fieldMonitors, pointMonitor } from './monitors.js';

export interface ReactionTerms {
  readonly coupling?: readonly boolean[];
  readonly usesPosition?: boolean;
  value(u: Float64Array, x: Float64Array, q: Float64Array, out: Float64Array): void;
  jacobian(u: Float64Array, x: Float64Array, q: Float64Array, out: Float64Array): void;
  parameterDerivative(u: Float64Array, x: Float64Array, q: Float64Array, j: number, out: Float64Array): void;
  secondDerivative?(u: Float64Array, x: Float64Array, q: Float64Array, s: Float64Array, t: Float64Array, out: Float64Array): void;
  mixedDerivative?(u: Float64Array, x: Float64Array, q: Float64Array, j: number, s: Float64Array, out: Float64Array): void;
  magnitude?(u: Float64Array, x: Float64Array, q: Float64Array, out: Float64Array): void;
}

export type DiffusionSpec =
  | number
  | string
  | { readonly value: (q: Float64Array) => number; readonly derivative: (q: Float64Array, j: number) => number };

export interface PointMonitorSpec {
  readonly name: string;
  readonly description: string;
  readonly field: string;
  /** Physical coordinates (length dim); multilinear interpolation between nodes. */
  readonly at: readonly number[];
}

export interface ReactionDiffusionSpec {
  readonly model: string;
  readonly summary: string;
  readonly caution?: string;
  readonly fields: readonly string[];
  readonly parameters: readonly ParameterSpec[];
  readonly grid: GridOptions;
  /** One set for every field, or one per field. */
  readonly boundaries: FieldBoundaries | readonly FieldBoundaries[];
  /** Diffusion coefficient per field. */
  readonly diffusion: readonly DiffusionSpec[];
  /** Optional spatial profile κ_f(x) per field (undefined entries: 1). */
  readonly diffusionProfile?: readonly (((x: Float64Array) => number) | undefined)[];
  readonly reaction: ReactionTerms;
  /** Initial guess at a node: out[f] for every field (default 0). */
  readonly initialGuess?: (x: Float64Array, q: Float64Array, out: Float64Array) => void;
  /** Add a phase condition per periodic axis (see the header). */
  readonly phaseCondition?: boolean | { readonly reference?: Float64Array };
  readonly pointMonitors?: readonly PointMonitorSpec[];
  /** Refuse grids whose estimated LU factor exceeds this many bytes. */
  readonly memoryLimitBytes?: number;
}

export interface ReactionDiffusionProblem extends Problem {
  readonly grid: Grid;
  /** The diffusion operator (unit coefficients; boundary terms symbolic). */
  readonly laplacian: LinearOperator;
  /** Replace the phase-condition reference profile (grid unknowns, or a full state vector). */
  setPhaseReference(u: Float64Array): void;
  locateUnknown(index: number): UnknownLocation;
}

function diffusionResolver(d: DiffusionSpec, names: readonly string[], field: string): { value: (q: Float64Array) => number; derivative: (q: Float64Array, j: number) => number } {
  if (typeof d === 'number') {
    if (!Number.isFinite(d)) throw new Error(`diffusion coefficient of field '${field}' must be finite, got ${d}`);
    return { value: () => d, derivative: () => 0 };
  }
  if (typeof d === 'string') {
    const j = names.indexOf(d);
    if (j < 0) throw new Error(`diffusion coefficient of field '${field}' names parameter '${d}', which the model does not have (known: ${names.join(', ')})`);
    return { value: (q) => q[j], derivative: (_q, k) => (k === j ? 1 : 0) };
  }
  return d;
}

export function createReactionDiffusion(spec: ReactionDiffusionSpec): ReactionDiffusionProblem {
  const fields = spec.fields;
  const nf = fields.length;
  // refuse hopeless grids before allocating anything (node counts approximated by intervals + 1)
  const iv = spec.grid?.intervals;
  if (Array.isArray(iv) && iv.length >= 1 && iv.length <= 3 && iv.every((x) => Number.isInteger(x) && x > 0)) {
    assertFactorMemory(
      estimateFactorMemory(iv.map((x) => x + 1), Math.max(nf, 1), spec.phaseCondition ? iv.length : 0),
      `model '${spec.model}' on grid ${iv.join('x')}`,
      spec.memoryLimitBytes ?? defaultFactorMemoryLimit,
    );
  }
  const grid = new Grid(spec.grid, fields, spec.boundaries);
  const dim = grid.dim;
  const names = spec.parameters.map((s) => s.name);
  const nParams = names.length;
  for (const b of boundaryParameterNames(grid)) {
    if (!names.includes(b)) throw new Error(`model '${spec.model}': a boundary condition names parameter '${b}', which the model does not have (known: ${names.join(', ')})`);
  }
  if (spec.diffusion.length !== nf) throw new Error(`model '${spec.model}': ${spec.diffusion.length} diffusion coefficients for ${nf} fields`);
  const diff = spec.diffusion.map((d, f) => diffusionResolver(d, names, fields[f]));
  const R = spec.reaction;
  const coupling = R.coupling ?? new Array<boolean>(nf * nf).fill(true);
  if (coupling.length !== nf * nf) throw new Error(`model '${spec.model}': reaction coupling must have ${nf * nf} entries`);
  const exactSecond = typeof R.secondDerivative === 'function' && typeof R.mixedDerivative === 'function';

  // phase condition axes
  const phaseAxes: number[] = [];
  if (spec.phaseCondition) {
    for (let a = 0; a < dim; a++) if (grid.axes[a].periodic) phaseAxes.push(a);
    if (phaseAxes.length === 0) throw new Error(`model '${spec.model}': a phase condition needs a periodic axis (set periodic boundaries)`);
  }
  const np = phaseAxes.length;
  const n0 = grid.gridUnknowns;
  const size = n0 + np;
  const extraUnknowns: ExtraUnknown[] = phaseAxes.map((a) => ({
    name: `drift-${grid.axes[a].name}`,
    description: `drift speed along ${grid.axes[a].name} (phase-condition multiplier; 0 for a standing pattern)`,
  }));

  // operators
  const lb = new OperatorBuilder(grid);
  for (let f = 0; f < nf; f++) lb.laplacian(f, 1, spec.diffusionProfile?.[f]);
  const lap = lb.build();
  const d1: LinearOperator[] = phaseAxes.map((a) => {
    const b = new OperatorBuilder(grid);
    for (let f = 0; f < nf; f++) b.firstDerivative(f, a);
    return b.build();
  });

  // reaction nodes: nodes carrying at least one unknown
  const rnList: number[] = [];
  for (let node = 0; node < grid.nodeCount; node++) {
    for (let f = 0; f < nf; f++) {
      if (grid.unknownIndex[node * nf + f] >= 0) {
        rnList.push(node);
        break;
      }
    }
  }
  const nrn = rnList.length;
  const rnNode = Int32Array.from(rnList);
  // rnIdx[t·nf + f] = unknown index, or −1 − e for eliminated entry e
  const rnIdx = new Int32Array(nrn * nf);
  const elimSlots: number[] = []; // 3 per entry (−1 padded)
  const elimRn: number[] = [];
  {
    const c = [0, 0, 0];
    for (let t = 0; t < nrn; t++) {
      for (let f = 0; f < nf; f++) {
        const k = grid.unknownIndex[rnNode[t] * nf + f];
        if (k >= 0) rnIdx[t * nf + f] = k;
        else {
          grid.nodeCoordinates(rnNode[t], c);
          const s = grid.eliminatingSlots(f, c);
          const e = elimRn.length;
          elimRn.push(t);
          elimSlots.push(s[0] ?? -1, s[1] ?? -1, s[2] ?? -1);
          rnIdx[t * nf + f] = -1 - e;
        }
      }
    }
  }
  const nElim = elimRn.length;
  const elimSlot = Int32Array.from(elimSlots);
  const elimVal = new Float64Array(nElim);
  const elimDer = new Float64Array(nElim);
  const rnWithElim = Int32Array.from([...new Set(elimRn)]);
  const positions = new Float64Array(R.usesPosition ? nrn * dim : 0);
  if (R.usesPosition) {
    const x = new Float64Array(dim);
    for (let t = 0; t < nrn; t++) {
      grid.position(rnNode[t], x);
      positions.set(x, t * dim);
    }
  }

  // pattern and index maps
  const pb = new PatternBuilder(size);
  const hOp = new Int32Array(lap.col.length);
  for (let r = 0; r < n0; r++) for (let q = lap.rowPtr[r]; q < lap.rowPtr[r + 1]; q++) hOp[q] = pb.add(r, lap.col[q]);
  const hDiag = new Int32Array(n0);
  for (let r = 0; r < n0; r++) hDiag[r] = pb.add(r, r);
  const hBlock = new Int32Array(nrn * nf * nf).fill(-1);
  for (let t = 0; t < nrn; t++) {
    for (let a = 0; a < nf; a++) {
      const ra = rnIdx[t * nf + a];
      if (ra < 0) continue;
      for (let b = 0; b < nf; b++) {
        const cb = rnIdx[t * nf + b];
        if (cb < 0 || !(coupling[a * nf + b] || a === b)) continue;
        hBlock[(t * nf + a) * nf + b] = pb.add(ra, cb);
      }
    }
  }
  const hD1 = d1.map((op) => {
    const h = new Int32Array(op.col.length);
    for (let r = 0; r < n0; r++) for (let q = op.rowPtr[r]; q < op.rowPtr[r + 1]; q++) h[q] = pb.add(r, op.col[q]);
    return h;
  });
  const hCol = phaseAxes.map((_a, i) => {
    const h = new Int32Array(n0);
    for (let r = 0; r < n0; r++) h[r] = pb.add(r, n0 + i);
    return h;
  });
  const hRow = phaseAxes.map((_a, i) => {
    const h = new Int32Array(n0);
    for (let s = 0; s < n0; s++) h[s] = pb.add(n0 + i, s);
    return h;
  });
  const pattern: CscPattern = pb.pattern();
  const pos = pb.positions();
  const remap = (h: Int32Array): Int32Array => {
    const o = new Int32Array(h.length);
    for (let k = 0; k < h.length; k++) o[k] = h[k] < 0 ? -1 : pos[h[k]];
    return o;
  };
  const opPos = remap(hOp);
  const diagPos = remap(hDiag);
  const blockPos = remap(hBlock);
  const d1Pos = hD1.map(remap);
  const colPos = hCol.map(remap);
  const rowPos = hRow.map(remap);

  // weights and mass
  const weights = new Float64Array(size);
  weights.set(grid.unknownWeights());
  for (let i = n0; i < size; i++) weights[i] = 1;
  let massDiagonal: Float64Array | undefined;
  if (np > 0) {
    massDiagonal = new Float64Array(size);
    massDiagonal.fill(1, 0, n0);
  }

  // workspace (allocated once)
  const q = new Float64Array(nParams);
  const D = new Float64Array(nf);
  const dD = new Float64Array(nf);
  const bd = new BoundaryData(grid);
  const bdDer = new BoundaryData(grid);
  const uu = new Float64Array(nf);
  const ss = new Float64Array(nf);
  const tt = new Float64Array(nf);
  const rr = new Float64Array(nf);
  const jj = new Float64Array(nf * nf);
  const xx = new Float64Array(dim);
  const dU = phaseAxes.map(() => new Float64Array(n0));
  const gRow = phaseAxes.map(() => new Float64Array(n0));
  const scratch = new Float64Array(n0);

  function prepare(p: Params): void {
    for (let j = 0; j < nParams; j++) {
      const v = p[names[j]];
      if (v === undefined) throw new Error(`model '${spec.model}': parameter '${names[j]}' has no value`);
      q[j] = v;
    }
    for (let f = 0; f < nf; f++) D[f] = diff[f].value(q);
    bd.resolve(p);
    averageEliminated(bd.value, elimVal);
  }

  /** out[e] = mean of the (up to three) boundary data slots of eliminated node e. */
  function averageEliminated(slots: ArrayLike<number>, out: Float64Array): void {
    for (let e = 0; e < nElim; e++) {
      let v = 0;
      let c = 0;
      for (let k = 0; k < 3; k++) {
        const s = elimSlot[3 * e + k];
        if (s >= 0) {
          v += slots[s];
          c++;
        }
      }
      out[e] = v / c;
    }
  }

  function gather(t: number, u: Float64Array): void {
    const base = t * nf;
    for (let f = 0; f < nf; f++) {
      const k = rnIdx[base + f];
      uu[f] = k >= 0 ? u[k] : elimVal[-1 - k];
    }
    if (R.usesPosition) for (let a = 0; a < dim; a++) xx[a] = positions[t * dim + a];
  }

  function gatherDirection(t: number, s: Float64Array, out: Float64Array): void {
    const base = t * nf;
    for (let f = 0; f < nf; f++) {
      const k = rnIdx[base + f];
      out[f] = k >= 0 ? s[k] : 0;
    }
  }

  function scatterAdd(t: number, out: Float64Array): void {
    const base = t * nf;
    for (let f = 0; f < nf; f++) {
      const k = rnIdx[base + f];
      if (k >= 0) out[k] += rr[f];
    }
  }

  function applyD1(i: number, u: Float64Array, out: Float64Array): void {
    const op = d1[i];
    for (let r = 0; r < n0; r++) {
      let s = 0;
      for (let k = op.rowPtr[r]; k < op.rowPtr[r + 1]; k++) s += op.coef[k] * u[op.col[k]];
      out[r] = s;
    }
  }

  function setPhaseReference(ref: Float64Array): void {
    if (np === 0) return;
    if (ref.length !== n0 && ref.length !== size) {
      throw new Error(`phase reference has length ${ref.length}, expected ${n0} (grid unknowns) or ${size} (full state)`);
    }
    const w = weights;
    for (let i = 0; i < np; i++) {
      const g = gRow[i];
      g.fill(0);
      const op = d1[i];
      for (let r = 0; r < n0; r++) {
        const wr = w[r] * ref[r];
        for (let k = op.rowPtr[r]; k < op.rowPtr[r + 1]; k++) g[op.col[k]] += op.coef[k] * wr;
      }
    }
  }

  function residual(u: Float64Array, p: Params, out: Float64Array): void {
    prepare(p);
    applyOperator(lap, grid, u, bd, out, D);
    for (let t = 0; t < nrn; t++) {
      gather(t, u);
      R.value(uu, xx, q, rr);
      scatterAdd(t, out);
    }
    for (let i = 0; i < np; i++) {
      const c = u[n0 + i];
      applyD1(i, u, dU[i]);
      const du = dU[i];
      for (let r = 0; r < n0; r++) out[r] += c * du[r];
      const g = gRow[i];
      let s = 0;
      for (let r = 0; r < n0; r++) s += g[r] * u[r];
      out[n0 + i] = s;
    }
  }

  /**
   * Sizes for the convergence test (Problem.residualMagnitudes): the diffusion term D·(Δu)_r as
   * one term, each reaction summand, the drift term c·(∂_a u)_r; a phase-condition row's
   * summands g_r·u_r.
   */
  function residualMagnitudes(u: Float64Array, p: Params, terms: Float64Array, rounding?: Float64Array): void {
    prepare(p);
    applyOperator(lap, grid, u, bd, terms, D);
    for (let r = 0; r < n0; r++) terms[r] = Math.abs(terms[r]);
    if (rounding) operatorRounding(lap, grid, u, bd, rounding, D);
    for (let t = 0; t < nrn; t++) {
      gather(t, u);
      if (R.magnitude) R.magnitude(uu, xx, q, rr);
      else {
        R.value(uu, xx, q, rr);
        for (let f = 0; f < nf; f++) rr[f] = Math.abs(rr[f]);
      }
      scatterAdd(t, terms);
      if (rounding) scatterAdd(t, rounding);
    }
    for (let i = 0; i < np; i++) {
      const c = u[n0 + i];
      applyD1(i, u, dU[i]);
      const du = dU[i];
      for (let r = 0; r < n0; r++) terms[r] += Math.abs(c * du[r]);
      const g = gRow[i];
      let s = 0;
      for (let r = 0; r < n0; r++) s += Math.abs(g[r] * u[r]);
      terms[n0 + i] = s;
      if (!rounding) continue;
      operatorRounding(d1[i], grid, u, bd, scratch);
      const cs = Math.max(Math.abs(c), 1);
      for (let r = 0; r < n0; r++) rounding[r] += cs * scratch[r];
      let a = 0;
      for (let r = 0; r < n0; r++) a += Math.abs(g[r]) * Math.max(Math.abs(u[r]), 1);
      rounding[n0 + i] = a;
    }
  }

  function jacobian(u: Float64Array, p: Params, values: Float64Array): void {
    prepare(p);
    values.fill(0);
    const { rowPtr, coef } = lap;
    const uf = grid.unknownField;
    for (let r = 0; r < n0; r++) {
      const sc = D[uf[r]];
      for (let k = rowPtr[r]; k < rowPtr[r + 1]; k++) values[opPos[k]] += sc * coef[k];
    }
    const { affineRow, affineSlot, affineKind, affineCoef } = lap;
    for (let t = 0; t < affineRow.length; t++) {
      if (affineKind[t] !== AFFINE_ROBIN) continue;
      const r = affineRow[t];
      values[diagPos[r]] += D[uf[r]] * affineCoef[t] * bd.beta[affineSlot[t]];
    }
    const nf2 = nf * nf;
    for (let t = 0; t < nrn; t++) {
      gather(t, u);
      R.jacobian(uu, xx, q, jj);
      const base = t * nf2;
      for (let k = 0; k < nf2; k++) {
        const ps = blockPos[base + k];
        if (ps >= 0) values[ps] += jj[k];
      }
    }
    for (let i = 0; i < np; i++) {
      const c = u[n0 + i];
      const op = d1[i];
      const dp = d1Pos[i];
      for (let k = 0; k < op.coef.length; k++) values[dp[k]] += c * op.coef[k];
      applyD1(i, u, dU[i]);
      const cp = colPos[i];
      const du = dU[i];
      for (let r = 0; r < n0; r++) values[cp[r]] += du[r];
      const rp = rowPos[i];
      const g = gRow[i];
      for (let s = 0; s < n0; s++) values[rp[s]] += g[s];
    }
  }

  function paramIndex(name: string): number {
    const j = names.indexOf(name);
    if (j < 0) throw new Error(`unknown parameter '${name}' for model '${spec.model}' (known: ${names.join(', ')})`);
    return j;
  }

  function parameterDerivative(u: Float64Array, p: Params, name: string, out: Float64Array): void {
    const j = paramIndex(name);
    prepare(p);
    out.fill(0);
    let anyD = false;
    for (let f = 0; f < nf; f++) {
      dD[f] = diff[f].derivative(q, j);
      if (dD[f] !== 0) anyD = true;
    }
    if (anyD) applyOperator(lap, grid, u, bd, out, dD, true);
    const bcDepends = bdDer.derivative(name);
    if (bcDepends) addAffine(lap, grid, u, bdDer, out, D);
    for (let t = 0; t < nrn; t++) {
      gather(t, u);
      R.parameterDerivative(uu, xx, q, j, rr);
      scatterAdd(t, out);
    }
    if (bcDepends && nElim > 0) {
      // reaction terms see eliminated (dirichlet) values that depend on the parameter
      elimDerivative();
      for (let m = 0; m < rnWithElim.length; m++) {
        const t = rnWithElim[m];
        gather(t, u);
        R.jacobian(uu, xx, q, jj);
        elimDirection(t, tt);
        for (let a = 0; a < nf; a++) {
          let s = 0;
          for (let b = 0; b < nf; b++) s += jj[a * nf + b] * tt[b];
          rr[a] = s;
        }
        scatterAdd(t, out);
      }
    }
  }

  function elimDerivative(): void {
    averageEliminated(bdDer.value, elimDer);
  }

  function elimDirection(t: number, out: Float64Array): void {
    for (let f = 0; f < nf; f++) {
      const k = rnIdx[t * nf + f];
      out[f] = k >= 0 ? 0 : elimDer[-1 - k];
    }
  }

  function secondDerivative(u: Float64Array, p: Params, a: Float64Array, b: Float64Array, out: Float64Array): void {
    prepare(p);
    out.fill(0);
    for (let t = 0; t < nrn; t++) {
      gather(t, u);
      gatherDirection(t, a, ss);
      gatherDirection(t, b, tt);
      R.secondDerivative!(uu, xx, q, ss, tt, rr);
      scatterAdd(t, out);
    }
    for (let i = 0; i < np; i++) {
      // ∂²(c·D u)[a, b] = a_c·D b_u + b_c·D a_u
      applyD1(i, b, scratch);
      const ac = a[n0 + i];
      for (let r = 0; r < n0; r++) out[r] += ac * scratch[r];
      applyD1(i, a, scratch);
      const bc = b[n0 + i];
      for (let r = 0; r < n0; r++) out[r] += bc * scratch[r];
    }
  }

  function mixedDerivative(u: Float64Array, p: Params, name: string, a: Float64Array, out: Float64Array): void {
    const j = paramIndex(name);
    prepare(p);
    out.fill(0);
    let anyD = false;
    for (let f = 0; f < nf; f++) {
      dD[f] = diff[f].derivative(q, j);
      if (dD[f] !== 0) anyD = true;
    }
    const bcDepends = bdDer.derivative(name);
    if (anyD) {
      // linear part of the operator applied to a (robin β terms included, boundary data not)
      const { rowPtr, col, coef, affineRow, affineSlot, affineKind, affineCoef } = lap;
      const uf = grid.unknownField;
      for (let r = 0; r < n0; r++) {
        let s = 0;
        for (let k = rowPtr[r]; k < rowPtr[r + 1]; k++) s += coef[k] * a[col[k]];
        out[r] += dD[uf[r]] * s;
      }
      for (let t = 0; t < affineRow.length; t++) {
        if (affineKind[t] !== AFFINE_ROBIN) continue;
        const r = affineRow[t];
        out[r] += dD[uf[r]] * affineCoef[t] * bd.beta[affineSlot[t]] * a[r];
      }
    }
    if (bcDepends) {
      const { affineRow, affineSlot, affineKind, affineCoef } = lap;
      const uf = grid.unknownField;
      for (let t = 0; t < affineRow.length; t++) {
        if (affineKind[t] !== AFFINE_ROBIN) continue;
        const r = affineRow[t];
        out[r] += D[uf[r]] * affineCoef[t] * bdDer.beta[affineSlot[t]] * a[r];
      }
    }
    for (let t = 0; t < nrn; t++) {
      gather(t, u);
      gatherDirection(t, a, ss);
      R.mixedDerivative!(uu, xx, q, j, ss, rr);
      scatterAdd(t, out);
    }
    if (bcDepends && nElim > 0) {
      elimDerivative();
      for (let m = 0; m < rnWithElim.length; m++) {
        const t = rnWithElim[m];
        gather(t, u);
        gatherDirection(t, a, ss);
        elimDirection(t, tt);
        R.secondDerivative!(uu, xx, q, ss, tt, rr);
        scatterAdd(t, out);
      }
    }
  }

  function initialGuess(p: Params): Float64Array {
    prepare(p);
    const out = new Float64Array(size);
    if (!spec.initialGuess) return out;
    const x = new Float64Array(dim);
    for (let t = 0; t < nrn; t++) {
      grid.position(rnNode[t], x);
      spec.initialGuess(x, q, rr);
      for (let f = 0; f < nf; f++) {
        const k = rnIdx[t * nf + f];
        if (k >= 0) out[k] = rr[f];
      }
    }
    return out;
  }

  // monitors
  const monitors: Monitor[] = [...fieldMonitors(grid, weights)];
  for (const m of spec.pointMonitors ?? []) {
    const f = fields.indexOf(m.field);
    if (f < 0) throw new Error(`monitor '${m.name}' names field '${m.field}', which the model does not have (fields: ${fields.join(', ')})`);
    monitors.push(pointMonitor(grid, m.name, m.description, f, m.at));
  }
  for (let i = 0; i < np; i++) {
    const name = extraUnknowns[i].name;
    monitors.push({ name, description: extraUnknowns[i].description, evaluate: (u) => u[n0 + i] });
  }

  const defaults: Record<string, number> = {};
  for (const s of spec.parameters) defaults[s.name] = s.default;
  if (np > 0) {
    const ref = spec.phaseCondition && typeof spec.phaseCondition === 'object' && spec.phaseCondition.reference;
    setPhaseReference(ref || initialGuess(defaults));
  }

  const layout = grid.layoutText(extraUnknowns.map((e) => e.name));
  const description: ProblemDescription = {
    model: spec.model,
    summary: spec.summary,
    fields: [...fields],
    axes: grid.describeAxes(),
    ...(spec.caution ? { caution: spec.caution } : {}),
    layout,
  };

  const problem: ReactionDiffusionProblem = {
    model: spec.model,
    size,
    gridUnknowns: n0,
    extraUnknowns,
    parameters: spec.parameters,
    weights,
    ...(massDiagonal ? { massDiagonal } : {}),
    grid,
    laplacian: lap,
    pattern: () => pattern,
    residual,
    residualMagnitudes,
    jacobian,
    parameterDerivative,
    ...(exactSecond ? { secondDerivative, mixedDerivative } : {}),
    initialGuess,
    monitors,
    describe: () => description,
    toNodeArray: (u, p) => grid.toNodeArray(u, p),
    fromNodeArray(shape, data, p, extras) {
      const out = initialGuess(p);
      grid.fromNodeArray(shape, data, out);
      if (extras) {
        if (extras.length !== np) throw new Error(`expected ${np} extra unknowns (${extraUnknowns.map((e) => e.name).join(', ') || 'none'}), got ${extras.length}`);
        out.set(extras, n0);
      }
      return out;
    },
    setPhaseReference,
    locateUnknown(index: number): UnknownLocation {
      if (index >= n0 && index < size) return { kind: 'extra', name: extraUnknowns[index - n0].name };
      if (index < 0 || index >= size || !Number.isInteger(index)) throw new RangeError(`unknown index ${index} outside 0..${size - 1}`);
      const { field, node } = grid.locate(index);
      return { kind: 'grid', field, node };
    },
  };
  return problem;
}
