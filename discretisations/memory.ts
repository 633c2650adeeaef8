/**
 * A rough up-front estimate of the sparse LU factor size for a grid problem, so that hopeless
 * 3D (or huge 2D) grids are refused with a clear message before any work is done.
 *
 * Model: nested dissection of the node grid (the ordering the LU uses for large problems).
 * A box of nodes is split across its longest side by a plane (line in 2D, point in 1D) of s
 * nodes; the separator's rows of L are dense: s(s+1)/2 within the separator plus s·b for the
 * b already-numbered boundary nodes of the box (the surfaces of earlier separators, at most the
 * box surface). The halves are treated the same way down to small boxes, which are dense. This
 * gives the known growth: ~n for 1D, ~n log n for 2D and ~n^(4/3) for 3D grids (George 1973
 * for nested dissection; the constants here come from the recursion, not from a fit). With m
 * unknowns per node every node entry is an m×m block; extra global unknowns add a dense row
 * and column each. nnz(L+U) ≈ 2·nnz(L); each stored entry costs about 12 bytes (8-byte value,
 * 4-byte index), and a factor of 1.5 covers pivoting growth and workspace (common practice).
 * Measured against the project's sparse LU (nested-dissection ordering) on Laplacian-type grids
 * — 2D 64² to 256², 3D 16³ to 40³, two-field 2D 128² — the entry estimate was 1.1 to 2 times the
 * actual L+U count: it errs on the safe side (3D Bratu, Dirichlet: 2.0 at 16³ intervals, 1.8 at
 * 20³, 1.7 at 26³ and 32³, 1.6 at 40³).
 *
 * The same recursion counts the work of one factorisation: eliminating a separator of s nodes
 * with b boundary nodes in its front costs about (2/3)((s + b)³ − b³) operations, which gives
 * the known ~n^(3/2) for 2D and ~n² for 3D grids (George 1973; Lipton, Rose & Tarjan 1979 for
 * 3D, from memory). 3D grids are limited by this work long before their memory: 52³ intervals
 * need 2.5 GiB (under the limit) but 2.2e11 operations, over four minutes per factorisation.
 */

/** Default ceiling for the factor memory: the solver runs in 32-bit WebAssembly (4 GiB address space). */
export const defaultFactorMemoryLimit = 3 * 1024 ** 3;

/**
 * Default ceiling for the work of one factorisation, in floating-point operations. The solver's
 * left-looking kernel (no dense blocks) was measured at 0.85–0.93 Gflop/s on 3D Bratu grids of
 * 32³ and 40³ intervals (this model's counts against the factorisation's CPU time on the
 * project's reference machine): 1e11 is about two minutes per factorisation, and a point needs
 * several (Newton iterations, the tangent, the eigenvalues).
 */
export const defaultFactorWorkLimit = 1e11;

/** The solver's measured speed on large grids (floating-point operations per second, see above). */
export const measuredFactorRate = 0.9e9;

/**
 * Measured speed of each sparse LU on large grids (floating-point operations of the model below
 * per second): KLU as above; SuperLU 3.0 Gflop/s — 3D Bratu 40³ intervals, 2.8·10¹⁰ predicted
 * flops factored in 9.3 s, 3.6 times KLU (wasm/README.md, "Measured").
 */
export const factorRates = { klu: measuredFactorRate, superlu: 3.0e9 } as const;

/**
 * Default ceiling for the time of one factorisation, in seconds at the chosen solver's measured
 * rate: defaultFactorWorkLimit at KLU's rate (about two minutes), so SuperLU, three times
 * faster on such grids, may take grids with three times the work.
 */
export const defaultFactorSecondsLimit = defaultFactorWorkLimit / measuredFactorRate;

export interface FactorMemoryEstimate {
  readonly unknowns: number;
  /** Estimated stored entries of L + U. */
  readonly factorEntries: number;
  /** Estimated bytes for the factorisation (entries × 12 bytes × 1.5). */
  readonly bytes: number;
  /** Estimated floating-point operations of one factorisation. */
  readonly flops: number;
}

/**
 * Floating-point operations of eliminating a separator of s nodes whose front also holds b
 * boundary nodes: each pivot updates the remaining (front − 1)² entries (2 operations each),
 * Σ 2(s − k + b)² ≈ (2/3)((s + b)³ − b³).
 */
function frontWork(s: number, b: number): number {
  return (2 / 3) * ((s + b) ** 3 - b ** 3);
}

/** Lower-triangle fill and elimination work of nested dissection on a box with dims d and b boundary nodes. */
function boxFill(d: number[], b: number, memo: Map<string, { fill: number; work: number }>): { fill: number; work: number } {
  const n = d.reduce((a, x) => a * x, 1);
  if (n === 0) return { fill: 0, work: 0 };
  let surface = 0;
  if (d.length === 1) surface = 2;
  else if (d.length === 2) surface = 2 * (d[0] + d[1]);
  else surface = 2 * (d[0] * d[1] + d[1] * d[2] + d[0] * d[2]);
  const bb = Math.min(b, surface);
  const key = `${d.join(',')}|${Math.round(bb)}`;
  const hit = memo.get(key);
  if (hit !== undefined) return hit;
  let result: { fill: number; work: number };
  if (n <= 8) {
    result = { fill: (n * (n + 1)) / 2 + n * bb, work: frontWork(n, bb) };
  } else {
    let a = 0;
    for (let k = 1; k < d.length; k++) if (d[k] > d[a]) a = k;
    const s = n / d[a];
    const left = Math.floor((d[a] - 1) / 2);
    const right = d[a] - 1 - left;
    const dl = d.slice();
    dl[a] = left;
    const dr = d.slice();
    dr[a] = right;
    const childB = bb / 2 + s;
    const l = boxFill(dl, childB, memo);
    const r = boxFill(dr, childB, memo);
    result = { fill: (s * (s + 1)) / 2 + s * bb + l.fill + r.fill, work: frontWork(s, bb) + l.work + r.work };
  }
  memo.set(key, result);
  return result;
}

/**
 * Estimate the LU factor size for a grid with `nodesPerAxis` unknown nodes per axis,
 * `unknownsPerNode` fields and `extraUnknowns` dense global unknowns.
 */
export function estimateFactorMemory(nodesPerAxis: readonly number[], unknownsPerNode = 1, extraUnknowns = 0): FactorMemoryEstimate {
  const d = nodesPerAxis.map((x) => Math.max(1, Math.round(x)));
  const nodes = d.reduce((a, x) => a * x, 1);
  const m = unknownsPerNode;
  const box = boxFill(d, 0, new Map());
  const lower = box.fill * m * m;
  const n = nodes * m + extraUnknowns;
  const entries = 2 * lower - nodes * m + 2 * extraUnknowns * n;
  // m×m blocks: m³ times the scalar work; each extra dense row and column is updated once per entry of L
  const flops = box.work * m ** 3 + 2 * extraUnknowns * lower;
  return { unknowns: n, factorEntries: entries, bytes: entries * 12 * 1.5, flops };
}

function formatBytes(b: number): string {
  if (b >= 1024 ** 3) return `${(b / 1024 ** 3).toFixed(1)} GiB`;
  if (b >= 1024 ** 2) return `${(b / 1024 ** 2).toFixed(0)} MiB`;
  return `${Math.ceil(b / 1024)} KiB`;
}

/** `2.2e11`. */
function flopText(f: number): string {
  return f.toExponential(1).replace('e+', 'e');
}

/** `4 minutes`, `50 s`. */
function durationText(seconds: number): string {
  return seconds >= 90 ? `${Math.round(seconds / 60)} minutes` : `${Math.max(1, Math.round(seconds))} s`;
}

/**
 * Throw a one-line Error when one factorisation by `solver` (the sparse LU the run will use)
 * would take more than `limitSeconds` at that solver's measured rate (factorRates; see
 * defaultFactorSecondsLimit): such a run makes no visible progress for many minutes per point.
 */
export function assertFactorWork(estimate: FactorMemoryEstimate, what: string, solver: keyof typeof factorRates = 'klu', limitSeconds = defaultFactorSecondsLimit): void {
  const rate = factorRates[solver];
  const limitFlops = limitSeconds * rate;
  if (estimate.flops > limitFlops) {
    const name = solver === 'klu' ? 'KLU' : 'SuperLU';
    throw new Error(
      `${what}: one sparse LU factorisation would need about ${flopText(estimate.flops)} floating-point operations ` +
        `(${estimate.unknowns} unknowns), about ${durationText(estimate.flops / rate)} at the solver's (${name}) measured ${rate / 1e9} Gflop/s, ` +
        `and every point needs several; over the ${flopText(limitFlops)} limit; use fewer intervals (3D work grows like n²)`,
    );
  }
}

/**
 * Throw a one-line Error when the estimated factor memory exceeds `limitBytes`.
 * `what` names the grid in the message (e.g. "grid 200x200x200").
 */
export function assertFactorMemory(estimate: FactorMemoryEstimate, what: string, limitBytes = defaultFactorMemoryLimit): void {
  if (estimate.bytes > limitBytes) {
    throw new Error(
      `${what}: the sparse LU would need about ${formatBytes(estimate.bytes)} (${estimate.unknowns} unknowns, ` +
        `~${estimate.factorEntries.toExponential(1)} factor entries), over the ${formatBytes(limitBytes)} limit; use fewer intervals` +
        ` (3D fill grows like n^(4/3))`,
    );
  }
}
