/** Small dense-vector kernels on typed arrays (plain Euclidean; weighted norms live with the Problem). */

export function dot(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += a[i] * b[i];
  return s;
}

export function norm2(a: ArrayLike<number>): number {
  return Math.sqrt(dot(a, a));
}

/** max |a_i| over the first n entries (all by default). */
export function infNorm(a: ArrayLike<number>, n = a.length): number {
  let m = 0;
  for (let i = 0; i < n; i++) {
    const v = Math.abs(a[i]);
    if (v > m) m = v;
  }
  return m;
}

/** y += a·x. */
export function axpy(y: Float64Array, a: number, x: ArrayLike<number>): void {
  if (a === 0) return;
  for (let i = 0; i < y.length; i++) y[i] += a * x[i];
}

/** x *= a. */
export function scaleInPlace(x: Float64Array, a: number): void {
  for (let i = 0; i < x.length; i++) x[i] *= a;
}

/** a − b as a new array. */
export function difference(a: ArrayLike<number>, b: ArrayLike<number>): Float64Array {
  const c = new Float64Array(a.length);
  for (let i = 0; i < a.length; i++) c[i] = a[i] - b[i];
  return c;
}
