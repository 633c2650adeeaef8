/**
 * `EigenTracker`: the rightmost eigenvalues of one Jacobian pattern, call after call along a
 * branch. It holds the LU of J − σM (symbolic analysis once per pattern, numeric
 * refactorisation per shift, kept pivots when healthy), the warm start carried from the previous
 * call, the seeded random generator of the start vectors, and the work totals.
 *
 * `compute` is the driver: check the input, answer tiny problems densely (dense.ts), bound the
 * spectrum (certification.ts), run the strategy (strategy.ts) on a fresh per-call state
 * (call.ts), and return the answer with the next warm start.
 */
import { SparseLU } from '../lu.js';
import { type CscMatrix, type CscPattern, embedPattern, entryIndex, nnz, patternUnion, transpose, validatePattern } from '../sparse.js';
import { EigenCall } from './call.js';
import { coverageHeight, spectrumEnclosure } from './certification.js';
import { denseResult } from './dense.js';
import { seededRandom } from '../random.js';
import { checkWarmStart } from './seeding.js';
import { searchNearest, searchRightmost } from './strategy.js';
import type { ComputeExtras, EigenOptions, EigenWarmStart, RightmostOptions, RightmostResult } from './types.js';

/**
 * Holds the LU of J − σM (symbolic analysis once per pattern, numeric refactorisation per call)
 * and the warm start between calls along a branch.
 */
export class EigenTracker {
  readonly n: number;
  private readonly options: Required<Omit<EigenOptions, 'mass' | 'imaginaryReach' | 'lu' | 'certifyAbove'>> & Pick<EigenOptions, 'mass' | 'imaginaryReach' | 'lu' | 'certifyAbove'>;
  private readonly pattern: CscPattern;
  private readonly shiftedPattern: CscPattern;
  private readonly embed: Int32Array;
  private readonly diagPos: Int32Array;
  private readonly transposeMap: { pattern: CscPattern; perm: Int32Array };
  private lu: SparseLU | null = null;
  private shiftedValues: Float64Array;
  private warm: EigenWarmStart | null = null;
  private random: () => number;
  readonly totals = { calls: 0, solves: 0, factorisations: 0 };

  constructor(pattern: CscPattern, options: EigenOptions) {
    validatePattern(pattern);
    if (pattern.rows !== pattern.cols) throw new RangeError(`the Jacobian must be square, got ${pattern.rows}x${pattern.cols}`);
    if (!Number.isInteger(options.count) || options.count < 1) throw new RangeError(`count must be a positive integer, got ${options.count}`);
    this.n = pattern.rows;
    if (options.mass) {
      if (options.mass.length !== this.n) throw new RangeError(`mass has length ${options.mass.length}, expected ${this.n}`);
      for (let i = 0; i < this.n; i++) {
        if (!Number.isFinite(options.mass[i])) throw new RangeError(`mass[${i}] is ${options.mass[i]}, expected a finite number`);
      }
    }
    const tol = options.tolerance ?? 1e-8;
    if (!(tol > 0 && tol < 1)) throw new RangeError(`tolerance must lie in (0, 1), got ${tol}`);
    const guard = options.guard ?? Math.max(2, Math.ceil(options.count / 3));
    if (!Number.isInteger(guard) || guard < 0) throw new RangeError(`guard must be a non-negative integer, got ${guard}`);
    const kw = options.count + guard;
    const basis = options.basisSize ?? Math.max(20, 2 * kw + 4);
    if (!Number.isInteger(basis) || basis < kw + 3) throw new RangeError(`basisSize must be an integer ≥ count + guard + 3 = ${kw + 3}, got ${basis}`);
    if (options.certifyAbove !== undefined && !Number.isFinite(options.certifyAbove)) {
      throw new RangeError(`certifyAbove must be a finite number, got ${options.certifyAbove}`);
    }
    if (options.imaginaryReach !== undefined && !(options.imaginaryReach >= 0)) {
      throw new RangeError(`imaginaryReach must be ≥ 0, got ${options.imaginaryReach}`);
    }
    this.options = {
      count: options.count,
      mass: options.mass,
      tolerance: tol,
      basisSize: basis,
      maxRestarts: options.maxRestarts ?? 60,
      transform: options.transform ?? 'cayley',
      shift: options.shift ?? 0,
      imaginaryReach: options.imaginaryReach,
      maxShifts: options.maxShifts ?? 3,
      guard,
      certifyAbove: options.certifyAbove,
      seed: options.seed ?? 20240917,
      lu: options.lu,
    };
    if (this.options.transform !== 'cayley' && this.options.transform !== 'shift-invert') {
      throw new RangeError(`transform must be 'cayley' or 'shift-invert', got '${String(this.options.transform)}'`);
    }
    this.pattern = pattern;
    // J − σM lives on the pattern of J plus the full diagonal
    const diag: CscPattern = {
      rows: this.n,
      cols: this.n,
      colPtr: Int32Array.from({ length: this.n + 1 }, (_, i) => i),
      rowIdx: Int32Array.from({ length: this.n }, (_, i) => i),
    };
    this.shiftedPattern = patternUnion(pattern, diag);
    this.embed = embedPattern(pattern, this.shiftedPattern);
    this.diagPos = new Int32Array(this.n);
    for (let i = 0; i < this.n; i++) this.diagPos[i] = entryIndex(this.shiftedPattern, i, i);
    this.shiftedValues = new Float64Array(nnz(this.shiftedPattern));
    // transpose with a value permutation, for the enclosure
    const idx = new Float64Array(nnz(pattern));
    for (let p = 0; p < idx.length; p++) idx[p] = p;
    const tr = transpose({ ...pattern, values: idx });
    this.transposeMap = { pattern: tr, perm: Int32Array.from(tr.values) };
    this.random = seededRandom(this.options.seed);
  }

  /** Warm start carried to the next call (null before the first call or after `reset`). */
  get warmStart(): EigenWarmStart | null {
    return this.warm;
  }

  set warmStart(w: EigenWarmStart | null) {
    if (w) checkWarmStart(w, this.n);
    this.warm = w;
  }

  /** Forget the warm start (next call starts cold). */
  reset(): void {
    this.warm = null;
  }

  /**
   * Start afresh as a new tracker would: no factorisation kept (its pivot order), the random
   * start vectors reseeded, no warm start. After this the results depend only on the arguments
   * of the next calls (used when a continuation run writes a checkpoint, so that a run resumed
   * from it repeats the same computations bit for bit).
   */
  restart(): void {
    // keep the symbolic analysis (deterministic for a pattern); the next factorisation takes
    // fresh pivots, exactly as a new tracker's first one would
    this.freshNext = true;
    this.random = seededRandom(this.options.seed);
    this.warm = null;
  }

  /** The next factorisation takes fresh pivots (set by restart). */
  private freshNext = false;

  dispose(): void {
    this.lu?.dispose();
    this.lu = null;
  }

  /** Rightmost eigenvalues of J (values aligned with the tracker's pattern). */
  compute(values: Float64Array, extras: ComputeExtras = {}): RightmostResult {
    const o = this.options;
    const n = this.n;
    if (values.length < nnz(this.pattern)) throw new RangeError(`expected ${nnz(this.pattern)} Jacobian values, got ${values.length}`);
    for (let p = 0; p < nnz(this.pattern); p++) {
      if (!Number.isFinite(values[p])) throw new RangeError(`Jacobian value ${p} is ${values[p]}, expected a finite number`);
    }
    const J: CscMatrix = { ...this.pattern, values };
    const warm = extras.warmStart !== undefined ? extras.warmStart : this.warm;
    if (warm) checkWarmStart(warm, n);
    this.totals.calls++;
    if (n <= o.basisSize + 2) {
      // tiny problems: dense
      const res = denseResult(J, o);
      this.warm = res.warmStart;
      return res;
    }
    const call = new EigenCall({ ...o, J, random: this.random, factor: (sigma) => this.factor(values, sigma) });
    const perm = this.transposeMap.perm;
    const jtValues = new Float64Array(perm.length);
    for (let p = 0; p < perm.length; p++) jtValues[p] = values[perm[p]];
    const Jt: CscMatrix = { ...this.transposeMap.pattern, values: jtValues };
    const enclosure = spectrumEnclosure(J, Jt, o.mass);
    const Y = coverageHeight(enclosure, o.imaginaryReach, call.jNorm);
    if (o.transform === 'shift-invert') searchNearest(call, o.shift, warm, extras.factored);
    else searchRightmost(call, o, warm, extras.factored, enclosure, Y);
    const result = call.result(enclosure, Y);
    this.warm = result.warmStart;
    this.totals.solves += result.solves;
    this.totals.factorisations += result.factorisations;
    return result;
  }

  private factor(values: Float64Array, sigma: number): SparseLU {
    const v = this.shiftedValues;
    v.fill(0);
    for (let p = 0; p < this.embed.length; p++) v[this.embed[p]] += values[p];
    const mass = this.options.mass;
    for (let i = 0; i < this.n; i++) v[this.diagPos[i]] -= sigma * (mass ? mass[i] : 1);
    if (!this.lu) this.lu = new SparseLU(this.shiftedPattern, this.options.lu ?? {});
    this.lu.update(v, this.freshNext);
    this.freshNext = false;
    return this.lu;
  }
}

/**
 * One-shot rightmost eigenvalues of J v = μ M v (see src/linalg/eigen.ts). For tracking along a
 * branch keep an `EigenTracker` instead: it keeps the LU's symbolic analysis and the warm start.
 */
export function rightmostEigenvalues(J: CscMatrix, options: RightmostOptions): RightmostResult {
  const tracker = new EigenTracker(J, options);
  try {
    return tracker.compute(J.values, { warmStart: options.warmStart ?? null, factored: options.factored });
  } finally {
    tracker.dispose();
  }
}
