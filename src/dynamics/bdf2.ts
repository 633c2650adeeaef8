/**
 * The variable-step two-step backward differentiation formula (BDF2) and what its step control
 * needs: coefficients, predictors, local error constants and interpolation (all pure functions).
 *
 * With h = t_{n+1} − t_n, h₁ = t_n − t_{n−1} and ω = h/h₁, variable-step BDF2 reads
 *
 *     M (u_{n+1} − ψ) = c F(u_{n+1}),   ψ = a₁ u_n − a₂ u_{n−1},   c = γ h,
 *     a₁ = (1+ω)²/(1+2ω),  a₂ = ω²/(1+2ω),  γ = (1+ω)/(1+2ω)
 *
 * (the derivative at t_{n+1} of the quadratic through the three points set equal to F). It is
 * A-stable with R(∞) = 0 (L-stable) and of order 2; zero-stable for step ratios ω < 1 + √2
 * (Grigorieff 1983, from memory), so the step control keeps ω ≤ 2. The first step is backward Euler (BDF1:
 * a₁ = 1, a₂ = 0, γ = 1).
 *
 * Local error estimate (the predictor–corrector difference, "Milne's device"): when the corrector
 * satisfies u_c − u(t) ≈ C u^{(q+1)} and the explicit predictor u(t) − u_p ≈ P u^{(q+1)}, then
 * u_c − u(t) ≈ C/(C + P) · (u_c − u_p). For BDF2 C = h²(h+h₁)²/(6(2h+h₁)) (from the interpolation
 * error of the quadratic; 2h³/9 at constant steps), with the quadratic extrapolation through
 * the last three points as predictor, P = h(h+h₁)(h+h₁+h₂)/6 (h³ at constant steps: the ratio is
 * the classical 2/11). At the start the predictors use the derivative F(u₀) instead of a third point.
 */

export interface StepFormula {
  order: 1 | 2;
  /** c = gamma · h. */
  gamma: number;
  /** ψ = a1 u_n − a2 u_{n−1}. */
  a1: number;
  a2: number;
}

/** BDF2 with step h after a step h1; BDF1 (backward Euler) without a previous step. */
export function bdfFormula(h: number, h1?: number): StepFormula {
  if (h1 === undefined) return { order: 1, gamma: 1, a1: 1, a2: 0 };
  const w = h / h1;
  const d = 1 + 2 * w;
  return { order: 2, gamma: (1 + w) / d, a1: ((1 + w) * (1 + w)) / d, a2: (w * w) / d };
}

/** Corrector local error constant C (u_c − u(t) ≈ C u^{(q+1)}). */
export function correctorConstant(h: number, h1?: number): number {
  if (h1 === undefined) return (h * h) / 2;
  return (h * h * (h + h1) * (h + h1)) / (6 * (2 * h + h1));
}

/**
 * Predictor error constant P (u(t) − u_p ≈ P u^{(q+1)}) for the predictor the history allows:
 *   - no previous point: u_n + h u'_n (order 1 step),                        P = h²/2;
 *   - one previous point and the derivative there (the start): Hermite quadratic, P = h(h+h₁)²/6;
 *   - two previous points: quadratic extrapolation,                         P = h(h+h₁)(h+h₁+h₂)/6.
 */
export function predictorConstant(h: number, h1?: number, h2?: number): number {
  if (h1 === undefined) return (h * h) / 2;
  if (h2 === undefined) return (h * (h + h1) * (h + h1)) / 6;
  return (h * (h + h1) * (h + h1 + h2)) / 6;
}

/** Lagrange weights of the polynomial through `nodes` evaluated at t. */
export function lagrangeWeights(nodes: readonly number[], t: number): number[] {
  return nodes.map((ti, i) => {
    let w = 1;
    for (let j = 0; j < nodes.length; j++) if (j !== i) w *= (t - nodes[j]) / (ti - nodes[j]);
    return w;
  });
}

/** out = Σ_k weights[k] · states[k]. */
export function combine(weights: readonly number[], states: readonly Float64Array[], out: Float64Array): Float64Array {
  out.fill(0);
  for (let k = 0; k < states.length; k++) {
    const w = weights[k];
    if (w === 0) continue;
    const s = states[k];
    for (let i = 0; i < out.length; i++) out[i] += w * s[i];
  }
  return out;
}

/**
 * The quadratic through (t0, u0) with slope f0 at t0 and through (t1, u1), at t (the predictor of
 * the second step, when only the start point and its derivative are behind).
 */
export function hermitePredict(t0: number, u0: Float64Array, f0: Float64Array, t1: number, u1: Float64Array, t: number, out: Float64Array): Float64Array {
  const h1 = t1 - t0;
  const s = t - t0;
  for (let i = 0; i < out.length; i++) {
    const a = (u1[i] - u0[i] - f0[i] * h1) / (h1 * h1);
    out[i] = u0[i] + f0[i] * s + a * s * s;
  }
  return out;
}
