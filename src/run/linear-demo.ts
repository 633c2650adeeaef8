/**
 * A first end-to-end demonstration while the continuation engine is being built: the steady
 * temperature of a square plate (invented scenario: a 1 m × 1 m plate, edges held at 0 °C,
 * a uniform internal heat source) on a 2D grid, solved with the sparse LU.
 */
import { SparseLU } from '../linalg/lu.js';
import { cscFromTriplets, matVec } from '../linalg/sparse.js';

export interface LinearDemoResult {
  intervals: number;
  unknowns: number;
  centreTemperature: number;
  relativeResidual: number;
  factorEntries: number;
  seconds: number;
}

/** −k Δu = q on the unit square, u = 0 on the edges, 5-point stencil with `intervals` per axis. */
export function plateDemo(intervals: number, conductivity = 50, source = 1e4): LinearDemoResult {
  const t0 = process.hrtime.bigint();
  const m = intervals - 1;
  const h = 1 / intervals;
  const n = m * m;
  const ri: number[] = [];
  const ci: number[] = [];
  const v: number[] = [];
  const s = conductivity / (h * h);
  for (let y = 0; y < m; y++) {
    for (let x = 0; x < m; x++) {
      const k = y * m + x;
      ri.push(k), ci.push(k), v.push(4 * s);
      if (x > 0) ri.push(k), ci.push(k - 1), v.push(-s);
      if (x < m - 1) ri.push(k), ci.push(k + 1), v.push(-s);
      if (y > 0) ri.push(k), ci.push(k - m), v.push(-s);
      if (y < m - 1) ri.push(k), ci.push(k + m), v.push(-s);
    }
  }
  const a = cscFromTriplets(n, n, ri, ci, v);
  const b = new Float64Array(n).fill(source);
  const lu = new SparseLU(a);
  try {
    lu.factor(a.values);
    const u = lu.solve(b);
    const r = matVec(a, u, new Float64Array(n));
    let rr = 0;
    let bb = 0;
    for (let i = 0; i < n; i++) {
      rr += (r[i] - b[i]) ** 2;
      bb += b[i] ** 2;
    }
    // the centre is node intervals/2 for even intervals; otherwise average the four around it
    const lo = Math.floor(intervals / 2) - 1;
    const hi = Math.ceil(intervals / 2) - 1;
    const centre = (u[lo * m + lo] + u[lo * m + hi] + u[hi * m + lo] + u[hi * m + hi]) / 4;
    const st = lu.stats();
    return {
      intervals,
      unknowns: n,
      centreTemperature: centre,
      relativeResidual: Math.sqrt(rr / bb),
      factorEntries: st.lnz + st.unz - st.n + st.offBlockNnz,
      seconds: Number(process.hrtime.bigint() - t0) / 1e9,
    };
  } finally {
    lu.dispose();
  }
}
