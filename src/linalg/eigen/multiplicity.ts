/**
 * Multiple eigenvalues: making sure a cluster of equal eigenvalues is listed with all its
 * copies, or not vouched for.
 *
 * A block Krylov space started from b vectors meets an eigenspace in at most b dimensions, so a
 * search of width b shows at most b copies of an eigenvalue: on symmetric grids (double
 * eigenvalues of a square, triples of a cube, four- and eightfold Fourier modes of a periodic
 * square) a search can come back short of copies, and the searched region would then vouch
 * for a list that is not complete. The rules:
 *
 *  - A cluster of c copies (CLUSTER_TOLERANCE; c = 1 for a simple eigenvalue) is *open* when c
 *    reaches the width of the search that found it: its locked copies plus its fresh start
 *    vectors for a locked search, the number of seeds for a warm-started one. So after a cold
 *    start every value is open until a search with a fresh vector brings no new copy of it.
 *  - A warm-started search seeds as many vectors as the largest multiplicity of the previous
 *    point; a cluster whose copies equal those of the nearest cluster of the previous point,
 *    verified there, is trusted (multiplicities from symmetry do not change along a branch).
 *  - Open clusters in the list (or right of the line to certify) are completed by searches on
 *    the same shift with every known copy locked in and as many fresh random vectors as the
 *    largest open cluster has copies (the width doubles), until none is open.
 *  - Clusters still open are cut out of the claimed discs (`EigenCall.exclude`), and carried
 *    to the next point as not verified.
 *
 * As everywhere with Krylov methods, a copy whose eigenvector is absent from every start vector
 * can still be missed; fresh random vectors make that a probability-zero event.
 */
import type { EigenCall } from './call.js';
import { type KnownPair, clusters, sameCluster } from './eigenpairs.js';
import { KrylovSchur } from './krylov-schur.js';
import { type SearchSpec, runSearch } from './search.js';
import { type Purify, lockedStart } from './seeding.js';
import type { ShiftOperator } from './transform.js';
import type { SearchDisc } from './types.js';

/** The width of the search that found a cluster, as far as that cluster is concerned. */
export type WidthOf = (cluster: KnownPair[]) => number;

/** The search settings for a basis of at least minDim, with at least `count` required values. */
export type SpecFor = (minDim: number, count?: number) => SearchSpec;

/** Most completing searches per shift. */
const MAX_ROUNDS = 6;

/**
 * A search on `op` with every known pair right of `alpha` locked in (at most maxKeep) and
 * `fresh` fresh random vectors; returns each cluster's width (its locked copies + fresh). The
 * search must also converge `fresh` values beyond the locked ones: the locked values alone would
 * otherwise meet the required count at once, and the search would stop before the fresh vectors
 * have shown the copies they hold (a width it has not explored vouches for nothing).
 */
export function lockedSearch(call: EigenCall, op: ShiftOperator, alpha: number, maxKeep: number, purify: Purify, spec: SpecFor, fresh = 1): WidthOf {
  const ks = new KrylovSchur(call.n, call.setup.random);
  const keep = call.known.filter((k) => k.mu.re > alpha).slice(0, maxKeep);
  lockedStart(ks, op.sigma, keep, call.J, call.mass, purify);
  for (let i = 1; i < fresh; i++) ks.inject(purify(ks.randomVector()));
  const minDim = Math.min(ks.dim + call.explore, call.m + call.explore);
  const out = runSearch(ks, spec(minDim, keep.length + fresh), call.counters);
  call.record(out, op.sigma);
  return inClaim(out.disc, (cluster) => fresh + keep.filter((k) => cluster.some((c) => sameCluster(c.mu, k.mu, call.floor))).length);
}

/**
 * The search of a further shift, planned only to widen the claimed region: every known pair
 * right of `alpha` locked in and one fresh vector, required to converge the locked values (and,
 * as every Cayley search, every Ritz value right of its line) but no value beyond them. Values
 * beyond the locked ones lie left of the line, where a shift far to the right separates
 * eigenvalues poorly (on a four-spot Gray–Scott pattern such a search hit its restart limit
 * and the whole list lost its certificate). So this search vouches for no copies of its own:
 * a cluster counts as complete only when an earlier shift completed it with as many copies
 * (`EigenCall.verified`); every other cluster is open and completed by `completeClusters`.
 */
export function wideningSearch(call: EigenCall, op: ShiftOperator, alpha: number, maxKeep: number, purify: Purify, spec: SpecFor): WidthOf {
  const ks = new KrylovSchur(call.n, call.setup.random);
  const keep = call.known.filter((k) => k.mu.re > alpha).slice(0, maxKeep);
  lockedStart(ks, op.sigma, keep, call.J, call.mass, purify);
  const minDim = Math.min(ks.dim + call.explore, call.m + call.explore);
  const out = runSearch(ks, spec(minDim, keep.length), call.counters);
  call.record(out, op.sigma);
  const verified = call.verified;
  return (cluster) => {
    const mu = cluster[0].mu;
    const earlier = verified.find((c) => sameCluster(c[0], mu, call.floor));
    return earlier !== undefined && earlier.length === cluster.length ? cluster.length + 1 : cluster.length;
  };
}

/**
 * A search vouches for the copies of a cluster only inside the disc it claims (where every Ritz
 * value converged); outside it, a cluster counts as open whatever the width.
 */
export function inClaim(disc: SearchDisc | null, widthOf: WidthOf): WidthOf {
  return (cluster) => {
    const inside = disc !== null && cluster.every((k) => Math.hypot(k.mu.re - disc.center, k.mu.im) <= disc.radius);
    return inside ? widthOf(cluster) : cluster.length;
  };
}

/**
 * Widths for a search seeded from a warm start with `seeds` vectors: a cluster is trusted
 * (width beyond its size) when the nearest cluster of the warm start's values (moved to the new
 * Jacobian) has as many copies, all verified.
 */
export function warmWidth(call: EigenCall, warm: { re: number; im: number; verified?: boolean }[], seeds: number): WidthOf {
  const previous = clusters(
    warm.map((v) => ({ mu: { re: v.re, im: v.im }, verified: v.verified === true })),
    call.floor,
  );
  return (cluster) => {
    const mu = cluster[0].mu;
    let best: { mu: { re: number; im: number }; verified: boolean }[] | undefined;
    let bestDistance = Infinity;
    for (const p of previous) {
      const d = Math.hypot(p[0].mu.re - mu.re, p[0].mu.im - mu.im);
      if (d < bestDistance) {
        bestDistance = d;
        best = p;
      }
    }
    const trusted = best !== undefined && best.length === cluster.length && best.every((p) => p.verified);
    return trusted ? cluster.length + 1 : seeds;
  };
}

/** Clusters right of `alpha` (single values too) that filled the width of their search. */
export function openClusters(call: EigenCall, alpha: number, widthOf: WidthOf): KnownPair[][] {
  const right = call.known.filter((k) => k.mu.re > alpha);
  return clusters(right, call.floor).filter((c) => c.length >= widthOf(c));
}

/**
 * Complete the open clusters at or right of `target` by locked searches of doubling width; cut
 * the clusters still open out of the claims and remember them as not verified.
 */
export function completeClusters(call: EigenCall, op: ShiftOperator, alpha: number, maxKeep: number, purify: Purify, spec: SpecFor, widthOf: WidthOf, target: () => number): void {
  let open = openClusters(call, alpha, widthOf);
  for (let round = 0; round < MAX_ROUNDS; round++) {
    // only clusters inside this shift's claim can be completed on it (the others wait for the
    // next shift, planned from what is known then)
    const line = target();
    const claim = call.discs[call.discs.length - 1];
    const needed = open.filter((c) => c.some((k) => k.mu.re >= line) && claim !== undefined && claim.shift === op.sigma && c.every((k) => Math.hypot(k.mu.re - claim.center, k.mu.im) <= claim.radius));
    if (needed.length === 0) break;
    const fresh = Math.max(...needed.map((c) => c.length));
    widthOf = lockedSearch(call, op, alpha, Math.max(maxKeep, call.known.filter((k) => k.mu.re > alpha).length), purify, spec, fresh);
    open = openClusters(call, alpha, widthOf);
  }
  call.unverified = open.flat().map((k) => k.mu);
  for (const mu of call.unverified) call.exclude(mu);
  // the clusters completed here (inside a claim, fewer copies than the width that found them)
  const right = call.known.filter((k) => k.mu.re > alpha);
  const done = clusters(right, call.floor).filter((c) => !open.includes(c) && !c.some((k) => call.unverified.some((u) => sameCluster(u, k.mu, call.floor))));
  for (const c of done) {
    const at = call.verified.findIndex((v) => sameCluster(v[0], c[0].mu, call.floor));
    if (at >= 0) call.verified[at] = c.map((k) => k.mu);
    else call.verified.push(c.map((k) => k.mu));
  }
}
