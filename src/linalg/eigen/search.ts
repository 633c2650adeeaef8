/**
 * One search with a fixed shift σ and a fixed ordering of the Ritz values: expand the
 * Krylov–Schur decomposition, restart keeping the wanted Schur vectors, stop when the required
 * Ritz values have converged, and say which disc of the complex plane was searched.
 *
 * Orderings: 'nearest' (shift-invert, by |θ|: the eigenvalues nearest σ) and 'cayley' (by the
 * modulus of the Cayley image |1 + (σ − τ)θ|: the eigenvalues right of the line Re μ = α first;
 * transform.ts). For the Cayley ordering every Ritz value right of the line (|C| ≥ 1 + η, η a
 * small margin: the primary group) must converge before the search stops: a Ritz value there that
 * has not converged is evidence of an eigenvalue in the region about to be claimed. If more of
 * them show up than the basis can hold, the line moves right (τ changes; σ, the LU and the Krylov
 * decomposition do not).
 *
 * Convergence: a Ritz pair (θ, y) is accepted when its Krylov residual ‖F B y‖ ≤ tol·|θ|; since
 * J x − μ M x = −(J − σM)(T x − θ x)/θ this bounds the backward error on the pencil by about
 * tol·(‖J‖ + |σ|‖M‖)/(‖J‖ + |μ|‖M‖). (The caller recomputes residuals on J and M.)
 *
 * Claims: a Cayley search claims the Apollonius disc |μ − τ| ≥ (1 + η)|μ − σ| around σ when every
 * Ritz value in it converged (otherwise only down to the last converged one); shift-invert
 * claims the disc about σ through its last converged value.
 */
import type { Complex } from '../schur.js';
import type { SearchDisc } from './types.js';
import { type KrylovSchur, type RitzBlock, type SchurState } from './krylov-schur.js';
import { type ShiftOperator, apolloniusDisc, applyShiftInvert, cabs } from './transform.js';

export interface FoundValue {
  mu: Complex;
  /** Ritz vector (complex: re + i·im), not normalised. */
  xr: Float64Array;
  xi: Float64Array;
  estimate: number;
  converged: boolean;
}

export interface SearchSpec {
  op: ShiftOperator;
  mode: 'nearest' | 'cayley';
  tau: number;
  /** Cayley: Ritz values with |C(μ)| ≥ 1 + eta form the primary wanted group. */
  eta: number;
  /** Values kept at a restart (at least). */
  wanted: number;
  /** Values (in priority order) that must converge before the search stops. */
  required: number;
  maxWanted: number;
  basisSize: number;
  tolerance: number;
  maxRestarts: number;
  /** Dimension the basis must reach before convergence is accepted. */
  minDim: number;
  purify: boolean;
}

export interface SearchOutcome {
  converged: boolean;
  restarts: number;
  /** Wanted values (pairs as two entries), priority order. */
  values: FoundValue[];
  /** Claimed disc (null when nothing was converged in the claimable group). */
  disc: SearchDisc | null;
  /** Schur state and blocks of the wanted prefix, for injection checks. */
  state: SchurState;
  wantedBlocks: number;
}

function priorityFor(spec: { mode: 'nearest' | 'cayley'; sigma: number; tau: number; eta: number }): (theta: Complex) => number {
  if (spec.mode === 'nearest') return (th) => cabs(th.re, th.im);
  const w = spec.sigma - spec.tau;
  return (th) => {
    const c = cabs(1 + w * th.re, w * th.im);
    if (c >= 1 + spec.eta) return 2 + c;
    const a = cabs(th.re, th.im);
    return a / (1 + a);
  };
}

/**
 * For the Cayley ordering, the size of the primary group (Ritz values right of the line,
 * |1 + (σ − τ)θ| ≥ 1 + eta), capped at maxWanted; 0 for shift-invert.
 */
function primaryGroupSize(st: SchurState, spec: SearchSpec, sigma: number): number {
  if (spec.mode !== 'cayley') return 0;
  const w = sigma - spec.tau;
  let g = 0;
  for (const b of st.blocks) {
    const c = cabs(1 + w * b.theta.re, w * b.theta.im);
    if (c >= 1 + spec.eta) g += b.size;
  }
  return Math.min(g, spec.maxWanted);
}

function wantedBlockCount(st: SchurState, spec: SearchSpec, sigma: number): number {
  return blocksFor(st, Math.max(spec.wanted, primaryGroupSize(st, spec, sigma)));
}

/**
 * Leading blocks that must converge: the first `required` values in priority order and, for the
 * Cayley ordering, every Ritz value of the primary group (right of the line, |C| ≥ 1 + eta), up
 * to maxWanted — a Ritz value there that has not converged is evidence of an eigenvalue in the
 * region we are about to claim.
 */
function requiredBlockCount(st: SchurState, spec: SearchSpec, sigma: number): number {
  return blocksFor(st, Math.max(spec.required, primaryGroupSize(st, spec, sigma)));
}

/**
 * Cayley ordering with more Ritz values right of the line than the basis can hold (the line was
 * placed too far left, e.g. from a cold start that had not yet seen the rightmost values): move
 * the line right, between the `required`-th and the next converged real part. τ changes, σ and
 * the Krylov decomposition stay (they do not depend on τ).
 */
function adaptLine(st: SchurState, spec: SearchSpec, sigma: number): void {
  const w = sigma - spec.tau;
  let g = 0;
  for (const b of st.blocks) {
    const c = cabs(1 + w * b.theta.re, w * b.theta.im);
    if (c >= 1 + spec.eta) g += b.size;
  }
  if (g <= spec.maxWanted) return;
  const conv: number[] = [];
  for (const b of st.blocks) {
    if (!blockConverged(b, spec.tolerance)) continue;
    const mu = applyShiftInvert(b.theta, sigma);
    if (!Number.isFinite(mu.re)) continue;
    for (let i = 0; i < b.size; i++) conv.push(mu.re);
  }
  conv.sort((a, b) => b - a);
  if (conv.length < spec.required) return;
  const alphaOld = 0.5 * (sigma + spec.tau);
  const rk = conv[spec.required - 1];
  const next = conv.find((x) => x < rk);
  const spread = Math.max(conv[0] - conv[conv.length - 1], 1e-12 * Math.max(1, Math.abs(rk)));
  const gamma = next !== undefined ? Math.max(0.5 * (rk - next), 0.05 * spread) : 0.25 * spread;
  const alpha = rk - Math.min(gamma, 0.5 * spread);
  if (!(alpha > alphaOld) || !(alpha < sigma)) return;
  const delta = 0.5 * (rk - alpha);
  const beta = sigma - alpha;
  if (!(beta > delta)) return;
  spec.tau = alpha - beta;
  spec.eta = (2 * delta) / (beta - delta);
}

/** Number of leading blocks holding at least `count` eigenvalues. */
function blocksFor(st: SchurState, count: number): number {
  let c = 0;
  let nb = 0;
  for (const b of st.blocks) {
    if (c >= count) break;
    c += b.size;
    nb++;
  }
  return nb;
}

function blockConverged(b: RitzBlock, tol: number): boolean {
  const a = cabs(b.theta.re, b.theta.im);
  return a > 0 && b.residual <= tol * a;
}

export function runSearch(ks: KrylovSchur, spec: SearchSpec, counters: { restarts: number }): SearchOutcome {
  const sigma = spec.op.sigma;
  const pr = (th: Complex) => priorityFor({ mode: spec.mode, sigma, tau: spec.tau, eta: spec.eta })(th);
  const m = Math.max(spec.basisSize, spec.minDim);
  let restarts = 0;
  let st: SchurState | null = null;
  let nb = 0;
  let converged = false;
  for (;;) {
    while (ks.dim < m) {
      ks.expand(spec.op);
      st = null;
      if (ks.dim >= spec.minDim && ks.dim >= spec.wanted + 1) {
        st = ks.schur(pr);
        nb = wantedBlockCount(st, spec, sigma);
        if (st.blocks.slice(0, requiredBlockCount(st, spec, sigma)).every((b) => blockConverged(b, spec.tolerance))) {
          converged = true;
          break;
        }
      }
    }
    if (converged) break;
    if (!st) {
      st = ks.schur(pr);
      nb = wantedBlockCount(st, spec, sigma);
    }
    if (st.blocks.slice(0, requiredBlockCount(st, spec, sigma)).every((b) => blockConverged(b, spec.tolerance)) && ks.dim >= spec.minDim) {
      converged = true;
      break;
    }
    if (restarts >= spec.maxRestarts) break;
    if (spec.mode === 'cayley') adaptLine(st, spec, sigma);
    // keep the wanted blocks and about half of the rest
    let wantedSize = 0;
    for (let i = 0; i < nb; i++) wantedSize += st.blocks[i].size;
    let target = Math.min(m - 2, wantedSize + Math.max(1, Math.floor((m - wantedSize) / 2)));
    target = Math.max(target, Math.min(wantedSize, m - 1));
    let p = 0;
    for (const b of st.blocks) {
      if (p + b.size > target) break;
      p += b.size;
    }
    if (p === 0) p = st.blocks[0].size;
    ks.truncate(st, p);
    st = null;
    restarts++;
    counters.restarts++;
  }
  const state = st!;
  const values: FoundValue[] = [];
  for (let i = 0; i < nb; i++) {
    const b = state.blocks[i];
    const mu = applyShiftInvert(b.theta, sigma);
    if (!Number.isFinite(mu.re)) continue;
    const { re, im } = ks.ritzVector(b, spec.purify);
    const conv = blockConverged(b, spec.tolerance);
    const a = cabs(b.theta.re, b.theta.im);
    const est = a > 0 ? b.residual / a : Infinity;
    values.push({ mu, xr: re, xi: im, estimate: est, converged: conv });
    if (b.size === 2) {
      const nim = new Float64Array(im.length);
      for (let k = 0; k < im.length; k++) nim[k] = -im[k];
      values.push({ mu: { re: mu.re, im: -mu.im }, xr: re, xi: nim, estimate: est, converged: conv });
    }
  }
  // claim: the longest converged prefix (in priority order) of the claimable group
  let disc: SearchDisc | null = null;
  if (spec.mode === 'nearest') {
    let last: RitzBlock | null = null;
    for (const b of state.blocks) {
      if (!blockConverged(b, spec.tolerance)) break;
      last = b;
    }
    if (last) {
      disc = { transform: 'shift-invert', shift: sigma, pole: null, center: sigma, radius: 1 / cabs(last.theta.re, last.theta.im) };
    }
  } else {
    // every primary-group Ritz value converged: claim the whole Apollonius disc of ratio 1 + eta;
    // otherwise only down to the last converged value of the leading run
    const w = sigma - spec.tau;
    let rho = Infinity;
    let whole = true;
    let g = 0;
    for (const b of state.blocks) {
      const c = cabs(1 + w * b.theta.re, w * b.theta.im);
      if (c < 1 + spec.eta) continue;
      g += b.size;
      if (!blockConverged(b, spec.tolerance)) whole = false;
    }
    if (whole && g > spec.maxWanted) whole = false;
    if (whole && converged) rho = 1 + spec.eta;
    else {
      for (const b of state.blocks) {
        const c = cabs(1 + w * b.theta.re, w * b.theta.im);
        if (c < 1 + spec.eta || !blockConverged(b, spec.tolerance)) break;
        rho = Math.min(rho, c);
      }
    }
    if (Number.isFinite(rho) && rho > 1) {
      const ad = apolloniusDisc(sigma, spec.tau, rho);
      disc = { transform: 'cayley', shift: sigma, pole: spec.tau, center: ad.center, radius: ad.radius };
    }
  }
  return { converged, restarts, values, disc, state, wantedBlocks: nb };
}
