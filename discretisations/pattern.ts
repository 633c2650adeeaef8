/**
 * Building a fixed Jacobian pattern together with index maps into its value array, so that
 * assembly writes `values[position[k]] += ...` with no search and no allocation per call.
 */
import { type CscPattern, cscFromTriplets, entryIndex } from '../src/linalg/sparse.js';

export class PatternBuilder {
  private r = new Int32Array(1024);
  private c = new Int32Array(1024);
  private n = 0;
  private built: CscPattern | undefined;

  constructor(readonly size: number) {}

  /** Register entry (row, col); returns a handle whose position `positions()[handle]` gives. */
  add(row: number, col: number): number {
    if (this.built) throw new Error('internal: pattern already built');
    if (row < 0 || row >= this.size || col < 0 || col >= this.size) {
      throw new RangeError(`entry (${row}, ${col}) lies outside a ${this.size}x${this.size} pattern`);
    }
    if (this.n === this.r.length) {
      const r = new Int32Array(this.n * 2);
      const c = new Int32Array(this.n * 2);
      r.set(this.r);
      c.set(this.c);
      this.r = r;
      this.c = c;
    }
    this.r[this.n] = row;
    this.c[this.n] = col;
    return this.n++;
  }

  /** Build the pattern (duplicates merged, rows sorted within columns). */
  pattern(): CscPattern {
    if (!this.built) {
      const m = cscFromTriplets(this.size, this.size, this.r.subarray(0, this.n), this.c.subarray(0, this.n), new Float64Array(this.n));
      this.built = { rows: m.rows, cols: m.cols, colPtr: m.colPtr, rowIdx: m.rowIdx };
    }
    return this.built;
  }

  /** Position in the value array of every registered handle. */
  positions(): Int32Array {
    const p = this.pattern();
    const out = new Int32Array(this.n);
    for (let k = 0; k < this.n; k++) out[k] = entryIndex(p, this.r[k], this.c[k]);
    return out;
  }
}
