/**
 * The minimally augmented fold system (Govaerts 2000): unknowns y = (u, parameter, free),
 * equations
 *
 *     F(u, p) = 0,      g(u, p) = 0,
 *
 * with g from the bordered null-vector system of J (./null-border.ts). Size n + 2; each
 * evaluation factors the bordered matrix M = [[J, b], [cᵀ, d]] once (n + 1) with the sparse LU.
 *
 * Newton matrix, bordered by a row r = (r_u, r_p):
 *
 *     [ J     F_p ] [du]   [a]
 *     [ g_uᵀ  g_p ] [dp] = [β]         (dp: the two parameters)
 *     [ r_uᵀ  r_p ]        [γ]
 *
 * solved by block elimination with M (J itself is singular on the curve): with ζ = cᵀdu,
 * [du; s] = M⁻¹[a − F_p dp; ζ] must have s = 0, so
 *
 *     [du; s] = X0 + ζ X1 − X2 dp,   X0 = M⁻¹[a; 0],  X1 = M⁻¹[0; 1] = [v; g],  X2 = M⁻¹[F_p; 0],
 *
 * and ζ, dp solve a 3×3 system (the s row, the g row and the border row). A linearisation costs
 * one factorisation and four solves (v, w, two columns of X2), plus one solve per right-hand side.
 * Newton iterates between linearisations are chord iterations: the residual (F and g, g by
 * refinement with the reference LU: ./null-border.ts) is exact at every iterate, the matrix is the
 * last linearisation's — made at the last converged point (`exact`), or afresh at an iterate
 * when the corrector sees slow contraction or the refinement falls back to a factorisation.
 *
 * Test functions: the quadratic normal-form coefficient ⟨ŵ, F_uu(v̂, v̂)⟩ (zero at a cusp),
 * ⟨ŵ, M v̂⟩ (zero at a Bogdanov–Takens point) and the sign of det M (it changes where a second,
 * independent null vector appears: the fold curve crosses a curve of branch points).
 */
import type { LUOptions } from '../../linalg/lu.js';
import { matVec } from '../../linalg/sparse.js';
import type { Params, Problem } from '../../problem/problem.js';
import { type AugmentedSystem, type TestFunction, type TestValue, solveSmall } from './augmented.js';
import { BorderedCurveSystem } from './bordered-system.js';
import { scaledNorm } from './scale.js';

export const foldTestFunctions: readonly TestFunction[] = [
  { name: 'cusp-coefficient', kind: 'cusp', type: 'value', description: 'quadratic normal-form coefficient ⟨w, F_uu(v, v)⟩ (normalised null vectors); zero at a cusp' },
  { name: 'bogdanov-takens', kind: 'bogdanov-takens', type: 'value', description: '⟨w, M v⟩ (normalised null vectors); zero where the zero eigenvalue becomes double' },
  { name: 'determinant-sign', kind: 'fold-branch-point', type: 'determinant', description: 'sign of the bordered null-vector matrix; it changes where a second null vector appears' },
];

export class FoldSystem extends BorderedCurveSystem implements AugmentedSystem {
  readonly kind = 'fold' as const;
  readonly testFunctions = foldTestFunctions;
  private readonly f: Float64Array;
  private readonly fPar: Float64Array;
  private readonly fFree: Float64Array;
  private readonly gu: Float64Array;
  private gPar = 0;
  private gFree = 0;
  private readonly x2a: Float64Array;
  private readonly x2b: Float64Array;
  private readonly x0: Float64Array;
  private readonly work: Float64Array;
  private guV = 0;
  private guX2a = 0;
  private guX2b = 0;
  private y: Float64Array;
  /** The border factorisation (stamp) the linearisation was made with; X1 = [vRef; gRef] there. */
  private linStamp = -1;
  private readonly vRef: Float64Array;
  private gRef = 0;

  constructor(problem: Problem, base: Params, parameter: string, free: string, luOptions: LUOptions = {}) {
    super(problem, base, parameter, free, problem.weights, luOptions);
    const n = this.n;
    this.f = new Float64Array(n);
    this.fPar = new Float64Array(n);
    this.fFree = new Float64Array(n);
    this.gu = new Float64Array(n);
    this.x2a = new Float64Array(n + 1);
    this.x2b = new Float64Array(n + 1);
    this.x0 = new Float64Array(n + 1);
    this.work = new Float64Array(n + 1);
    this.y = new Float64Array(n + 2);
    this.vRef = new Float64Array(n);
  }

  state(y: Float64Array): Float64Array {
    return y.slice(0, this.n);
  }

  fromState(u: Float64Array, p: Params): Float64Array {
    if (u.length !== this.n) throw new Error(`the start state has ${u.length} values, the problem has ${this.n} unknowns`);
    const y = new Float64Array(this.n + 2);
    y.set(u);
    y[this.n] = p[this.parameter];
    y[this.n + 1] = p[this.free];
    return y;
  }

  protected assemble(y: Float64Array): void {
    this.jacobianAt(y.subarray(0, this.n), this.params(y));
  }

  protected gParameterDerivatives(): [number, number] {
    this.exact();
    return [this.gPar, this.gFree];
  }

  evaluate(y: Float64Array, out: Float64Array): number {
    const n = this.n;
    this.y.set(y);
    const u = this.y.subarray(0, n);
    const p = this.params(this.y);
    const t0 = performance.now();
    this.problem.residual(u, p, this.f);
    this.border.counters.seconds.residual += (performance.now() - t0) / 1000;
    this.assemble(this.y);
    this.border.update(this.jac);
    out.set(this.f);
    out[n] = this.border.g;
    this.stateResidual.record(u, p, this.f);
    const fn = scaledNorm(this.f, this.rowScale, this.problem.weights);
    const gn = this.border.g / this.gScale;
    this.extra = Math.abs(gn);
    return Math.sqrt(fn * fn + gn * gn);
  }

  /** The linearisation at the last evaluated point (factored there). */
  exact(): void {
    this.border.ensureFactored();
    if (this.linStamp !== this.border.stamp) this.linearise();
  }

  /** Derivatives at the last evaluated point, where the border LU is (see `solve`). */
  private linearise(): void {
    this.border.ensureFactored();
    const n = this.n;
    const u = this.y.subarray(0, n);
    const p = this.params(this.y);
    const c = this.border.counters;
    const t0 = performance.now();
    this.problem.parameterDerivative(u, p, this.parameter, this.fPar);
    this.problem.parameterDerivative(u, p, this.free, this.fFree);
    c.seconds.derivatives += (performance.now() - t0) / 1000;
    this.border.gradient(u, p, this.gu);
    this.gPar = this.border.parameterDerivative(u, p, this.parameter);
    this.gFree = this.border.parameterDerivative(u, p, this.free);
    this.work.set(this.fPar);
    this.work[n] = 0;
    this.border.solveM(this.work, this.x2a);
    this.work.set(this.fFree);
    this.work[n] = 0;
    this.border.solveM(this.work, this.x2b);
    const v = this.border.v;
    let a = 0;
    let b = 0;
    let d = 0;
    for (let i = 0; i < n; i++) {
      a += this.gu[i] * v[i];
      b += this.gu[i] * this.x2a[i];
      d += this.gu[i] * this.x2b[i];
    }
    this.guV = a;
    this.guX2a = b;
    this.guX2b = d;
    this.vRef.set(v);
    this.gRef = this.border.g;
    this.linStamp = this.border.stamp;
  }

  solve(row: Float64Array, rhs: Float64Array, out: Float64Array): void {
    // a factorisation since the linearisation was made happened at the last evaluated point
    if (this.linStamp !== this.border.stamp) this.linearise();
    const n = this.n;
    const v = this.vRef;
    const g = this.gRef;
    let zero = true;
    for (let i = 0; i < n; i++) {
      if (rhs[i] !== 0) {
        zero = false;
        break;
      }
    }
    if (zero) this.x0.fill(0);
    else {
      this.work.set(rhs.subarray(0, n));
      this.work[n] = 0;
      this.border.solveM(this.work, this.x0);
    }
    let rv = 0;
    let ra = 0;
    let rb = 0;
    let r0 = 0;
    let g0 = 0;
    for (let i = 0; i < n; i++) {
      rv += row[i] * v[i];
      ra += row[i] * this.x2a[i];
      rb += row[i] * this.x2b[i];
      r0 += row[i] * this.x0[i];
      g0 += this.gu[i] * this.x0[i];
    }
    const z = solveSmall(
      [
        [g, -this.x2a[n], -this.x2b[n]],
        [this.guV, this.gPar - this.guX2a, this.gFree - this.guX2b],
        [rv, row[n] - ra, row[n + 1] - rb],
      ],
      [-this.x0[n], rhs[n] - g0, rhs[n + 1] - r0],
    );
    if (!z) throw new Error('the fold system is singular here (not a simple fold, or the curve is degenerate)');
    const [zeta, da, db] = z;
    for (let i = 0; i < n; i++) out[i] = this.x0[i] + zeta * v[i] - da * this.x2a[i] - db * this.x2b[i];
    out[n] = da;
    out[n + 1] = db;
  }

  /** G_y δ at the last evaluated point (the linearisation `solve` inverts; for derivative checks). */
  jacobianTimes(delta: Float64Array, out: Float64Array): void {
    this.exact();
    const n = this.n;
    matVec({ ...this.problem.pattern(), values: this.jac }, delta, out);
    let s = this.gPar * delta[n] + this.gFree * delta[n + 1];
    for (let i = 0; i < n; i++) {
      out[i] += this.fPar[i] * delta[n] + this.fFree[i] * delta[n + 1];
      s += this.gu[i] * delta[i];
    }
    out[n] = s;
  }

  tests(exact = false): TestValue[] {
    const u = this.y.subarray(0, this.n);
    const p = this.params(this.y);
    const det = this.border.determinant(exact);
    return [
      { value: this.border.quadraticCoefficient(u, p) },
      { value: this.border.massProduct() },
      { value: det.sign, logAbs: det.logAbs },
    ];
  }
}
