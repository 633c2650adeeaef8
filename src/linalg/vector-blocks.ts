/**
 * Kernels on several vectors at once, for the Krylov basis work of the eigenvalue solver: k dot
 * products against one vector, or k scaled vectors added to one, four basis vectors per pass
 * instead of one: the vector they share is loaded (and, for the update, stored) once per four, and
 * the loop overhead is paid once per four (20 % less CPU per continuation step of 2D Bratu 200²
 * with 6 eigenvalues). Fusing Gram–Schmidt's update with the next pass's dot products tile by tile
 * was measured too and gained nothing: at these sizes the basis stays in the last-level cache.
 *
 * Each result is bitwise the one of the one-vector kernels in vector.ts: every dot product keeps
 * its own accumulation order (i ascending), and each entry of an updated vector receives its
 * terms in the order of the basis, one rounding each, skipping zero coefficients as `axpy` does.
 */

/** out[j] = Σ_i basis[j][i]·x[i] (as `dot(basis[j], x)`), for j < count (all by default). */
export function dotsInto(out: Float64Array, basis: readonly Float64Array[], x: Float64Array, count = basis.length): void {
  const n = x.length;
  let j = 0;
  for (; j + 4 <= count; j += 4) {
    const a0 = basis[j];
    const a1 = basis[j + 1];
    const a2 = basis[j + 2];
    const a3 = basis[j + 3];
    let s0 = 0;
    let s1 = 0;
    let s2 = 0;
    let s3 = 0;
    for (let i = 0; i < n; i++) {
      const xi = x[i];
      s0 += a0[i] * xi;
      s1 += a1[i] * xi;
      s2 += a2[i] * xi;
      s3 += a3[i] * xi;
    }
    out[j] = s0;
    out[j + 1] = s1;
    out[j + 2] = s2;
    out[j + 3] = s3;
  }
  if (count - j >= 2) {
    const a0 = basis[j];
    const a1 = basis[j + 1];
    let s0 = 0;
    let s1 = 0;
    for (let i = 0; i < n; i++) {
      const xi = x[i];
      s0 += a0[i] * xi;
      s1 += a1[i] * xi;
    }
    out[j] = s0;
    out[j + 1] = s1;
    j += 2;
  }
  if (j < count) {
    const a0 = basis[j];
    let s0 = 0;
    for (let i = 0; i < n; i++) s0 += a0[i] * x[i];
    out[j] = s0;
  }
}

/**
 * y += Σ_j coeffs[j]·basis[j] for j < count, term by term in the order of j (as a sequence of
 * `axpy(y, coeffs[j], basis[j])`, which skips zero coefficients).
 */
export function axpys(y: Float64Array, coeffs: ArrayLike<number>, basis: readonly Float64Array[], count = basis.length): void {
  const n = y.length;
  const idx: number[] = [];
  for (let j = 0; j < count; j++) if (coeffs[j] !== 0) idx.push(j);
  const k = idx.length;
  let t = 0;
  for (; t + 4 <= k; t += 4) {
    const c0 = coeffs[idx[t]];
    const c1 = coeffs[idx[t + 1]];
    const c2 = coeffs[idx[t + 2]];
    const c3 = coeffs[idx[t + 3]];
    const a0 = basis[idx[t]];
    const a1 = basis[idx[t + 1]];
    const a2 = basis[idx[t + 2]];
    const a3 = basis[idx[t + 3]];
    for (let i = 0; i < n; i++) {
      let v = y[i];
      v += c0 * a0[i];
      v += c1 * a1[i];
      v += c2 * a2[i];
      v += c3 * a3[i];
      y[i] = v;
    }
  }
  if (k - t >= 2) {
    const c0 = coeffs[idx[t]];
    const c1 = coeffs[idx[t + 1]];
    const a0 = basis[idx[t]];
    const a1 = basis[idx[t + 1]];
    for (let i = 0; i < n; i++) {
      let v = y[i];
      v += c0 * a0[i];
      v += c1 * a1[i];
      y[i] = v;
    }
    t += 2;
  }
  if (t < k) {
    const c0 = coeffs[idx[t]];
    const a0 = basis[idx[t]];
    for (let i = 0; i < n; i++) y[i] += c0 * a0[i];
  }
}
