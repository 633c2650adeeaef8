/**
 * Iterative refinement with a reference factorisation, shared by the real null-vector border of
 * fold and branch-point curves (./null-border.ts) and the complex border of Hopf curves
 * (../hopf/complex-border.ts): z is refined towards the solution of A z = rhs, residuals with the
 * current A, corrections with the LU of a nearby A_ref (one product and one solve per step,
 * converging at the rate ‖A_ref⁻¹(A − A_ref)‖). It stops when the residual reaches the rounding
 * level of the products (the result is then as good as a direct solve's), and gives up (false)
 * when it contracts so slowly that a factorisation is cheaper.
 *
 * The rounding level of the products, 64ε·Σ|A_ij z_j|, can lie below what a direct solve with
 * the reference LU reaches (pivot growth, rows of very different scales, as in the complex
 * border of Hopf curves): the refinement then stalls just above it and gives up although z is
 * as good as a direct solve's. Callers that measure a direct solve's residual at each
 * factorisation pass it as `floor` (relative to the same magnitude): a residual at that level
 * is accepted too. At least one correction is always made (a start that is accurate already
 * gains its last digits from it).
 */

/** The current matrix and the reference factorisation, as the refinement sees them. */
export interface RefinementOperator {
  /** out = A z with the current matrix; returns the largest row sum of the terms' magnitudes (the scale of rounding errors in out). */
  apply(z: Float64Array, out: Float64Array): number;
  /** d = A_ref⁻¹ r with the reference factorisation. */
  correct(r: Float64Array, d: Float64Array): void;
}

/**
 * Refine z (length m = rhs.length) in place towards A z = rhs; `r` and `d` are work vectors of
 * length m. True when z solves the system to working accuracy, false when the refinement
 * contracts slowly or breaks down (z is then partly refined: callers restore or factor).
 */
export function refineSolution(z: Float64Array, rhs: Float64Array, op: RefinementOperator, r: Float64Array, d: Float64Array, floor?: number): boolean {
  const m = rhs.length;
  const level = Math.max(64 * Number.EPSILON, floor ?? 0);
  let previous = Infinity;
  let last = Infinity;
  for (let k = 0; k < 10; k++) {
    const mag = op.apply(z, r);
    let rn = 0;
    for (let i = 0; i < m; i++) {
      r[i] = rhs[i] - r[i];
      rn = Math.max(rn, Math.abs(r[i]));
    }
    // at the rounding level of the products (the result is as good as a direct solve's)
    if (k >= 1 && rn <= level * mag) return true;
    if (k >= 1) {
      // the residual (not the update, which can pause for a step) measures the contraction ρ;
      // the last correction left an error of about ρ times itself
      const rho = rn / previous;
      // no more progress: the rounding floor when the corrections were already small (the
      // result is then as good as a direct solve's), slow contraction otherwise
      if (rho > 0.25) return last <= 1e-8;
      if (last * rho <= 1e-14) return true;
      // more than four further corrections needed: a factorisation is cheaper
      if (k >= 2 && last * rho ** 4 > 1e-14) return false;
    }
    previous = rn;
    op.correct(r, d);
    let dn = 0;
    let zn = 0;
    for (let i = 0; i < m; i++) {
      z[i] += d[i];
      dn = Math.max(dn, Math.abs(d[i]));
      zn = Math.max(zn, Math.abs(z[i]));
    }
    if (!Number.isFinite(dn)) return false;
    last = dn / zn;
    if (last <= 1e-15) return true;
  }
  return false;
}
