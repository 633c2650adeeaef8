/**
 * Sparse direct solver: SuiteSparse KLU (compiled to WebAssembly) behind a small class.
 *
 * One `SparseLU` owns one pattern: analyse once (fill-reducing ordering, block triangular form),
 * then factor (fresh pivots) or refactor (same pivots, new values) as often as needed, and solve
 * with one or many right-hand sides, plain or transposed. The determinant's sign and log-magnitude
 * come from the factors. Call `dispose()` when done; a FinalizationRegistry frees forgotten
 * handles as a safety net.
 *
 * `ComplexSparseLU` is the same for complex matrices (values and vectors interleaved re, im).
 */
import { klu } from './wasm.js';
import { type CscPattern, nnz as patternNnz } from './sparse.js';

export type Ordering = 'amd' | 'colamd' | 'metis' | 'given';

const ORDERING_CODE: Record<Ordering, number> = { amd: 0, colamd: 1, given: 2, metis: 3 };

export type LUErrorKind = 'singular' | 'non-finite' | 'out-of-memory' | 'invalid' | 'not-factored' | 'ordering-failed' | 'disposed';

/** A typed error from the sparse solver, with what was found. */
export class SparseLUError extends Error {
  constructor(
    readonly kind: LUErrorKind,
    message: string,
    readonly details: { column?: number; entry?: number; rcond?: number } = {},
  ) {
    super(message);
    this.name = 'SparseLUError';
  }
}

export interface LUOptions {
  /**
   * Fill-reducing ordering. 'metis' (nested dissection) suits 2D/3D grids; 'amd' suits small
   * or irregular patterns; 'given' uses `permutation`. Default: 'metis' from 2,000 unknowns up,
   * else 'amd' (see the benchmark: fill and factor time on 2D grids).
   */
  ordering?: Ordering;
  /** Column (and row) pre-ordering for 'given'. */
  permutation?: Int32Array;
  /** Block triangular form before factorising (default true). */
  btf?: boolean;
  /** Row scaling: 'max' (default), 'sum' or 'none'. */
  scale?: 'none' | 'sum' | 'max';
  /**
   * Partial pivoting tolerance in (0, 1]: a diagonal pivot is kept when it is at least this
   * fraction of the largest entry in its column; 1 is strict partial pivoting. Default 0.1
   * (common practice for unsymmetric sparse LU; KLU's own default 0.001 suits circuit matrices
   * and allows large pivot growth on ours).
   */
  pivotTolerance?: number;
  /**
   * Called before every numeric factorisation (factor, refactor, update): the place where a long
   * computation can be abandoned between factorisations — it throws (WorkInterrupted) to stop.
   * A factorisation itself runs to its end (it is one call into the solver).
   */
  beforeFactor?: () => void;
}

/**
 * Thrown by a `beforeFactor` hook to abandon the work in progress (a stop request). Code that
 * catches solver errors to try something else must let this one through (`rethrowInterrupt`).
 */
export class WorkInterrupted extends Error {
  override name = 'WorkInterrupted';
}

/** Rethrow `e` when it is a WorkInterrupted (for catch blocks that recover from solver errors). */
export function rethrowInterrupt(e: unknown): void {
  if (e instanceof WorkInterrupted) throw e;
}

/** Policy thresholds for `update` (refactor while healthy, else factor afresh). */
export interface RefactorPolicy {
  /** Refactor is rejected when the reciprocal pivot growth falls below this fraction of the last fresh factor's. */
  growthRatio: number;
  /** Refactor is rejected when rcond falls below this fraction of the last fresh factor's. */
  rcondRatio: number;
}

export const defaultRefactorPolicy: RefactorPolicy = { growthRatio: 1e-2, rcondRatio: 1e-3 };

export interface FactorStats {
  n: number;
  nnz: number;
  ordering: Ordering;
  /** Entries in L and U (diagonals included) and in the off-diagonal blocks. */
  lnz: number;
  unz: number;
  offBlockNnz: number;
  blocks: number;
  /** Factorisations with fresh pivots, refactorisations with kept pivots, solves (right-hand sides). */
  factorCount: number;
  refactorCount: number;
  solveCount: number;
}

const STATUS_OK = 0;
const STATUS_SINGULAR = 1;
const STATUS_NONFINITE = 2;

const registry = new FinalizationRegistry<{ handle: number; work: number[] }>((held) => {
  for (const p of held.work) if (p) klu._bl_free(p);
  if (held.handle) klu._bl_destroy(held.handle);
});

function statusError(status: number, what: string, handle: number): SparseLUError {
  switch (status) {
    case -1:
      return new SparseLUError('out-of-memory', `${what}: out of memory in the sparse solver (wasm memory is limited to 4 GiB)`);
    case -2:
      return new SparseLUError('invalid', `${what}: invalid matrix or pattern`);
    case -3:
      return new SparseLUError('not-factored', `${what}: the matrix has not been factored`);
    case -4:
      return new SparseLUError('ordering-failed', `${what}: the nested-dissection ordering failed`);
    case STATUS_NONFINITE: {
      const entry = klu._bl_bad_index(handle);
      return new SparseLUError(
        'non-finite',
        entry >= 0 ? `${what}: matrix entry ${entry} is not finite` : `${what}: a pivot overflowed to a non-finite value`,
        { entry },
      );
    }
    case STATUS_SINGULAR: {
      const column = klu._bl_singular_col(handle);
      return new SparseLUError('singular', `${what}: the matrix is singular (zero pivot in column ${column})`, { column, rcond: 0 });
    }
    default:
      return new SparseLUError('invalid', `${what}: solver status ${status}`);
  }
}

class LUBase {
  readonly n: number;
  readonly nnz: number;
  readonly ordering: Ordering;
  protected handle: number;
  protected readonly width: number; // 1 real, 2 complex
  private work = 0; // solve buffer in wasm memory
  private workDoubles = 0;
  private detBuf = 0;
  private held: { handle: number; work: number[] };
  protected factored = false;
  protected singular = false;
  private freshGrowth = 0;
  private freshRcond = 0;
  private counts = { factor: 0, refactor: 0, solve: 0 };
  private readonly beforeFactor: (() => void) | undefined;

  protected constructor(pattern: CscPattern, complex: boolean, options: LUOptions) {
    this.beforeFactor = options.beforeFactor;
    if (pattern.rows !== pattern.cols) {
      throw new SparseLUError('invalid', `the matrix must be square, got ${pattern.rows}x${pattern.cols}`);
    }
    this.n = pattern.rows;
    this.nnz = patternNnz(pattern);
    this.width = complex ? 2 : 1;
    this.ordering = options.ordering ?? (this.n >= 2000 ? 'metis' : 'amd');
    const h = klu._bl_create(this.n, this.nnz, complex ? 1 : 0) >>> 0;
    if (!h) throw new SparseLUError('out-of-memory', `cannot allocate a ${this.n}x${this.n} sparse matrix with ${this.nnz} entries`);
    this.handle = h;
    this.detBuf = klu._bl_malloc(32) >>> 0;
    this.held = { handle: h, work: [this.detBuf] };
    registry.register(this, this.held, this);

    const scale = options.scale === 'none' ? 0 : options.scale === 'sum' ? 1 : 2;
    klu._bl_set_options(h, options.btf === false ? 0 : 1, scale, options.pivotTolerance ?? 0.1);
    const ap = klu._bl_colptr(h) >>> 0;
    const ai = klu._bl_rowind(h) >>> 0;
    klu.HEAP32.set(pattern.colPtr.subarray(0, this.n + 1), ap >>> 2);
    klu.HEAP32.set(pattern.rowIdx.subarray(0, this.nnz), ai >>> 2);
    if (this.ordering === 'given') {
      const perm = options.permutation;
      if (!perm || perm.length !== this.n) {
        this.dispose();
        throw new SparseLUError('invalid', `ordering 'given' needs a permutation of length ${this.n}`);
      }
      klu.HEAP32.set(perm, (klu._bl_perm(h) >>> 0) >>> 2);
    }
    const status = klu._bl_analyze(h, ORDERING_CODE[this.ordering]);
    if (status !== STATUS_OK) {
      const err = statusError(status, 'sparse analysis', h);
      this.dispose();
      throw err;
    }
  }

  private checkAlive(): void {
    if (!this.handle) throw new SparseLUError('disposed', 'the sparse factorisation was disposed');
  }

  private writeValues(values: Float64Array): void {
    const m = this.nnz * this.width;
    if (values.length < m) {
      throw new SparseLUError('invalid', `expected ${m} matrix values, got ${values.length}`);
    }
    const ax = klu._bl_values(this.handle) >>> 0;
    klu.HEAPF64.set(values.subarray(0, m), ax >>> 3);
  }

  /** Fresh factorisation with new pivots. Throws SparseLUError when singular or non-finite. */
  factor(values: Float64Array): void {
    this.checkAlive();
    this.beforeFactor?.();
    this.writeValues(values);
    const status = klu._bl_factor(this.handle);
    this.counts.factor++;
    this.afterNumeric(status, 'factorisation');
    this.freshGrowth = klu._bl_rgrowth(this.handle);
    this.freshRcond = klu._bl_rcond(this.handle);
  }

  /**
   * Numeric refactorisation keeping the pivot order of the last fresh factorisation. Fast, but
   * only safe while those pivots stay good: check `pivotGrowth()` / `rcond()`, or use `update`.
   */
  refactor(values: Float64Array): void {
    this.checkAlive();
    if (!this.factored) {
      this.factor(values);
      return;
    }
    this.beforeFactor?.();
    this.writeValues(values);
    const status = klu._bl_refactor(this.handle);
    this.counts.refactor++;
    this.afterNumeric(status, 'refactorisation');
  }

  /**
   * The one place where the refactor policy lives: refactor with kept pivots while the reciprocal
   * pivot growth and rcond stay within `policy` of the last fresh factorisation; otherwise (or
   * when `fresh` is set, or nothing was factored yet) factor afresh. Returns which was done.
   */
  update(values: Float64Array, fresh = false, policy: RefactorPolicy = defaultRefactorPolicy): 'factor' | 'refactor' {
    this.checkAlive();
    if (fresh || !this.factored) {
      this.factor(values);
      return 'factor';
    }
    this.beforeFactor?.();
    this.writeValues(values);
    const status = klu._bl_refactor(this.handle);
    this.counts.refactor++;
    if (status === STATUS_OK) {
      const growth = klu._bl_rgrowth(this.handle);
      const rcond = klu._bl_rcond(this.handle);
      if (growth >= policy.growthRatio * this.freshGrowth && rcond >= policy.rcondRatio * this.freshRcond) {
        this.factored = true;
        this.singular = false;
        return 'refactor';
      }
    }
    this.factor(values);
    return 'factor';
  }

  private afterNumeric(status: number, what: string): void {
    if (status === STATUS_OK) {
      this.factored = true;
      this.singular = false;
      return;
    }
    if (status === STATUS_SINGULAR) {
      // a zero pivot: the determinant is zero, solves are refused until the next factorisation
      this.factored = false;
      this.singular = true;
      throw statusError(status, what, this.handle);
    }
    this.factored = false;
    this.singular = false;
    throw statusError(status, what, this.handle);
  }

  /** True after a successful factor/refactor (false when the last one found a zero pivot). */
  get isFactored(): boolean {
    return this.factored;
  }

  /** True when the last factorisation found an exactly zero pivot. */
  get isSingular(): boolean {
    return this.singular;
  }

  private ensureWork(doubles: number): number {
    if (doubles > this.workDoubles) {
      if (this.work) {
        klu._bl_free(this.work);
        this.held.work = this.held.work.filter((p) => p !== this.work);
      }
      const bytes = doubles * 8;
      if (bytes > 0x7fffffff) throw new SparseLUError('out-of-memory', `right-hand sides need ${bytes} bytes`);
      const p = klu._bl_malloc(bytes) >>> 0;
      if (!p) throw new SparseLUError('out-of-memory', `cannot allocate ${bytes} bytes for right-hand sides`);
      this.work = p;
      this.workDoubles = doubles;
      this.held.work.push(p);
    }
    return this.work;
  }

  protected solveInto(b: Float64Array, out: Float64Array | undefined, nrhs: number, transpose: boolean, conj: boolean): Float64Array {
    this.checkAlive();
    if (!this.factored) {
      if (this.singular) throw statusError(STATUS_SINGULAR, 'solve', this.handle);
      throw statusError(-3, 'solve', this.handle);
    }
    const m = this.n * nrhs * this.width;
    if (b.length < m) throw new SparseLUError('invalid', `right-hand side has ${b.length} values, expected ${m}`);
    const x = out ?? new Float64Array(m);
    const p = this.ensureWork(Math.max(m, 1));
    klu.HEAPF64.set(b.subarray(0, m), p >>> 3);
    const status = transpose ? klu._bl_tsolve(this.handle, p, nrhs, conj ? 1 : 0) : klu._bl_solve(this.handle, p, nrhs);
    if (status !== STATUS_OK) throw statusError(status, 'solve', this.handle);
    x.set(klu.HEAPF64.subarray(p >>> 3, (p >>> 3) + m));
    this.counts.solve += nrhs;
    for (let i = 0; i < m; i++) {
      if (!Number.isFinite(x[i])) {
        throw new SparseLUError('non-finite', `solve produced a non-finite value at index ${i} (matrix numerically singular?)`);
      }
    }
    return x;
  }

  /** Reciprocal pivot growth of the current factors (small means accuracy was lost). */
  pivotGrowth(): number {
    this.checkAlive();
    return klu._bl_rgrowth(this.handle);
  }

  /** Cheap reciprocal condition estimate min|U_kk| / max|U_kk| (0 when singular). */
  rcond(): number {
    this.checkAlive();
    if (this.singular) return 0;
    return klu._bl_rcond(this.handle);
  }

  /** 1-norm condition number estimate (a few extra solves). */
  conditionEstimate(): number {
    this.checkAlive();
    if (this.singular) return Infinity;
    return klu._bl_condest(this.handle);
  }

  protected logdetRaw(): Float64Array {
    this.checkAlive();
    if (!this.factored && !this.singular) throw statusError(-3, 'determinant', this.handle);
    const status = klu._bl_logdet(this.handle, this.detBuf);
    if (status !== STATUS_OK) throw statusError(status, 'determinant', this.handle);
    return klu.HEAPF64.slice(this.detBuf >>> 3, (this.detBuf >>> 3) + 3);
  }

  stats(): FactorStats {
    this.checkAlive();
    const h = this.handle;
    return {
      n: this.n,
      nnz: this.nnz,
      ordering: this.ordering,
      lnz: klu._bl_lnz(h),
      unz: klu._bl_unz(h),
      offBlockNnz: klu._bl_nzoff(h),
      blocks: klu._bl_nblocks(h),
      factorCount: this.counts.factor,
      refactorCount: this.counts.refactor,
      solveCount: this.counts.solve,
    };
  }

  /** Free the wasm memory now. Further calls throw. Safe to call twice. */
  dispose(): void {
    if (!this.handle) return;
    registry.unregister(this);
    for (const p of this.held.work) if (p) klu._bl_free(p);
    klu._bl_destroy(this.handle);
    this.held.work = [];
    this.handle = 0;
    this.work = 0;
    this.workDoubles = 0;
    this.factored = false;
  }
}

/** Real sparse LU (KLU). */
export class SparseLU extends LUBase {
  constructor(pattern: CscPattern, options: LUOptions = {}) {
    super(pattern, false, options);
  }

  /** Solve A x = b; b holds `nrhs` columns of length n one after another. */
  solve(b: Float64Array, out?: Float64Array, nrhs = 1): Float64Array {
    return this.solveInto(b, out, nrhs, false, false);
  }

  /** Solve Aᵀ x = b. */
  solveTranspose(b: Float64Array, out?: Float64Array, nrhs = 1): Float64Array {
    return this.solveInto(b, out, nrhs, true, false);
  }

  /** Sign (+1, −1, or 0 when singular) and natural log of |det A|. */
  logDeterminant(): { sign: number; logAbs: number } {
    const r = this.logdetRaw();
    return { sign: r[0], logAbs: r[1] };
  }
}

/** Complex sparse LU (KLU's complex variant); values and vectors interleaved (re, im). */
export class ComplexSparseLU extends LUBase {
  constructor(pattern: CscPattern, options: LUOptions = {}) {
    super(pattern, true, options);
  }

  /** Solve A x = b for interleaved complex b (2n values per right-hand side). */
  solve(b: Float64Array, out?: Float64Array, nrhs = 1): Float64Array {
    return this.solveInto(b, out, nrhs, false, false);
  }

  /** Solve Aᵀ x = b (conjugate = true: Aᴴ x = b). */
  solveTranspose(b: Float64Array, out?: Float64Array, nrhs = 1, conjugate = false): Float64Array {
    return this.solveInto(b, out, nrhs, true, conjugate);
  }

  /** det A = phase · exp(logAbs), phase a unit complex number (0 when singular). */
  logDeterminant(): { phaseRe: number; phaseIm: number; logAbs: number } {
    const r = this.logdetRaw();
    return { phaseRe: r[0], phaseIm: r[1], logAbs: r[2] };
  }
}
