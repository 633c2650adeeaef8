/**
 * The Problem contract: what the continuation engine, the eigen solver and the run layer need
 * from a discretised steady-state problem.
 *
 * Sign convention: the residual F is the right-hand side of  M u_t = F(u, p), so a steady state
 * is stable when every eigenvalue μ of  F_u v = μ M v  has negative real part. Every model
 * follows it (an energy gradient enters with a minus sign).
 *
 * Unknown vector layout: the grid unknowns come first (`gridUnknowns` of them), then the extra
 * global unknowns (constraint multipliers, drift speeds), which have zero mass.
 */
import type { CscPattern } from '../linalg/sparse.js';

/** Parameter values by name (case-sensitive names, e.g. `lambda`, `F`, `k`). */
export type Params = Readonly<Record<string, number>>;

export interface ParameterSpec {
  readonly name: string;
  readonly default: number;
  readonly description: string;
  /** Values outside [min, max] are rejected when a case is read (physically meaningless). */
  readonly min?: number;
  readonly max?: number;
}

/** An extra global unknown appended after the grid unknowns. */
export interface ExtraUnknown {
  readonly name: string;
  readonly description: string;
}

/** A scalar functional of the state written per point (a CSV column). */
export interface Monitor {
  /** Column name, full lowercase words; per field as `max:u` for multi-field models. */
  readonly name: string;
  readonly description: string;
  evaluate(u: Float64Array, p: Params): number;
}

export type BoundaryKind = 'dirichlet' | 'neumann' | 'robin' | 'periodic';

export interface AxisDescription {
  /** Axis name: x, y or z. */
  readonly name: 'x' | 'y' | 'z';
  readonly intervals: number;
  readonly length: number;
  /** Grid spacing h = length / intervals. */
  readonly h: number;
  /** Nodes along the axis in solution files: intervals + 1 (periodic: intervals). */
  readonly nodes: number;
}

export interface ProblemDescription {
  readonly model: string;
  readonly summary: string;
  readonly fields: readonly string[];
  /** Axes in x, y, z order (1 to 3 of them). */
  readonly axes: readonly AxisDescription[];
  /** One-line caution for models whose results bear on safety (ignition, runaway, buckling). */
  readonly caution?: string;
  /** How the unknown vector is laid out (grid numbering, field order, extras), in words. */
  readonly layout?: string;
}

/** Where an unknown sits: a field at integer node coordinates, or a named extra unknown. */
export type UnknownLocation =
  | { readonly kind: 'grid'; readonly field: string; readonly node: readonly number[] }
  | { readonly kind: 'extra'; readonly name: string };

export interface Problem {
  /** Model id (`bratu`, `gray-scott`, ..., `reaction-diffusion`, or a code model's name). */
  readonly model: string;
  /** Total number of unknowns: grid unknowns followed by extra unknowns. */
  readonly size: number;
  readonly gridUnknowns: number;
  readonly extraUnknowns: readonly ExtraUnknown[];
  readonly parameters: readonly ParameterSpec[];

  /**
   * Quadrature weights (length `size`): h^d per grid unknown (boundary nodes of Neumann axes
   * get the trapezoid half weights), so that sqrt(Σ w u²) is a discrete L2 norm and a step
   * means the same on every grid. Extra unknowns get weight 1.
   */
  readonly weights: Float64Array;

  /**
   * Diagonal of the mass matrix M (length `size`), or undefined for the identity.
   * Zero entries mark algebraic unknowns (constraints, phase conditions).
   * Finite-difference discretisations give diagonal masses, so a diagonal is all the contract
   * carries.
   */
  readonly massDiagonal?: Float64Array;

  /** Fixed sparsity pattern of the Jacobian F_u (size x size); the same object on every call. */
  pattern(): CscPattern;

  /** out = F(u, p). */
  residual(u: Float64Array, p: Params, out: Float64Array): void;

  /** Fill `values` (aligned with `pattern().rowIdx`) with F_u(u, p). No allocation. */
  jacobian(u: Float64Array, p: Params, values: Float64Array): void;

  /**
   * Optional: how large the separate contributions to each residual row are at (u, p), for the
   * Newton convergence test, which no row scaling can fake (src/problem/residual-size.ts):
   *
   *   ‖F‖_w ≤ rtol·‖terms‖_w + 16·ε·‖rounding‖_w        (ε the double-precision unit roundoff)
   *
   * - `terms[i]` = Σ_t |T_t,i| where F_i = Σ_t T_t,i are the row's terms as the model states
   *   them: each operator applied as a whole (a diffusion term D·(Δu)_i with its boundary data,
   *   a bending term EI·(w⁗)_i), each reaction summand, each load; for a constraint row
   *   Σ_j c_j(u_j) = 0, its summands |c_j(u_j)|. At a solution the terms cancel; their size is
   *   what "relatively small" is measured against.
   * - `rounding[i]` = Σ_k |a_k|·max(|v_k|, 1) over the products a_k·v_k of coefficients and
   *   unknowns that the evaluation of F_i sums (stencil entries, boundary data, and each
   *   nonlinear summand counted by its own size): the size of the rounding errors made in
   *   evaluating F_i at a state whose unknowns are counted as at least of unit size. It bounds
   *   what any double-precision state can reach (fourth-order stencils on fine grids cancel
   *   many digits) and serves as the absolute tolerance near zero states.
   *
   * `rounding` may be left out: then only `terms` are filled (the test tries the cheaper part
   * first).
   *
   * Models without it get the rule of `ResidualSizes` in residual-size.ts: with J = F_u(u, p),
   * terms = |J u| + |F − J u| and rounding = Σ_j |J_ij|·max(|u_j|, 1) + |F − J u| (the linear
   * part applied as a whole, the remainder as one term).
   */
  residualMagnitudes?(u: Float64Array, p: Params, terms: Float64Array, rounding?: Float64Array): void;

  /** out = ∂F/∂p_name (u, p). */
  parameterDerivative(u: Float64Array, p: Params, name: string, out: Float64Array): void;

  /**
   * Optional exact second derivative out = F_uu(u, p)[a, b]. When absent it is obtained from
   * directional finite differences of Jacobian values (see derivatives.ts).
   */
  secondDerivative?(u: Float64Array, p: Params, a: Float64Array, b: Float64Array, out: Float64Array): void;

  /** Optional exact mixed derivative out = F_up(u, p)[a] for parameter `name`. */
  mixedDerivative?(u: Float64Array, p: Params, name: string, a: Float64Array, out: Float64Array): void;

  /** Initial guess for Newton at parameters p (length `size`). */
  initialGuess(p: Params): Float64Array;

  /** Monitors written per point; always includes `max`, `min` and `l2-norm` (per field). */
  readonly monitors: readonly Monitor[];

  describe(): ProblemDescription;

  /** Optional: where unknown `index` sits (used to label Jacobian-check reports and errors). */
  locateUnknown?(index: number): UnknownLocation;

  /**
   * Solution on every grid node, Dirichlet boundary values filled in: float64, C order,
   * shape (fields, nz, ny, nx) with absent axes dropped (1D: (fields, nx)).
   */
  toNodeArray(u: Float64Array, p: Params): { shape: number[]; data: Float64Array };

  /**
   * Inverse of toNodeArray for starting from a saved solution: the grid unknowns are read from
   * the node array (shape checked; a clear Error naming expected and found shapes otherwise);
   * extra unknowns are taken from `extras` when given, else from the initial guess.
   */
  fromNodeArray(shape: readonly number[], data: Float64Array, p: Params, extras?: Float64Array): Float64Array;
}

/** Options every grid-based model factory accepts (built-in and code models alike). */
export interface GridOptions {
  /** Intervals per axis (x, y, z); the dimension is the length of this array. */
  readonly intervals: readonly number[];
  /** Domain length per axis (default 1 for every axis). */
  readonly length?: readonly number[];
}

/** A code model module (`model: ./my-model.mjs`) default-exports a factory of this type. */
export type ProblemFactory = (options: Record<string, unknown> & { grid: GridOptions }) => Problem;

/** Weighted inner product Σ w_i a_i b_i. */
export function weightedDot(w: Float64Array, a: Float64Array, b: Float64Array): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += w[i] * a[i] * b[i];
  return s;
}

/** Weighted (discrete L2) norm sqrt(Σ w_i a_i²). */
export function weightedNorm(w: Float64Array, a: Float64Array): number {
  return Math.sqrt(weightedDot(w, a, a));
}

/** Parameter value lookup with a clear error for unknown names. */
export function parameterValue(problem: Problem, p: Params, name: string): number {
  const v = p[name];
  if (v === undefined) {
    const known = problem.parameters.map((s) => s.name).join(', ');
    throw new Error(`unknown parameter '${name}' for model '${problem.model}' (known: ${known})`);
  }
  return v;
}

/** Defaults of every parameter, overridden by `given`; unknown names are an error. */
export function resolveParameters(problem: Problem, given: Record<string, number> = {}): Params {
  const out: Record<string, number> = {};
  for (const s of problem.parameters) out[s.name] = s.default;
  for (const [k, v] of Object.entries(given)) {
    if (!(k in out)) {
      const known = problem.parameters.map((s) => s.name).join(', ');
      throw new Error(`unknown parameter '${k}' for model '${problem.model}' (known: ${known})`);
    }
    out[k] = v;
  }
  return out;
}
