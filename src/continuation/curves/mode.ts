/**
 * The wavenumbers of a critical mode on a grid: which discrete Fourier mode a null vector is.
 *
 * Along each axis the node values are projected onto the discrete eigenvectors of the second
 * difference for the usual boundary conditions:
 *
 *   non-periodic axes (nodes i = 0..N):  cosines cos(kπi/N), k = 0..N (no-flux walls; orthogonal
 *       with the trapezoid weights, DCT-I) and sines sin(kπi/N), k = 1..N−1 (fixed walls; DST-I);
 *   periodic axes (nodes i = 0..N−1):    cos(2πki/N) and sin(2πki/N) together, k = 0..⌊N/2⌋.
 *
 * The energy captured by each k (summed over the other axes and the fields) decides the mode:
 * the family and k that capture the largest fraction of the vector's energy. The number is k in
 * every case: the count of half-waves on non-periodic axes (the mode sin(kπx/L) or cos(kπx/L),
 * wavenumber kπ/L), of whole waves on periodic ones (wavenumber 2πk/L). For modes of other
 * operators (a clamped beam) it is the nearest such mode. `purity` is the captured fraction.
 */
import type { AxisDescription } from '../../problem/problem.js';

export interface ModeResult {
  /** k per axis, in x, y, z order. */
  mode: number[];
  /** Fraction of the energy in that mode (1 for an exact Fourier mode). */
  purity: number;
}

/**
 * The dominant mode of a node array (shape (fields, [nz, ny,] nx), C order) on the given axes
 * (x, y, z order). Returns mode [] for arrays without axes.
 */
export function dominantMode(shape: readonly number[], data: Float64Array, axes: readonly AxisDescription[]): ModeResult {
  const dim = shape.length - 1;
  if (dim < 1) return { mode: [], purity: 1 };
  const mode: number[] = [];
  let purity = 1;
  for (let a = 0; a < dim; a++) {
    // axis a (x is the last array index)
    const arrayAxis = shape.length - 1 - a;
    const N = shape[arrayAxis];
    const periodic = axes[a] ? axes[a].nodes === axes[a].intervals : false;
    const lines = collectLines(shape, data, arrayAxis);
    const r = periodic ? periodicSpectrum(lines, N) : wallSpectrum(lines, N);
    mode.push(r.k);
    purity = Math.min(purity, r.fraction);
  }
  return { mode, purity };
}

/** Every line of values along one array axis (all fields, all positions on the other axes). */
function collectLines(shape: readonly number[], data: Float64Array, axis: number): Float64Array[] {
  const n = shape[axis];
  let stride = 1;
  for (let k = shape.length - 1; k > axis; k--) stride *= shape[k];
  const total = data.length;
  const lines: Float64Array[] = [];
  const block = stride * n;
  for (let start = 0; start < total; start += block) {
    for (let off = 0; off < stride; off++) {
      const line = new Float64Array(n);
      for (let i = 0; i < n; i++) line[i] = data[start + off + i * stride];
      lines.push(line);
    }
  }
  return lines;
}

/** Non-periodic axis with `nodes` = N + 1 nodes (i = 0..N). */
function wallSpectrum(lines: Float64Array[], nodes: number): { k: number; fraction: number } {
  const N = nodes - 1;
  if (N < 1) return { k: 0, fraction: 1 };
  const tw = new Float64Array(N + 1).fill(1);
  tw[0] = 0.5;
  tw[N] = 0.5;
  let total = 0;
  for (const line of lines) for (let i = 0; i <= N; i++) total += tw[i] * line[i] * line[i];
  if (!(total > 0)) return { k: 0, fraction: 0 };
  let best = { k: 0, fraction: -1 };
  const basis = new Float64Array(N + 1);
  const consider = (k: number, norm: number): void => {
    let e = 0;
    for (const line of lines) {
      let s = 0;
      for (let i = 0; i <= N; i++) s += basis[i] * line[i];
      e += (s * s) / norm;
    }
    if (e / total > best.fraction) best = { k, fraction: e / total };
  };
  // cosines (trapezoid weights folded into the basis): ‖cos_k‖² = N/2 for 0 < k < N, N for k = 0, N
  for (let k = 0; k <= N; k++) {
    for (let i = 0; i <= N; i++) basis[i] = tw[i] * Math.cos((k * Math.PI * i) / N);
    consider(k, k === 0 || k === N ? N : N / 2);
  }
  // sines: ‖sin_k‖² = N/2 (the end nodes contribute nothing)
  for (let k = 1; k < N; k++) {
    for (let i = 0; i <= N; i++) basis[i] = Math.sin((k * Math.PI * i) / N);
    basis[0] = 0;
    basis[N] = 0;
    consider(k, N / 2);
  }
  return best;
}

function periodicSpectrum(lines: Float64Array[], N: number): { k: number; fraction: number } {
  let total = 0;
  for (const line of lines) for (let i = 0; i < N; i++) total += line[i] * line[i];
  if (!(total > 0)) return { k: 0, fraction: 0 };
  let best = { k: 0, fraction: -1 };
  const cos = new Float64Array(N);
  const sin = new Float64Array(N);
  for (let k = 0; k <= Math.floor(N / 2); k++) {
    for (let i = 0; i < N; i++) {
      const t = (2 * Math.PI * k * i) / N;
      cos[i] = Math.cos(t);
      sin[i] = Math.sin(t);
    }
    const both = k !== 0 && 2 * k !== N;
    let e = 0;
    for (const line of lines) {
      let c = 0;
      let s = 0;
      for (let i = 0; i < N; i++) {
        c += line[i] * cos[i];
        s += line[i] * sin[i];
      }
      // ‖cos‖² = ‖sin‖² = N/2 (k ≠ 0, N/2); ‖cos‖² = N otherwise
      e += both ? (c * c + s * s) / (N / 2) : (c * c) / N;
    }
    if (e / total > best.fraction) best = { k, fraction: e / total };
  }
  return best;
}
