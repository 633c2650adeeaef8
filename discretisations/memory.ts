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
 * actual L+U count: it errs on the safe side.
 */

/** Default ceiling for the factor memory: the solver runs in 32-bit WebAssembly (4 GiB address space). */
export const defaultFactorMemoryLimit = 3 * 1024 ** 3;

export interface FactorMemoryEstimate {
  readonly unknowns: number;
  /** Estimated stored entries of L + U. */
  readonly factorEntries: number;
  /** Estimated bytes for the factorisation (entries × 12 bytes × 1.5). */
  readonly bytes: number;
}

/** Lower-triangle fill of nested dissection on a box with dims d and b boundary nodes. */
function boxFill(d: number[], b: number, memo: Map<string, number>): number {
  const n = d.reduce((a, x) => a * x, 1);
  if (n === 0) return 0;
  let surface = 0;
  if (d.length === 1) surface = 2;
  else if (d.length === 2) surface = 2 * (d[0] + d[1]);
  else surface = 2 * (d[0] * d[1] + d[1] * d[2] + d[0] * d[2]);
  const bb = Math.min(b, surface);
  const key = `${d.join(',')}|${Math.round(bb)}`;
  const hit = memo.get(key);
  if (hit !== undefined) return hit;
  let result: number;
  if (n <= 8) {
    result = (n * (n + 1)) / 2 + n * bb;
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
    result = (s * (s + 1)) / 2 + s * bb + boxFill(dl, childB, memo) + boxFill(dr, childB, memo);
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
  const lower = boxFill(d, 0, new Map()) * m * m;
  const n = nodes * m + extraUnknowns;
  const entries = 2 * lower - nodes * m + 2 * extraUnknowns * n;
  return { unknowns: n, factorEntries: entries, bytes: entries * 12 * 1.5 };
}

function formatBytes(b: number): string {
  if (b >= 1024 ** 3) return `${(b / 1024 ** 3).toFixed(1)} GiB`;
  if (b >= 1024 ** 2) return `${(b / 1024 ** 2).toFixed(0)} MiB`;
  return `${Math.ceil(b / 1024)} KiB`;
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
