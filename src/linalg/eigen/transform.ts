/**
 * The spectral transforms of the eigenvalue search, and the plane geometry that goes with them.
 *
 * The operator is always the shift-invert operator  T = (J − σM)⁻¹ M  for a real shift σ: one
 * sparse LU of J − σM per shift (KLU in wasm, refactored with kept pivots when healthy), one
 * solve per Krylov vector. Its eigenvalues are θ = 1/(μ − σ); infinite eigenvalues of a
 * singular M map to θ = 0.
 *
 * The Cayley transform  C = (J − σM)⁻¹(J − τM) = I + (σ − τ)T  (Garratt, Moore & Spence 1991)
 * has the same Krylov spaces as T, so we use it through T: it changes which Ritz values are kept
 * at a restart, not the solves. Its eigenvalues (μ − τ)/(μ − σ) lie outside the unit circle
 * exactly when Re μ > α = (σ + τ)/2, whatever the imaginary part: ordering Ritz values by
 * |1 + (σ − τ)θ| ranks every eigenvalue right of the line Re μ = α ahead of every eigenvalue left
 * of it, and far-away eigenvalues (the −4/h² end of a diffusion operator, infinite ones) sit near
 * the unit circle where they are never mistaken for wanted ones. Shift-invert ordering (by |θ|)
 * finds the eigenvalues nearest σ instead: a disc, which can miss a rightmost pair with a large
 * imaginary part (tested).
 *
 * The set of eigenvalues whose Cayley image has modulus ≥ ρ > 1 is an Apollonius disc; it is
 * what a converged Cayley search claims (certification.ts).
 */
import type { Complex } from '../schur.js';

/** The shift-invert operator of one LU. */
export interface ShiftOperator {
  readonly sigma: number;
  /** out = (J − σM)⁻¹ M x */
  apply(x: Float64Array, out: Float64Array): void;
}

/** |re + i·im| */
export function cabs(re: number, im: number): number {
  return Math.hypot(re, im);
}

/** μ = σ + 1/θ for a Ritz value θ of (J − σM)⁻¹M (θ = 0 gives an infinite μ). */
export function applyShiftInvert(theta: Complex, sigma: number): Complex {
  const d = theta.re * theta.re + theta.im * theta.im;
  if (d === 0) return { re: Infinity, im: 0 };
  return { re: sigma + theta.re / d, im: theta.im === 0 ? 0 : -theta.im / d };
}

/** Modulus of the Cayley image (μ − τ)/(μ − σ) of an eigenvalue μ. */
export function cayleyImage(mu: Complex, sigma: number, tau: number): number {
  return cabs(mu.re - tau, mu.im) / cabs(mu.re - sigma, mu.im);
}

/**
 * The closed Apollonius disc {μ : |μ − τ| ≥ ρ|μ − σ|} for ρ > 1 and real σ ≠ τ: the set of
 * eigenvalues whose Cayley image has modulus ≥ ρ. Centre on the real axis.
 */
export function apolloniusDisc(sigma: number, tau: number, rho: number): { center: number; radius: number } {
  const a = (rho * sigma + tau) / (1 + rho);
  const b = (rho * sigma - tau) / (rho - 1);
  const lo = Math.min(a, b);
  const hi = Math.max(a, b);
  return { center: 0.5 * (lo + hi), radius: 0.5 * (hi - lo) };
}
