/**
 * Sparse matrices on typed arrays.
 *
 * CSC (compressed sparse column), 0-based, int32 indices, float64 values. A `CscPattern` is the
 * fixed structure (shared between many value arrays); `CscMatrix` pairs a pattern with values.
 * Row indices within each column are sorted ascending and unique.
 */

export interface CscPattern {
  readonly rows: number;
  readonly cols: number;
  /** Column pointers, length cols + 1. */
  readonly colPtr: Int32Array;
  /** Row index of each stored entry, length nnz. */
  readonly rowIdx: Int32Array;
}

export interface CscMatrix extends CscPattern {
  readonly values: Float64Array;
}

export function nnz(p: CscPattern): number {
  return p.colPtr[p.cols];
}

/** Triplet (COO) accumulator: add entries in any order, duplicates are summed on conversion. */
export class TripletBuilder {
  private r: Int32Array;
  private c: Int32Array;
  private v: Float64Array;
  private count = 0;

  constructor(readonly rows: number, readonly cols: number, capacity = 16) {
    const cap = Math.max(1, capacity);
    this.r = new Int32Array(cap);
    this.c = new Int32Array(cap);
    this.v = new Float64Array(cap);
  }

  get length(): number {
    return this.count;
  }

  add(row: number, col: number, value: number): void {
    if (row < 0 || row >= this.rows || col < 0 || col >= this.cols || !Number.isInteger(row) || !Number.isInteger(col)) {
      throw new RangeError(`entry (${row}, ${col}) lies outside a ${this.rows}x${this.cols} matrix`);
    }
    if (this.count === this.r.length) this.grow();
    this.r[this.count] = row;
    this.c[this.count] = col;
    this.v[this.count] = value;
    this.count++;
  }

  private grow(): void {
    const cap = this.r.length * 2;
    const r = new Int32Array(cap);
    const c = new Int32Array(cap);
    const v = new Float64Array(cap);
    r.set(this.r);
    c.set(this.c);
    v.set(this.v);
    this.r = r;
    this.c = c;
    this.v = v;
  }

  /**
   * Convert to CSC, summing duplicates. Entries are kept even when their value is zero
   * (structural zeros belong to the pattern).
   */
  toCsc(): CscMatrix {
    return cscFromTriplets(this.rows, this.cols, this.r.subarray(0, this.count), this.c.subarray(0, this.count), this.v.subarray(0, this.count));
  }
}

/** Build a CSC matrix from triplets (duplicates summed, rows sorted within columns). */
export function cscFromTriplets(
  rows: number,
  cols: number,
  ri: ArrayLike<number>,
  ci: ArrayLike<number>,
  vals: ArrayLike<number>,
): CscMatrix {
  const n = ri.length;
  // counting sort by column, then by row inside each column
  const count = new Int32Array(cols + 1);
  for (let k = 0; k < n; k++) count[ci[k] + 1]++;
  for (let j = 0; j < cols; j++) count[j + 1] += count[j];
  const order = new Int32Array(n);
  const next = count.slice(0, cols);
  // first sort by row (counting sort), then stable by column: gives column-major, row-sorted
  const rcount = new Int32Array(rows + 1);
  for (let k = 0; k < n; k++) rcount[ri[k] + 1]++;
  for (let i = 0; i < rows; i++) rcount[i + 1] += rcount[i];
  const byRow = new Int32Array(n);
  for (let k = 0; k < n; k++) byRow[rcount[ri[k]]++] = k;
  for (let t = 0; t < n; t++) {
    const k = byRow[t];
    order[next[ci[k]]++] = k;
  }
  // merge duplicates
  const colPtr = new Int32Array(cols + 1);
  const rowTmp = new Int32Array(n);
  const valTmp = new Float64Array(n);
  let w = 0;
  for (let j = 0; j < cols; j++) {
    colPtr[j] = w;
    let last = -1;
    for (let t = count[j]; t < count[j + 1]; t++) {
      const k = order[t];
      const i = ri[k];
      if (i === last) {
        valTmp[w - 1] += vals[k];
      } else {
        rowTmp[w] = i;
        valTmp[w] = vals[k];
        w++;
        last = i;
      }
    }
  }
  colPtr[cols] = w;
  return { rows, cols, colPtr, rowIdx: rowTmp.slice(0, w), values: valTmp.slice(0, w) };
}

/**
 * Position of entry (row, col) in the values array of a pattern, or -1 when not stored.
 * Binary search within the column.
 */
export function entryIndex(p: CscPattern, row: number, col: number): number {
  let lo = p.colPtr[col];
  let hi = p.colPtr[col + 1] - 1;
  const ri = p.rowIdx;
  while (lo <= hi) {
    const mid = (lo + hi) >> 1;
    const r = ri[mid];
    if (r === row) return mid;
    if (r < row) lo = mid + 1;
    else hi = mid - 1;
  }
  return -1;
}

/** y = A x (y overwritten). */
export function matVec(a: CscMatrix, x: ArrayLike<number>, y: Float64Array): Float64Array {
  y.fill(0, 0, a.rows);
  const { colPtr, rowIdx, values } = a;
  for (let j = 0; j < a.cols; j++) {
    const xj = x[j];
    if (xj === 0) continue;
    for (let p = colPtr[j]; p < colPtr[j + 1]; p++) y[rowIdx[p]] += values[p] * xj;
  }
  return y;
}

/** y = A^T x (y overwritten). */
export function matTVec(a: CscMatrix, x: ArrayLike<number>, y: Float64Array): Float64Array {
  const { colPtr, rowIdx, values } = a;
  for (let j = 0; j < a.cols; j++) {
    let s = 0;
    for (let p = colPtr[j]; p < colPtr[j + 1]; p++) s += values[p] * x[rowIdx[p]];
    y[j] = s;
  }
  return y;
}

/** Transpose (pattern and values). */
export function transpose(a: CscMatrix): CscMatrix {
  const count = new Int32Array(a.rows + 1);
  const m = nnz(a);
  for (let p = 0; p < m; p++) count[a.rowIdx[p] + 1]++;
  for (let i = 0; i < a.rows; i++) count[i + 1] += count[i];
  const colPtr = count.slice();
  const next = count.slice(0, a.rows);
  const rowIdx = new Int32Array(m);
  const values = new Float64Array(m);
  for (let j = 0; j < a.cols; j++) {
    for (let p = a.colPtr[j]; p < a.colPtr[j + 1]; p++) {
      const q = next[a.rowIdx[p]]++;
      rowIdx[q] = j;
      values[q] = a.values[p];
    }
  }
  return { rows: a.cols, cols: a.rows, colPtr, rowIdx, values };
}

/** Union of two patterns of the same shape (the result's entries are sorted per column). */
export function patternUnion(a: CscPattern, b: CscPattern): CscPattern {
  if (a.rows !== b.rows || a.cols !== b.cols) {
    throw new RangeError(`pattern shapes differ: ${a.rows}x${a.cols} and ${b.rows}x${b.cols}`);
  }
  const colPtr = new Int32Array(a.cols + 1);
  const out: number[] = [];
  for (let j = 0; j < a.cols; j++) {
    colPtr[j] = out.length;
    let p = a.colPtr[j];
    let q = b.colPtr[j];
    const pe = a.colPtr[j + 1];
    const qe = b.colPtr[j + 1];
    while (p < pe || q < qe) {
      const ra = p < pe ? a.rowIdx[p] : Infinity;
      const rb = q < qe ? b.rowIdx[q] : Infinity;
      if (ra === rb) {
        out.push(ra);
        p++;
        q++;
      } else if (ra < rb) {
        out.push(ra);
        p++;
      } else {
        out.push(rb);
        q++;
      }
    }
  }
  colPtr[a.cols] = out.length;
  return { rows: a.rows, cols: a.cols, colPtr, rowIdx: Int32Array.from(out) };
}

/**
 * Map every entry of `sub` to its position in `sup` (sub's pattern must be contained in sup's).
 * Used to scatter values assembled on one pattern into a larger one without searching per step.
 */
export function embedPattern(sub: CscPattern, sup: CscPattern): Int32Array {
  const map = new Int32Array(nnz(sub));
  for (let j = 0; j < sub.cols; j++) {
    let q = sup.colPtr[j];
    for (let p = sub.colPtr[j]; p < sub.colPtr[j + 1]; p++) {
      const r = sub.rowIdx[p];
      while (q < sup.colPtr[j + 1] && sup.rowIdx[q] < r) q++;
      if (q >= sup.colPtr[j + 1] || sup.rowIdx[q] !== r) {
        throw new RangeError(`entry (${r}, ${j}) is not in the larger pattern`);
      }
      map[p] = q;
    }
  }
  return map;
}

/** Dense row-major copy (for tests and small problems). */
export function toDense(a: CscMatrix): number[][] {
  const d: number[][] = Array.from({ length: a.rows }, () => new Array<number>(a.cols).fill(0));
  for (let j = 0; j < a.cols; j++) {
    for (let p = a.colPtr[j]; p < a.colPtr[j + 1]; p++) d[a.rowIdx[p]][j] += a.values[p];
  }
  return d;
}

/** CSC from a dense row-major array; entries with |value| <= dropTolerance are left out. */
export function fromDense(d: ArrayLike<ArrayLike<number>>, dropTolerance = 0): CscMatrix {
  const rows = d.length;
  const cols = rows > 0 ? d[0].length : 0;
  const ri: number[] = [];
  const ci: number[] = [];
  const v: number[] = [];
  for (let j = 0; j < cols; j++) {
    for (let i = 0; i < rows; i++) {
      const x = d[i][j];
      if (Math.abs(x) > dropTolerance) {
        ri.push(i);
        ci.push(j);
        v.push(x);
      }
    }
  }
  return cscFromTriplets(rows, cols, ri, ci, v);
}

/** Check a pattern's invariants; throws a RangeError describing the first violation. */
export function validatePattern(p: CscPattern): void {
  if (p.colPtr.length !== p.cols + 1) throw new RangeError(`colPtr has length ${p.colPtr.length}, expected ${p.cols + 1}`);
  if (p.colPtr[0] !== 0) throw new RangeError(`colPtr[0] is ${p.colPtr[0]}, expected 0`);
  for (let j = 0; j < p.cols; j++) {
    if (p.colPtr[j + 1] < p.colPtr[j]) throw new RangeError(`colPtr decreases at column ${j}`);
    for (let q = p.colPtr[j]; q < p.colPtr[j + 1]; q++) {
      const r = p.rowIdx[q];
      if (r < 0 || r >= p.rows) throw new RangeError(`row index ${r} out of range in column ${j}`);
      if (q > p.colPtr[j] && p.rowIdx[q - 1] >= r) throw new RangeError(`rows not strictly increasing in column ${j}`);
    }
  }
  if (p.rowIdx.length < p.colPtr[p.cols]) throw new RangeError(`rowIdx shorter than nnz`);
}
