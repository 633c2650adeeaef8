/**
 * What the curve systems built on the bordered null-vector matrix (./null-border.ts) share: the
 * layout of the unknowns (a state part, then `parameter` and `free`), the true residual of the
 * state (./state-residual.ts, for convergence), the frozen residual scaling (rows of F by the
 * Jacobian's row maxima, for the corrector's progress; g by the size of its parameter derivatives),
 * the borders as saved state, and the plumbing to the border's factorisation. The fold system
 * (./fold-system.ts) and the branch-point system (./branch-point-system.ts) extend it; a Hopf
 * system in J − iωM would hold a complex border of its own.
 */
import type { LUOptions } from '../../linalg/lu.js';
import type { Params, Problem } from '../../problem/problem.js';
import type { SystemCounters } from './augmented.js';
import { NullVectorBorder } from './null-border.js';
import { frozenRowScale } from './scale.js';
import { StateResidual } from './state-residual.js';
import type { CurveKind } from './types.js';

export abstract class BorderedCurveSystem {
  abstract readonly kind: CurveKind;
  readonly border: NullVectorBorder;
  /** Problem unknowns. */
  readonly n: number;
  readonly size: number;
  readonly weights: Float64Array;
  readonly parameterIndex: number;
  readonly freeIndex: number;
  /** 1 / max(1, row max of |J|) per equation row of F (the corrector's progress measure), and the scale of g (frozen per curve). */
  rowScale: Float64Array;
  gScale = 1;
  /** Jacobian values at the last assembled state. */
  protected readonly jac: Float64Array;
  readonly stateResidual: StateResidual;
  /** |g| / gScale at the last evaluated point. */
  protected extra = NaN;

  /** `stateWeights`: the inner-product weights of the system's state part (its length sets the layout). */
  constructor(
    readonly problem: Problem,
    readonly base: Params,
    readonly parameter: string,
    readonly free: string,
    stateWeights: ArrayLike<number>,
    luOptions: LUOptions = {},
  ) {
    for (const name of [parameter, free]) {
      if (!(name in base)) throw new Error(`unknown parameter '${name}' (known: ${Object.keys(base).join(', ')})`);
    }
    if (parameter === free) throw new Error(`the free parameter must differ from the continuation parameter (both are '${parameter}')`);
    this.n = problem.size;
    const m = stateWeights.length;
    this.size = m + 2;
    this.parameterIndex = m;
    this.freeIndex = m + 1;
    this.weights = new Float64Array(m + 2);
    this.weights.set(stateWeights);
    this.weights[m] = 1;
    this.weights[m + 1] = 1;
    this.border = new NullVectorBorder(problem, luOptions);
    this.rowScale = new Float64Array(this.n).fill(1);
    this.jac = new Float64Array(problem.pattern().colPtr[this.n]);
    this.stateResidual = new StateResidual(problem);
  }

  extraResidual(): number {
    return this.extra;
  }

  /** Jacobian values at the state of y into `jac`. */
  protected abstract assemble(y: Float64Array): void;
  abstract evaluate(y: Float64Array, out: Float64Array): number;
  /** g's derivatives in the two parameters at the last evaluated point (exactly linearised). */
  protected abstract gParameterDerivatives(): [number, number];

  initialise(y: Float64Array): void {
    this.assemble(y);
    this.border.initialise(this.jac);
  }

  /** The residual scaling, frozen at y (the first point of a curve). */
  setScale(y: Float64Array): void {
    this.assemble(y);
    this.rowScale = frozenRowScale(this.problem, this.jac);
    this.evaluate(y, new Float64Array(this.size - 1));
    this.gScale = Math.max(1, Math.hypot(...this.gParameterDerivatives()));
  }

  get counters(): SystemCounters {
    return this.border.counters;
  }

  params(y: Float64Array): Params {
    return { ...this.base, [this.parameter]: y[this.parameterIndex], [this.free]: y[this.freeIndex] };
  }

  /** Jacobian values at the state u into `jac` (timed). */
  protected jacobianAt(u: Float64Array, p: Params): void {
    const t0 = performance.now();
    this.problem.jacobian(u, p, this.jac);
    this.border.counters.seconds.assembly += (performance.now() - t0) / 1000;
    this.border.counters.assemblies++;
  }

  /** The rounding level of the last evaluated g, in its scaled measure. */
  residualFloor(): number {
    return this.border.gRoundingLevel() / this.gScale;
  }

  adopt(): void {
    this.border.adopt();
  }

  saveState(): Float64Array[] {
    return [this.border.b.slice(), this.border.c.slice(), this.rowScale.slice(), Float64Array.of(this.gScale)];
  }

  restoreState(saved: readonly Float64Array[]): void {
    if (saved.length !== 4 || saved[0].length !== this.n || saved[1].length !== this.n || saved[2].length !== this.n) {
      throw new Error(`the saved ${this.kind}-curve state does not fit this problem (${this.n} unknowns)`);
    }
    this.border.restoreBorders(saved[0], saved[1]);
    this.rowScale = saved[2].slice();
    this.gScale = saved[3][0];
  }

  restart(): void {
    this.border.restart();
  }

  dispose(): void {
    this.border.dispose();
  }
}
