/**
 * The exact ignition fold of a unit slab with convective faces, u'' + λ e^u = 0 on (0, 1) with
 * −u'(0) + Bi·u(0) = 0 = u'(1) + Bi·u(1): an oracle from outside the project for the tests of the
 * bratu model with `boundary: robin` (the bundled demo case, refinement studies).
 *
 * Exact family (Bratu 1914 for u'' + λe^u = 0, worked here for the Robin faces):
 * u = u_m − 2 ln cosh(a(x − ½)) with λ e^{u_m} = 2a²; the face condition −u'(0) + Bi·u(0) = 0
 * gives u_m = 2 ln cosh(a/2) + (2a/Bi) tanh(a/2), so λ(a) = 2a² sech²(a/2) exp(−(2a/Bi) tanh(a/2)),
 * and the fold is its maximum over a (golden-section search on a in [0.1, 5], where it lies for
 * the Biot numbers of the tests).
 */
export function robinSlabFold(biot: number): number {
  const lambdaOf = (a: number): number => ((2 * a * a) / Math.cosh(a / 2) ** 2) * Math.exp(-((2 * a) / biot) * Math.tanh(a / 2));
  let lo = 0.1;
  let hi = 5;
  const g = (Math.sqrt(5) - 1) / 2;
  for (let i = 0; i < 200; i++) {
    const m1 = hi - g * (hi - lo);
    const m2 = lo + g * (hi - lo);
    if (lambdaOf(m1) < lambdaOf(m2)) lo = m1;
    else hi = m2;
  }
  return lambdaOf((lo + hi) / 2);
}
