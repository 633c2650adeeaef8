/** Test matrices for the benchmark: 2D 5-point Laplacian-type grids (Dirichlet, m×m unknowns). */
import { type CscMatrix, cscFromTriplets } from '../../src/linalg/sparse.js';

/** −Δ_h + c·I on an m×m interior grid of the unit square (c shifts the spectrum; c = 0 is Poisson). */
export function laplacian2d(m: number, c = 0): CscMatrix {
  const h = 1 / (m + 1);
  const s = 1 / (h * h);
  const n = m * m;
  const ri = new Int32Array(5 * n);
  const ci = new Int32Array(5 * n);
  const v = new Float64Array(5 * n);
  let w = 0;
  const put = (i: number, j: number, x: number) => {
    ri[w] = i;
    ci[w] = j;
    v[w] = x;
    w++;
  };
  for (let y = 0; y < m; y++) {
    for (let x = 0; x < m; x++) {
      const k = y * m + x;
      put(k, k, 4 * s + c);
      if (x > 0) put(k, k - 1, -s);
      if (x < m - 1) put(k, k + 1, -s);
      if (y > 0) put(k, k - m, -s);
      if (y < m - 1) put(k, k + m, -s);
    }
  }
  return cscFromTriplets(n, n, ri.subarray(0, w), ci.subarray(0, w), v.subarray(0, w));
}
