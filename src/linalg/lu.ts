/**
 * Sparse direct solvers compiled to WebAssembly behind one small class, with two backends:
 *  - 'klu': SuiteSparse KLU, a left-looking sparse LU (Gilbert–Peierls) with block triangular
 *    form; it can refactor with kept pivots, cheaply; best for small and moderate fill;
 *  - 'superlu': SuperLU, a supernodal left-looking LU with partial pivoting: dense blocks where
 *    the factor has them (2D grids from tens of thousands of unknowns, 3D grids, several fields,
 *    periodic directions), factored afresh each time.
 * 'auto' (the default) chooses from the pattern alone, deterministically: the fill-reducing
 * ordering's predicted factor (entries, flops, supernodes; see `decideBackend`), never from
 * timings, so that results do not depend on the machine's load. KLU is the fallback.
 *
 * One `SparseLU` owns one pattern: analyse once (fill-reducing ordering; block triangular form
 * with KLU), then factor (fresh pivots) or refactor (KLU: same pivots, new values; SuperLU: a
 * fresh factorisation) as often as needed, and solve with one or many right-hand sides, plain or
 * transposed. The determinant's sign and log-magnitude come from the factors. Call `dispose()`
 * when done; a FinalizationRegistry frees forgotten handles as a safety net.
 *
 * `ComplexSparseLU` is the same for complex matrices (values and vectors interleaved re, im).
 */
import { klu, superlu } from './wasm.js';
import { type CscPattern, nnz as patternNnz } from './sparse.js';

export type Ordering = 'amd' | 'colamd' | 'metis' | 'given';

/** The sparse LU codes compiled to WebAssembly (see the header). */
export type Backend = 'klu' | 'superlu';
export const backends: readonly Backend[] = ['klu', 'superlu'];

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
  /**
   * Which sparse LU: 'klu', 'superlu', or 'auto' (default) — chosen from the pattern by
   * `decideBackend` (problems below 2,000 unknowns always get KLU).
   */
  backend?: Backend | 'auto';
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

/** What the fill-reducing ordering predicts for the factor (a Cholesky factor of P(A + Aᵀ)Pᵀ). */
export interface FactorPrediction {
  /** Entries of L (diagonal included); U has as many. */
  entries: number;
  /** Floating-point operations of the LU with diagonal pivots. */
  flops: number;
  /** Fundamental supernodes (groups of columns with one structure). */
  supernodes: number;
}

/** Which backend a factorisation uses and why (recorded in run.json). */
export interface BackendDecision {
  backend: Backend;
  /** 'auto' when chosen from the pattern, else the explicit request. */
  requested: Backend | 'auto';
  reason: string;
  prediction?: FactorPrediction;
}

/** Below this many unknowns 'auto' takes KLU without analysing the pattern. */
export const autoMinimumUnknowns = 2000;

/**
 * The automatic choice, from the predicted factor alone (deterministic). SuperLU's dense kernels
 * pay when the factor is large and dense in places — many operations per entry of L, which is
 * what wide separators (3D grids), several coupled fields and periodic directions produce. On
 * the benchmark's bordered matrices (wasm/README.md) SuperLU factored 2D Gray–Scott periodic 128²
 * (1.1·10⁹ flops, 590 per entry) 2–2.5× and 3D Bratu 40³ (2.8·10¹⁰ flops, 2,100 per entry) 3.6×
 * faster than KLU, while on scalar 2D grids up to 400² (at most 340 per entry) KLU's
 * refactorisations with kept pivots were as fast or faster. Hence: SuperLU from 5·10⁸ predicted
 * flops and 450 flops per entry, else KLU.
 */
export function decideBackend(n: number, p: FactorPrediction): { backend: Backend; reason: string } {
  const perEntry = p.flops / Math.max(1, p.entries);
  const facts = `predicted factor of ${n} unknowns: ${fmtCount(p.entries)} entries in L, ${fmtCount(p.flops)} flops, ${perEntry.toFixed(0)} flops per entry`;
  if (p.flops >= autoFlopsThreshold && perEntry >= autoFlopsPerEntry) {
    return { backend: 'superlu', reason: `${facts}: SuperLU (supernodal) pays from ${fmtCount(autoFlopsThreshold)} flops and ${autoFlopsPerEntry} flops per entry` };
  }
  return { backend: 'klu', reason: `${facts}: below ${fmtCount(autoFlopsThreshold)} flops or ${autoFlopsPerEntry} flops per entry, KLU (cheap refactorisations with kept pivots) is as fast or faster` };
}

const autoFlopsThreshold = 5e8;
const autoFlopsPerEntry = 450;

function fmtCount(x: number): string {
  return x >= 1e5 ? x.toExponential(2).replace('e+', 'e') : String(Math.round(x));
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
  backend: Backend;
  /** Entries in L and U (diagonals included) and in the off-diagonal blocks (KLU's block triangular form). */
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
/** Not a glue status: the pattern is structurally singular (see LUBase.deficientColumn). */
const STATUS_STRUCTURAL = 101;

/** One backend's entry points, in the common shape both glues share (wasm/glue/bl_klu.c, bl_superlu.c). */
interface Native {
  readonly name: Backend;
  /** Whether refactor keeps the pivots of the last factorisation (KLU); SuperLU factors afresh. */
  readonly keepsPivots: boolean;
  heap(): { HEAP32: Int32Array; HEAPF64: Float64Array };
  create(n: number, nnz: number, complex: number): number;
  destroy(h: number): void;
  colptr(h: number): number;
  rowind(h: number): number;
  values(h: number): number;
  perm(h: number): number;
  setOptions(h: number, btf: boolean, scale: number, tol: number): void;
  analyze(h: number, ordering: number): number;
  factor(h: number): number;
  refactor(h: number): number;
  badIndex(h: number): number;
  singularCol(h: number): number;
  lnz(h: number): number;
  unz(h: number): number;
  offBlock(h: number): number;
  blocks(h: number): number;
  rgrowth(h: number): number;
  rcond(h: number): number;
  condest(h: number): number;
  solve(h: number, b: number, nrhs: number): number;
  tsolve(h: number, b: number, nrhs: number, conj: number): number;
  logdet(h: number, out: number): number;
  malloc(bytes: number): number;
  free(p: number): void;
}

const kluNative: Native = {
  name: 'klu',
  keepsPivots: true,
  heap: () => klu,
  create: (n, nnz, c) => klu._bl_create(n, nnz, c),
  destroy: (h) => klu._bl_destroy(h),
  colptr: (h) => klu._bl_colptr(h),
  rowind: (h) => klu._bl_rowind(h),
  values: (h) => klu._bl_values(h),
  perm: (h) => klu._bl_perm(h),
  setOptions: (h, btf, scale, tol) => klu._bl_set_options(h, btf ? 1 : 0, scale, tol),
  analyze: (h, o) => klu._bl_analyze(h, o),
  factor: (h) => klu._bl_factor(h),
  refactor: (h) => klu._bl_refactor(h),
  badIndex: (h) => klu._bl_bad_index(h),
  singularCol: (h) => klu._bl_singular_col(h),
  lnz: (h) => klu._bl_lnz(h),
  unz: (h) => klu._bl_unz(h),
  offBlock: (h) => klu._bl_nzoff(h),
  blocks: (h) => klu._bl_nblocks(h),
  rgrowth: (h) => klu._bl_rgrowth(h),
  rcond: (h) => klu._bl_rcond(h),
  condest: (h) => klu._bl_condest(h),
  solve: (h, b, nrhs) => klu._bl_solve(h, b, nrhs),
  tsolve: (h, b, nrhs, conj) => klu._bl_tsolve(h, b, nrhs, conj),
  logdet: (h, out) => klu._bl_logdet(h, out),
  malloc: (bytes) => klu._bl_malloc(bytes),
  free: (p) => klu._bl_free(p),
};

const superluNative: Native = {
  name: 'superlu',
  keepsPivots: false,
  heap: () => superlu,
  create: (n, nnz, c) => superlu._bs_create(n, nnz, c),
  destroy: (h) => superlu._bs_destroy(h),
  colptr: (h) => superlu._bs_colptr(h),
  rowind: (h) => superlu._bs_rowind(h),
  values: (h) => superlu._bs_values(h),
  perm: (h) => superlu._bs_perm(h),
  setOptions: (h, _btf, scale, tol) => superlu._bs_set_options(h, scale, tol),
  analyze: (h, o) => superlu._bs_analyze(h, o),
  factor: (h) => superlu._bs_factor(h),
  refactor: (h) => superlu._bs_refactor(h),
  badIndex: (h) => superlu._bs_bad_index(h),
  singularCol: (h) => superlu._bs_singular_col(h),
  lnz: (h) => superlu._bs_lnz(h),
  unz: (h) => superlu._bs_unz(h),
  offBlock: () => 0,
  blocks: () => 1,
  rgrowth: (h) => superlu._bs_rgrowth(h),
  rcond: (h) => superlu._bs_rcond(h),
  condest: (h) => superlu._bs_condest(h),
  solve: (h, b, nrhs) => superlu._bs_solve(h, b, nrhs),
  tsolve: (h, b, nrhs, conj) => superlu._bs_tsolve(h, b, nrhs, conj),
  logdet: (h, out) => superlu._bs_logdet(h, out),
  malloc: (bytes) => superlu._bs_malloc(bytes),
  free: (p) => superlu._bs_free(p),
};

const natives: Record<Backend, Native> = { klu: kluNative, superlu: superluNative };

interface Held {
  native: Native;
  handle: number;
  work: number[];
}

const registry = new FinalizationRegistry<Held>((held) => {
  for (const p of held.work) if (p) held.native.free(p);
  if (held.handle) held.native.destroy(held.handle);
});

function statusError(native: Native, status: number, what: string, handle: number): SparseLUError {
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
      const entry = native.badIndex(handle);
      return new SparseLUError(
        'non-finite',
        entry >= 0 ? `${what}: matrix entry ${entry} is not finite` : `${what}: a pivot overflowed to a non-finite value`,
        { entry },
      );
    }
    case STATUS_SINGULAR: {
      const column = native.singularCol(handle);
      return new SparseLUError('singular', `${what}: the matrix is singular (zero pivot in column ${column})`, { column, rcond: 0 });
    }
    default:
      return new SparseLUError('invalid', `${what}: solver status ${status}`);
  }
}

/** Write a pattern (and a permutation for 'given') into a fresh handle and analyse it; throws on failure. */
function analysedHandle(native: Native, pattern: CscPattern, n: number, nnz: number, complex: boolean, ordering: Ordering, options: LUOptions): number {
  const h = native.create(n, nnz, complex ? 1 : 0) >>> 0;
  if (!h) throw new SparseLUError('out-of-memory', `cannot allocate a ${n}x${n} sparse matrix with ${nnz} entries`);
  const scale = options.scale === 'none' ? 0 : options.scale === 'sum' ? 1 : 2;
  native.setOptions(h, options.btf !== false, scale, options.pivotTolerance ?? 0.1);
  const heap = native.heap();
  heap.HEAP32.set(pattern.colPtr.subarray(0, n + 1), (native.colptr(h) >>> 0) >>> 2);
  heap.HEAP32.set(pattern.rowIdx.subarray(0, nnz), (native.rowind(h) >>> 0) >>> 2);
  if (ordering === 'given') {
    const perm = options.permutation;
    if (!perm || perm.length !== n) {
      native.destroy(h);
      throw new SparseLUError('invalid', `ordering 'given' needs a permutation of length ${n}`);
    }
    native.heap().HEAP32.set(perm, (native.perm(h) >>> 0) >>> 2);
  }
  const status = native.analyze(h, ORDERING_CODE[ordering]);
  if (status !== STATUS_OK) {
    const err = statusError(native, status, 'sparse analysis', h);
    native.destroy(h);
    throw err;
  }
  return h;
}

/** The prediction of an analysed SuperLU handle (its ordering's Cholesky counts). */
function superluPrediction(h: number): FactorPrediction {
  const out = superlu._bs_malloc(24) >>> 0;
  try {
    const status = superlu._bs_symbolic(h, out);
    if (status !== STATUS_OK) throw statusError(superluNative, status, 'symbolic analysis', h);
    const v = superlu.HEAPF64.subarray(out >>> 3, (out >>> 3) + 3);
    return { entries: v[0], flops: v[1], supernodes: v[2] };
  } finally {
    superlu._bs_free(out);
  }
}

/**
 * Predicted factor of `pattern` under an ordering (default: METIS nested dissection), from a
 * SuperLU analysis: what `decideBackend` decides on (exported for the benchmark and tests).
 */
export function predictFactor(pattern: CscPattern, ordering: Ordering = 'metis', permutation?: Int32Array): FactorPrediction {
  const n = pattern.rows;
  const h = analysedHandle(superluNative, pattern, n, patternNnz(pattern), false, ordering, { permutation });
  try {
    return superluPrediction(h);
  } finally {
    superlu._bs_destroy(h);
  }
}

/**
 * A column left unmatched by a maximum matching of columns to rows on the pattern (the matrix is
 * then singular for any values: structurally singular), or -1 when the pattern has full
 * structural rank. Depth-first augmenting paths with a cheap first pass (Duff's MC21 idea),
 * iterative so that long paths cannot overflow the stack.
 */
export function structurallyDeficientColumn(pattern: CscPattern): number {
  const n = pattern.cols;
  if (pattern.rows !== n) return -1;
  const { colPtr, rowIdx } = pattern;
  const rowMatch = new Int32Array(n).fill(-1);
  const visited = new Int32Array(n).fill(-1);
  const stack = new Int32Array(n);
  const next = new Int32Array(n);
  const rowOf = new Int32Array(n);
  for (let j = 0; j < n; j++) {
    let cheap = -1;
    for (let p = colPtr[j]; p < colPtr[j + 1]; p++) {
      if (rowMatch[rowIdx[p]] < 0) {
        cheap = rowIdx[p];
        break;
      }
    }
    if (cheap >= 0) {
      rowMatch[cheap] = j;
      continue;
    }
    // augmenting path from column j: stack of columns, the row through which each was reached in `next`
    let top = 0;
    stack[0] = j;
    next[0] = colPtr[j];
    let found = -1;
    while (top >= 0 && found < 0) {
      const c = stack[top];
      let pushed = false;
      while (next[top] < colPtr[c + 1]) {
        const i = rowIdx[next[top]++];
        if (visited[i] === j) continue;
        visited[i] = j;
        rowOf[top] = i;
        if (rowMatch[i] < 0) {
          found = top;
          break;
        }
        top++;
        stack[top] = rowMatch[i];
        next[top] = colPtr[rowMatch[i]];
        pushed = true;
        break;
      }
      if (found >= 0) break;
      if (!pushed) top--;
    }
    if (found < 0) return j;
    // flip the path: column stack[k] takes row rowOf[k]
    for (let k = found; k >= 0; k--) rowMatch[rowOf[k]] = stack[k];
  }
  return -1;
}

class LUBase {
  readonly n: number;
  readonly nnz: number;
  readonly ordering: Ordering;
  /** Which backend factors this matrix, and why. */
  readonly decision: BackendDecision;
  protected handle: number;
  protected readonly width: number; // 1 real, 2 complex
  private readonly native: Native;
  private work = 0; // solve buffer in wasm memory
  private workDoubles = 0;
  private detBuf = 0;
  private held: Held;
  protected factored = false;
  protected singular = false;
  private freshGrowth = 0;
  private freshRcond = 0;
  private counts = { factor: 0, refactor: 0, solve: 0 };
  private readonly beforeFactor: (() => void) | undefined;
  /**
   * SuperLU only: a column no maximum matching covers (-1: none). SuperLU 3.0's pivot search
   * indexes past a column with no candidate rows, so a structurally singular pattern is reported
   * singular here, before its numeric factorisation is attempted.
   */
  private readonly deficientColumn: number;

  protected constructor(pattern: CscPattern, complex: boolean, options: LUOptions) {
    this.beforeFactor = options.beforeFactor;
    if (pattern.rows !== pattern.cols) {
      throw new SparseLUError('invalid', `the matrix must be square, got ${pattern.rows}x${pattern.cols}`);
    }
    this.n = pattern.rows;
    this.nnz = patternNnz(pattern);
    this.width = complex ? 2 : 1;
    this.ordering = options.ordering ?? (this.n >= 2000 ? 'metis' : 'amd');
    const requested = options.backend ?? 'auto';
    if (requested !== 'auto' && !(requested in natives)) {
      throw new SparseLUError('invalid', `unknown sparse LU backend '${String(requested)}' (accepted: auto, ${backends.join(', ')})`);
    }
    let h = 0;
    if (requested !== 'auto') {
      this.decision = { backend: requested, requested, reason: `${requested} requested` };
    } else if (this.n < autoMinimumUnknowns) {
      this.decision = { backend: 'klu', requested, reason: `small problem (${this.n} unknowns, below ${autoMinimumUnknowns}): KLU` };
    } else {
      // analyse with SuperLU (the ordering and its predicted factor); keep the analysis if it wins
      h = analysedHandle(superluNative, pattern, this.n, this.nnz, complex, this.ordering, options);
      let prediction: FactorPrediction;
      try {
        prediction = superluPrediction(h);
      } catch (e) {
        superluNative.destroy(h);
        throw e;
      }
      const d = decideBackend(this.n, prediction);
      this.decision = { ...d, requested, prediction };
      if (d.backend !== 'superlu') {
        superluNative.destroy(h);
        h = 0;
      }
    }
    this.native = natives[this.decision.backend];
    this.deficientColumn = this.native.name === 'superlu' ? structurallyDeficientColumn(pattern) : -1;
    if (!h) h = analysedHandle(this.native, pattern, this.n, this.nnz, complex, this.ordering, options);
    this.handle = h;
    this.detBuf = this.native.malloc(32) >>> 0;
    this.held = { native: this.native, handle: h, work: [this.detBuf] };
    registry.register(this, this.held, this);
  }

  /** The backend that factors this matrix. */
  get backend(): Backend {
    return this.native.name;
  }

  private checkAlive(): void {
    if (!this.handle) throw new SparseLUError('disposed', 'the sparse factorisation was disposed');
  }

  private writeValues(values: Float64Array): void {
    const m = this.nnz * this.width;
    if (values.length < m) {
      throw new SparseLUError('invalid', `expected ${m} matrix values, got ${values.length}`);
    }
    const ax = this.native.values(this.handle) >>> 0;
    this.native.heap().HEAPF64.set(values.subarray(0, m), ax >>> 3);
  }

  /** Fresh factorisation with new pivots. Throws SparseLUError when singular or non-finite. */
  factor(values: Float64Array): void {
    this.checkAlive();
    this.beforeFactor?.();
    this.writeValues(values);
    const status = this.deficientColumn >= 0 ? STATUS_STRUCTURAL : this.native.factor(this.handle);
    this.counts.factor++;
    this.afterNumeric(status, 'factorisation');
    this.freshGrowth = this.native.rgrowth(this.handle);
    this.freshRcond = this.native.rcond(this.handle);
  }

  /**
   * Numeric refactorisation keeping the pivot order of the last fresh factorisation (KLU). Fast,
   * but only safe while those pivots stay good: check `pivotGrowth()` / `rcond()`, or use
   * `update`. SuperLU has no cheaper refactorisation: it factors afresh (counted as a factorisation).
   */
  refactor(values: Float64Array): void {
    this.checkAlive();
    if (!this.factored || !this.native.keepsPivots) {
      this.factor(values);
      return;
    }
    this.beforeFactor?.();
    this.writeValues(values);
    const status = this.native.refactor(this.handle);
    this.counts.refactor++;
    this.afterNumeric(status, 'refactorisation');
  }

  /**
   * The one place where the refactor policy lives: refactor with kept pivots while the reciprocal
   * pivot growth and rcond stay within `policy` of the last fresh factorisation; otherwise (or
   * when `fresh` is set, or nothing was factored yet, or the backend keeps no pivots) factor
   * afresh. Returns which was done.
   */
  update(values: Float64Array, fresh = false, policy: RefactorPolicy = defaultRefactorPolicy): 'factor' | 'refactor' {
    this.checkAlive();
    if (fresh || !this.factored || !this.native.keepsPivots) {
      this.factor(values);
      return 'factor';
    }
    this.beforeFactor?.();
    this.writeValues(values);
    const status = this.native.refactor(this.handle);
    this.counts.refactor++;
    if (status === STATUS_OK) {
      const growth = this.native.rgrowth(this.handle);
      const rcond = this.native.rcond(this.handle);
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
    if (status === STATUS_STRUCTURAL) {
      this.factored = false;
      this.singular = true;
      const column = this.deficientColumn;
      throw new SparseLUError('singular', `${what}: the matrix is singular (structurally: no pivot can be found for column ${column})`, { column, rcond: 0 });
    }
    if (status === STATUS_SINGULAR) {
      // a zero pivot: the determinant is zero, solves are refused until the next factorisation
      this.factored = false;
      this.singular = true;
      throw statusError(this.native, status, what, this.handle);
    }
    this.factored = false;
    this.singular = false;
    throw statusError(this.native, status, what, this.handle);
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
        this.native.free(this.work);
        this.held.work = this.held.work.filter((p) => p !== this.work);
      }
      const bytes = doubles * 8;
      if (bytes > 0x7fffffff) throw new SparseLUError('out-of-memory', `right-hand sides need ${bytes} bytes`);
      const p = this.native.malloc(bytes) >>> 0;
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
      if (this.singular) throw statusError(this.native, STATUS_SINGULAR, 'solve', this.handle);
      throw statusError(this.native, -3, 'solve', this.handle);
    }
    const m = this.n * nrhs * this.width;
    if (b.length < m) throw new SparseLUError('invalid', `right-hand side has ${b.length} values, expected ${m}`);
    const x = out ?? new Float64Array(m);
    const p = this.ensureWork(Math.max(m, 1));
    this.native.heap().HEAPF64.set(b.subarray(0, m), p >>> 3);
    const status = transpose ? this.native.tsolve(this.handle, p, nrhs, conj ? 1 : 0) : this.native.solve(this.handle, p, nrhs);
    if (status !== STATUS_OK) throw statusError(this.native, status, 'solve', this.handle);
    x.set(this.native.heap().HEAPF64.subarray(p >>> 3, (p >>> 3) + m));
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
    return this.native.rgrowth(this.handle);
  }

  /** Cheap reciprocal condition estimate min|U_kk| / max|U_kk| (0 when singular). */
  rcond(): number {
    this.checkAlive();
    if (this.singular) return 0;
    return this.native.rcond(this.handle);
  }

  /** 1-norm condition number estimate (a few extra solves). */
  conditionEstimate(): number {
    this.checkAlive();
    if (this.singular) return Infinity;
    return this.native.condest(this.handle);
  }

  protected logdetRaw(): Float64Array {
    this.checkAlive();
    if (!this.factored && !this.singular) throw statusError(this.native, -3, 'determinant', this.handle);
    // the glue's convention for a singular matrix: sign (or phase) 0 and log|det| = −∞
    if (this.singular && this.deficientColumn >= 0) return this.width === 1 ? Float64Array.of(0, -Infinity, -Infinity) : Float64Array.of(0, 0, -Infinity);
    const status = this.native.logdet(this.handle, this.detBuf);
    if (status !== STATUS_OK) throw statusError(this.native, status, 'determinant', this.handle);
    return this.native.heap().HEAPF64.slice(this.detBuf >>> 3, (this.detBuf >>> 3) + 3);
  }

  stats(): FactorStats {
    this.checkAlive();
    const h = this.handle;
    return {
      n: this.n,
      nnz: this.nnz,
      ordering: this.ordering,
      backend: this.native.name,
      lnz: this.native.lnz(h),
      unz: this.native.unz(h),
      offBlockNnz: this.native.offBlock(h),
      blocks: this.native.blocks(h),
      factorCount: this.counts.factor,
      refactorCount: this.counts.refactor,
      solveCount: this.counts.solve,
    };
  }

  /** Free the wasm memory now. Further calls throw. Safe to call twice. */
  dispose(): void {
    if (!this.handle) return;
    registry.unregister(this);
    for (const p of this.held.work) if (p) this.native.free(p);
    this.native.destroy(this.handle);
    this.held.work = [];
    this.handle = 0;
    this.work = 0;
    this.workDoubles = 0;
    this.factored = false;
  }
}

/** Real sparse LU (KLU or SuperLU, see LUOptions.backend). */
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

/** Complex sparse LU (KLU's or SuperLU's complex variant); values and vectors interleaved (re, im). */
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
