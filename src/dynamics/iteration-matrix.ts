/**
 * The Newton iteration matrix of an implicit time step,  A = M − c·J,  where J = F_u is the
 * problem's Jacobian at some state, M its diagonal mass matrix and c = γh the step's scaled
 * size; and its sparse LU (src/linalg/lu.ts).
 *
 * The pattern is the Jacobian's united with the diagonal (analysed once). The matrix is formed
 * and factorised only when asked: the integrator decides when the step size or the Jacobian has
 * changed enough to be worth it, and otherwise keeps solving with the factors it has (a
 * modified Newton iteration). `c` is the scaled step size the factors were made with.
 *
 * `c = Infinity` gives A = −J (plain Newton on F = 0); a large finite c gives −(J − M/c), the
 * slightly shifted matrix of the Newton polish.
 */
import { SparseLU, type LUOptions } from '../linalg/lu.js';
import { type CscPattern, embedPattern, nnz, patternUnion } from '../linalg/sparse.js';
import type { Params, Problem } from '../problem/problem.js';

/** The identity's pattern of size n. */
function diagonalPattern(n: number): CscPattern {
  const colPtr = new Int32Array(n + 1);
  const rowIdx = new Int32Array(n);
  for (let i = 0; i < n; i++) {
    colPtr[i + 1] = i + 1;
    rowIdx[i] = i;
  }
  return { rows: n, cols: n, colPtr, rowIdx };
}

export class IterationMatrix {
  readonly n: number;
  readonly pattern: CscPattern;
  /** Jacobian values on the problem's pattern (the last `evaluateJacobian`). */
  readonly jacobian: Float64Array;
  /** The mass diagonal (ones when the problem has none). */
  readonly mass: Float64Array;
  private readonly values: Float64Array;
  private readonly jacobianAt: Int32Array;
  private readonly diagonalAt: Int32Array;
  private lu: SparseLU | undefined;
  private readonly luOptions: LUOptions;
  /** Scaled step size of the current factors (NaN: none). */
  c = Number.NaN;
  /** Counts since construction. */
  jacobians = 0;
  factorisations = 0;
  refactorisations = 0;
  solves = 0;

  constructor(
    readonly problem: Problem,
    luOptions: LUOptions = {},
  ) {
    const n = problem.size;
    this.n = n;
    const jp = problem.pattern();
    this.pattern = patternUnion(jp, diagonalPattern(n));
    this.jacobianAt = embedPattern(jp, this.pattern);
    this.diagonalAt = embedPattern(diagonalPattern(n), this.pattern);
    this.jacobian = new Float64Array(nnz(jp));
    this.values = new Float64Array(nnz(this.pattern));
    this.mass = problem.massDiagonal ? Float64Array.from(problem.massDiagonal) : new Float64Array(n).fill(1);
    this.luOptions = luOptions;
  }

  /** Whether factors are available. */
  get factored(): boolean {
    return this.lu !== undefined && this.lu.isFactored && !Number.isNaN(this.c);
  }

  /** J at (u, p). */
  evaluateJacobian(u: Float64Array, p: Params): void {
    this.problem.jacobian(u, p, this.jacobian);
    this.jacobians++;
  }

  /**
   * Form A = M − cJ from the last Jacobian and factorise it (kept pivots while they stay healthy,
   * fresh ones when `fresh` or when the LU's refactor policy rejects the old ones). Throws the
   * LU's SparseLUError when A is singular or not finite.
   */
  factor(c: number, fresh = false): void {
    const v = this.values;
    v.fill(0);
    const J = this.jacobian;
    const map = this.jacobianAt;
    if (c === Infinity) {
      for (let k = 0; k < J.length; k++) v[map[k]] = -J[k];
    } else {
      for (let k = 0; k < J.length; k++) v[map[k]] = -c * J[k];
      const d = this.diagonalAt;
      const m = this.mass;
      for (let i = 0; i < this.n; i++) v[d[i]] += m[i];
    }
    this.lu ??= new SparseLU(this.pattern, this.luOptions);
    this.c = Number.NaN;
    const done = this.lu.update(v, fresh || this.freshPending);
    this.freshPending = false;
    if (done === 'factor') this.factorisations++;
    else this.refactorisations++;
    this.c = c;
  }

  /** Solve A x = b with the current factors (x written into `out`). */
  solve(b: Float64Array, out: Float64Array): Float64Array {
    if (!this.lu) throw new Error('the iteration matrix has not been factorised');
    this.solves++;
    return this.lu.solve(b, out);
  }

  private freshPending = false;

  /**
   * Forget the factors: the next factorisation takes fresh pivots, exactly as a new matrix's
   * first one would (the symbolic analysis is deterministic and is kept).
   */
  forget(): void {
    this.c = Number.NaN;
    this.freshPending = true;
  }

  dispose(): void {
    this.lu?.dispose();
    this.lu = undefined;
    this.c = Number.NaN;
  }
}
