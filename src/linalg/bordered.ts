/**
 * Bordered matrices  [[A, B], [C, D]]  with a sparse n×n block A and k dense border columns B
 * (n×k), k dense border rows C (k×n) and a dense k×k corner D. The (n+k) pattern is built once;
 * each Newton step refills the values cheaply through precomputed index maps (no searching,
 * no allocation). The border goes last, as the continuation methods need.
 */
import { type CscPattern, nnz } from './sparse.js';

export class BorderedMatrix {
  /** Pattern of the (n+k)×(n+k) bordered matrix. */
  readonly pattern: CscPattern;
  /** Values aligned with `pattern.rowIdx`. */
  readonly values: Float64Array;
  readonly n: number;
  readonly k: number;
  /** Position in `values` of each entry of A (aligned with the inner pattern). */
  private readonly innerMap: Int32Array;
  /** Start in `values` of the k border-row entries of inner column j (consecutive). */
  private readonly rowBlockStart: Int32Array;

  constructor(inner: CscPattern, k: number) {
    if (inner.rows !== inner.cols) throw new RangeError(`inner block must be square, got ${inner.rows}x${inner.cols}`);
    if (!Number.isInteger(k) || k < 0) throw new RangeError(`border width must be a non-negative integer, got ${k}`);
    const n = inner.rows;
    const N = n + k;
    this.n = n;
    this.k = k;
    const innerNnz = nnz(inner);
    const total = innerNnz + n * k + k * N;
    const colPtr = new Int32Array(N + 1);
    const rowIdx = new Int32Array(total);
    this.innerMap = new Int32Array(innerNnz);
    this.rowBlockStart = new Int32Array(n);
    let w = 0;
    for (let j = 0; j < n; j++) {
      colPtr[j] = w;
      for (let p = inner.colPtr[j]; p < inner.colPtr[j + 1]; p++) {
        this.innerMap[p] = w;
        rowIdx[w++] = inner.rowIdx[p];
      }
      this.rowBlockStart[j] = w;
      for (let r = 0; r < k; r++) rowIdx[w++] = n + r;
    }
    for (let c = 0; c < k; c++) {
      colPtr[n + c] = w;
      for (let i = 0; i < N; i++) rowIdx[w++] = i;
    }
    colPtr[N] = w;
    this.pattern = { rows: N, cols: N, colPtr, rowIdx };
    this.values = new Float64Array(total);
  }

  /** Copy the values of A (aligned with the inner pattern) into place. */
  setInner(innerValues: Float64Array): void {
    const map = this.innerMap;
    const v = this.values;
    for (let p = 0; p < map.length; p++) v[map[p]] = innerValues[p];
  }

  /** Set border column c (0 ≤ c < k): its first n entries (B[:, c]). */
  setColumn(c: number, column: ArrayLike<number>): void {
    const start = this.pattern.colPtr[this.n + c];
    const v = this.values;
    for (let i = 0; i < this.n; i++) v[start + i] = column[i];
  }

  /** Set border row r (0 ≤ r < k): its first n entries (C[r, :]). */
  setRow(r: number, row: ArrayLike<number>): void {
    const start = this.rowBlockStart;
    const v = this.values;
    for (let j = 0; j < this.n; j++) v[start[j] + r] = row[j];
  }

  /** Set a corner entry D[r, c]. */
  setCorner(r: number, c: number, value: number): void {
    this.values[this.pattern.colPtr[this.n + c] + this.n + r] = value;
  }
}
