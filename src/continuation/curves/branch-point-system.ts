/**
 * Branch points of a uniform state in two parameters (Turing lines, buckling loads against a
 * second parameter). The state is held in the uniform subspace (./uniform.ts): unknowns
 * y = (c, parameter, free) with c the free fields' uniform values, equations
 *
 *     R(c, p) = field averages of F(E c, p) = 0,      g(E c, p) = 0,
 *
 * where g comes from the bordered null-vector system of the FULL Jacobian at the uniform state
 * (./null-border.ts): it vanishes where some non-uniform mode's eigenvalue is zero. (In the full
 * space such a point is a branch point, where a fold system would be singular; in the uniform
 * subspace it is a regular curve.) The Newton matrix is small and dense, (nf + 2)²:
 *
 *     [ R_c   R_p ]       R_c = averages of J e_f,  R_p = averages of F_p,
 *     [ g_c   g_p ]       g_c = −wᵀ F_uu[v, e_f],  g_p = −wᵀ F_up v,
 *     [ r_c   r_p ]
 *
 * and g and the null vectors come from the (n + 1) bordered matrix (a factorisation per step,
 * refinement with it in between: ./null-border.ts).
 *
 * The critical mode is the null vector v; its wavenumbers come from ./mode.ts. Where another
 * mode's eigenvalue reaches zero the sign of det M changes (test function `determinant-sign`):
 * there the critical mode changes, and `switchMode` moves the borders to the new mode.
 */
import type { LUOptions } from '../../linalg/lu.js';
import type { Params, Problem } from '../../problem/problem.js';
import { type AugmentedSystem, type TestFunction, type TestValue, solveSmall } from './augmented.js';
import { BorderedCurveSystem } from './bordered-system.js';
import { dominantMode } from './mode.js';
import { scaledNorm } from './scale.js';
import { type UniformSubspace, fieldAverages, uniformState, uniformSubspace } from './uniform.js';

export const branchPointTestFunctions: readonly TestFunction[] = [
  { name: 'determinant-sign', kind: 'mode-change', type: 'determinant', description: "sign of the bordered null-vector matrix; it changes where another mode's eigenvalue reaches zero" },
];

export class BranchPointSystem extends BorderedCurveSystem implements AugmentedSystem {
  readonly kind = 'branch-point' as const;
  readonly testFunctions = branchPointTestFunctions;
  /** Number of free uniform fields. */
  readonly nu: number;
  private readonly f: Float64Array;
  private readonly u: Float64Array;
  private readonly fp: Float64Array;
  private readonly col: Float64Array;
  private y: Float64Array;
  /** Dense linearisation rows (size − 1) × size at the last evaluated point. */
  private lin: number[][] | null = null;
  private modeCache: number[] | undefined | null = null;

  constructor(
    problem: Problem,
    base: Params,
    parameter: string,
    free: string,
    readonly space: UniformSubspace,
    luOptions: LUOptions = {},
  ) {
    // the uniform values weigh as much as their fields' domain measures
    super(problem, base, parameter, free, space.free.map((f) => f.measure), luOptions);
    this.nu = space.free.length;
    this.f = new Float64Array(this.n);
    this.u = new Float64Array(this.n);
    this.fp = new Float64Array(this.n);
    this.col = new Float64Array(this.n);
    this.y = new Float64Array(this.size);
  }

  /** The uniform subspace through u (the start state), for building the system. */
  static subspace(problem: Problem, u: Float64Array, p: Params): UniformSubspace {
    return uniformSubspace(problem, u, p);
  }

  state(y: Float64Array): Float64Array {
    return uniformState(this.space, y.subarray(0, this.nu));
  }

  fromState(u: Float64Array, p: Params): Float64Array {
    if (u.length !== this.n) throw new Error(`the start state has ${u.length} values, the problem has ${this.n} unknowns`);
    const y = new Float64Array(this.size);
    this.space.free.forEach((fld, k) => {
      const e = fld.indicator;
      for (let i = 0; i < this.n; i++) {
        if (e[i] === 1) {
          y[k] = u[i];
          break;
        }
      }
    });
    y[this.nu] = p[this.parameter];
    y[this.nu + 1] = p[this.free];
    return y;
  }

  protected assemble(y: Float64Array): void {
    uniformState(this.space, y.subarray(0, this.nu), this.u);
    this.jacobianAt(this.u, this.params(y));
  }

  protected gParameterDerivatives(): [number, number] {
    const lin = this.linearise();
    return [lin[this.nu][this.nu], lin[this.nu][this.nu + 1]];
  }

  evaluate(y: Float64Array, out: Float64Array): number {
    this.y.set(y);
    const p = this.params(this.y);
    this.assemble(this.y);
    const t0 = performance.now();
    this.problem.residual(this.u, p, this.f);
    this.border.counters.seconds.residual += (performance.now() - t0) / 1000;
    this.border.update(this.jac);
    this.lin = null;
    this.modeCache = null;
    fieldAverages(this.space, this.problem.weights, this.f, out);
    out[this.nu] = this.border.g;
    this.stateResidual.record(this.u, p, this.f);
    const fn = scaledNorm(this.f, this.rowScale, this.problem.weights);
    const gn = this.border.g / this.gScale;
    this.extra = Math.abs(gn);
    return Math.sqrt(fn * fn + gn * gn);
  }

  /** Scaled norm of the part of F outside the uniform subspace (zero when the subspace is invariant). */
  offSubspaceResidual(): number {
    const avg = new Float64Array(this.nu);
    fieldAverages(this.space, this.problem.weights, this.f, avg);
    const r = this.f.slice();
    this.space.free.forEach((fld, k) => {
      for (let i = 0; i < this.n; i++) if (fld.indicator[i] === 1) r[i] -= avg[k];
    });
    return scaledNorm(r, this.rowScale, this.problem.weights);
  }

  /** The border LU at the last evaluated point (the dense linearisation is always exact). */
  exact(): void {
    this.border.ensureFactored();
  }

  private linearise(): number[][] {
    if (this.lin) return this.lin;
    const nu = this.nu;
    const p = this.params(this.y);
    const pat = this.problem.pattern();
    const rows: number[][] = Array.from({ length: nu + 1 }, () => new Array<number>(nu + 2).fill(0));
    const avg = new Float64Array(nu);
    this.space.free.forEach((fld, k) => {
      // J e_k, averaged per field
      this.col.fill(0);
      for (let j = 0; j < this.n; j++) {
        if (fld.indicator[j] !== 1) continue;
        for (let q = pat.colPtr[j]; q < pat.colPtr[j + 1]; q++) this.col[pat.rowIdx[q]] += this.jac[q];
      }
      fieldAverages(this.space, this.problem.weights, this.col, avg);
      for (let r = 0; r < nu; r++) rows[r][k] = avg[r];
      rows[nu][k] = this.border.directional(this.u, p, fld.indicator);
    });
    [this.parameter, this.free].forEach((name, j) => {
      const t0 = performance.now();
      this.problem.parameterDerivative(this.u, p, name, this.fp);
      this.border.counters.seconds.derivatives += (performance.now() - t0) / 1000;
      fieldAverages(this.space, this.problem.weights, this.fp, avg);
      for (let r = 0; r < nu; r++) rows[r][nu + j] = avg[r];
      rows[nu][nu + j] = this.border.parameterDerivative(this.u, p, name);
    });
    this.lin = rows;
    return rows;
  }

  solve(row: Float64Array, rhs: Float64Array, out: Float64Array): void {
    const a = [...this.linearise().map((r) => r.slice()), Array.from(row)];
    const z = solveSmall(a, Array.from(rhs));
    if (!z) throw new Error('the branch-point system is singular here (the critical mode is double, or the curve is degenerate)');
    out.set(z);
  }

  jacobianTimes(delta: Float64Array, out: Float64Array): void {
    const lin = this.linearise();
    lin.forEach((r, i) => {
      let s = 0;
      for (let j = 0; j < r.length; j++) s += r[j] * delta[j];
      out[i] = s;
    });
  }

  tests(): TestValue[] {
    // always at the point itself (a factorisation there): mode changes decide which curve goes on
    const det = this.border.determinant(true);
    return [{ value: det.sign, logAbs: det.logAbs }];
  }

  mode(): number[] | undefined {
    if (this.modeCache === null) {
      const p = this.params(this.y);
      const { shape, data } = this.problem.toNodeArray(this.border.v, p);
      const axes = this.problem.describe().axes;
      this.modeCache = axes.length ? dominantMode(shape, data, axes).mode : undefined;
    }
    return this.modeCache;
  }

  /**
   * At a located mode change y: borders onto the other null vector; returns the new mode and
   * the new curve's direction at y (from the linearisation with the new null vectors).
   */
  switchMode(y: Float64Array, along: Float64Array): { mode: number[] | undefined; direction: Float64Array; growth: number } | undefined {
    this.y.set(y);
    this.assemble(this.y);
    const t0 = performance.now();
    const p = this.params(this.y);
    this.problem.residual(this.u, p, this.f);
    this.border.counters.seconds.residual += (performance.now() - t0) / 1000;
    this.stateResidual.record(this.u, p, this.f);
    this.border.switchToSecondNullVector(this.jac);
    this.lin = null;
    this.modeCache = null;
    const lin = this.linearise();
    const mode = this.mode();
    // the new eigenvalue's rate along `along`: μ' = wᵀ J' v / wᵀ M v = −(g_y · along) / wᵀ M v
    let gdot = 0;
    for (let j = 0; j < this.size; j++) gdot += lin[this.nu][j] * along[j];
    const growth = -gdot / this.border.massProduct();
    // the direction: the null vector of the linearisation, fixed by a unit row
    for (const k of [this.parameterIndex, this.freeIndex]) {
      const row = new Array<number>(this.size).fill(0);
      row[k] = 1;
      const rhs = new Array<number>(this.size).fill(0);
      rhs[this.size - 1] = 1;
      const z = solveSmall([...lin.map((r) => r.slice()), row], rhs);
      if (z) return { mode, direction: Float64Array.from(z), growth };
    }
    return undefined;
  }
}
