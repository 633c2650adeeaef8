/**
 * Issue 11, items 1 and 2: a beam on a softening foundation (pinned ends, 80 intervals, length 2,
 * EI = 2, kf = 50, k3 = 10), continued in P from 0 with branch switching. Its buckled branches
 * carry secondary branch points; the engine must find both, each within 1e-7 of an independent
 * value, with every point truly converged and every change of the unstable count explained.
 *
 * Independent values (our own dense computation, described here; nothing from the engine):
 * - the discrete operators are rebuilt from the stencil: D2 = tridiag(1, −2, 1)/h² on the interior
 *   nodes 1..N−1 (w = 0 at the ends), and for pinned ends (w = w″ = 0: ghost w₋₁ = −w₁) the
 *   five-point fourth difference is exactly D4 = D2·D2 (checked by multiplying out the stencils);
 *   F(w) = −(EI D4 w + P D2 w + kf w − k3 w³), J = −(EI D4 + P D2 + kf) + 3 k3 diag(w²);
 * - the reflection w_i ↔ w_{N−i} commutes with J on any symmetric or antisymmetric state, so the
 *   unknowns split into an even and an odd subspace (orthonormal bases, ml-matrix). The mode-1
 *   branch lies in the even subspace, the mode-2 branch in the odd one;
 * - each branch is followed in its own subspace by dense Newton on (w, P) with the deflection
 *   fixed at one node (midspan for mode 1, L/4 for mode 2); the symmetry-breaking branch point
 *   is where the eigenvalue of J restricted to the other subspace nearest zero vanishes, found by
 *   the secant method on that deflection.
 */
import { EigenvalueDecomposition, Matrix, solve } from 'ml-matrix';
import { describe, expect, test } from 'vitest';
import type { BranchPointEvent } from '../../src/continuation/types.js';
import { runModel, settings } from './collect.js';

const N = 80;
const L = 2;
const EI = 2;
const kf = 50;
const k3 = 10;
const h = L / N;
const n = N - 1;

const D2 = Matrix.zeros(n, n);
for (let i = 0; i < n; i++) {
  D2.set(i, i, -2 / (h * h));
  if (i > 0) D2.set(i, i - 1, 1 / (h * h));
  if (i < n - 1) D2.set(i, i + 1, 1 / (h * h));
}
const D4 = D2.mmul(D2);

function residual(w: Matrix, P: number): Matrix {
  const f = D4.mmul(w).mul(-EI).sub(D2.mmul(w).mul(P));
  for (let i = 0; i < n; i++) f.set(i, 0, f.get(i, 0) - kf * w.get(i, 0) + k3 * w.get(i, 0) ** 3);
  return f;
}

function jacobian(w: Matrix, P: number): Matrix {
  const a = D4.clone().mul(-EI).sub(D2.clone().mul(P));
  for (let i = 0; i < n; i++) a.set(i, i, a.get(i, i) - kf + 3 * k3 * w.get(i, 0) ** 2);
  return a;
}

/** Orthonormal basis (columns) of the states with w_{N−i} = parity · w_i. */
function subspace(parity: 1 | -1): Matrix {
  const cols: number[][] = [];
  for (let i = 0; i < n; i++) {
    const j = n - 1 - i;
    if (j < i) break;
    const v = new Array<number>(n).fill(0);
    if (j === i) {
      if (parity < 0) continue;
      v[i] = 1;
    } else {
      v[i] = Math.SQRT1_2;
      v[j] = parity * Math.SQRT1_2;
    }
    cols.push(v);
  }
  return new Matrix(cols).transpose();
}

/** Dense Newton in subspace Q for (coefficients a, P) with the deflection at `node` fixed to A. */
function branchState(Q: Matrix, node: number, A: number, guess: { a: Matrix; P: number }): { a: Matrix; P: number } {
  const m = Q.columns;
  let a = guess.a.clone();
  let P = guess.P;
  for (let it = 0; it < 60; it++) {
    const w = Q.mmul(a);
    const M = Matrix.zeros(m + 1, m + 1);
    M.setSubMatrix(Q.transpose().mmul(jacobian(w, P)).mmul(Q), 0, 0);
    const fp = Q.transpose().mmul(D2.mmul(w)).mul(-1);
    for (let i = 0; i < m; i++) M.set(i, m, fp.get(i, 0));
    for (let j = 0; j < m; j++) M.set(m, j, Q.get(node, j));
    const rhs = Matrix.zeros(m + 1, 1);
    rhs.setSubMatrix(Q.transpose().mmul(residual(w, P)), 0, 0);
    rhs.set(m, 0, w.get(node, 0) - A);
    const d = solve(M, rhs);
    for (let i = 0; i < m; i++) a.set(i, 0, a.get(i, 0) - d.get(i, 0));
    P -= d.get(m, 0);
    // Newton converges quadratically: once an update is below 1e-9 the state is good to its
    // square, i.e. to the rounding level of these operators (about 1e-10, cond(D4) ≈ 1e7)
    if (d.norm() < 1e-9 * (1 + a.norm() + Math.abs(P))) return { a, P };
  }
  throw new Error('dense Newton did not converge');
}

/** The secondary branch point of the mode-`mode` branch: P and the fixed deflection there. */
function secondaryBranchPoint(mode: 1 | 2, A0: number, A1: number): { P: number; A: number } {
  const own = subspace(mode === 1 ? 1 : -1);
  const other = subspace(mode === 1 ? -1 : 1);
  const node = mode === 1 ? N / 2 - 1 : N / 4 - 1; // midspan or L/4 (unknown i is node i + 1)
  const shape = Matrix.columnVector(Array.from({ length: n }, (_, i) => Math.sin((mode * Math.PI * (i + 1) * h) / L)));
  let state = { a: own.transpose().mmul(shape.mul(A0)), P: 24.5 };
  const critical = (A: number): number => {
    state = branchState(own, node, A, state);
    const jo = other.transpose().mmul(jacobian(own.mmul(state.a), state.P)).mmul(other);
    const values = new EigenvalueDecomposition(jo, { assumeSymmetric: true }).realEigenvalues;
    return values.reduce((b, v) => (Math.abs(v) < Math.abs(b) ? v : b), Infinity);
  };
  let a = A0;
  let b = A1;
  let fa = critical(a);
  let fb = critical(b);
  for (let k = 0; k < 40 && Math.abs(b - a) > 1e-14; k++) {
    const c = b - (fb * (b - a)) / (fb - fa);
    [a, fa] = [b, fb];
    b = c;
    fb = critical(b);
  }
  return { P: state.P, A: b };
}

describe('beam on a softening foundation: secondary branch points on the buckled branches', () => {
  test('both secondary branch points within 1e-7 of the dense symmetry-subspace values; every point converged; every count change explained', () => {
    // from the issue: mode 1 at P = 24.3959477 and mode 2 at P = 24.7401321 with w(L/4) = 0.275
    const mode1 = secondaryBranchPoint(1, 0.5, 0.53);
    const mode2 = secondaryBranchPoint(2, 0.26, 0.29);
    expect(Math.abs(mode1.P - 24.3959477)).toBeLessThan(1e-6);
    expect(Math.abs(mode2.P - 24.7401321)).toBeLessThan(1e-6);
    expect(mode2.A).toBeCloseTo(0.275, 3);

    // the run goes to P = 50; past P = 30 (the third mode at 46.6) it adds nothing here, and
    // beyond the secondary points the buckled branches are stopped (by deflection) to keep the run short
    const run = runModel(
      'beam-foundation',
      { grid: { intervals: [N], length: [L] }, ends: 'pinned' },
      { P: 0, EI, kf, k3 },
      settings({ parameter: 'P', bounds: [0, 30], maxPoints: 200, branchSwitching: { depth: 1 }, stability: { eigenvalues: 4 }, stopWhen: [{ monitor: 'max', above: 0.8 }, { monitor: 'min', below: -0.8 }] }),
    );
    // (runProblem has re-checked every point's residual test and recorded residual)
    const primary = run.specials.filter((s): s is BranchPointEvent => s.kind === 'branch-point' && s.branch === 1);
    // P_n = EI μ_n + kf/μ_n with μ_n = (4/h²) sin²(nπh/(2L)) (Timoshenko & Gere; discrete form)
    const mu = (k: number) => (4 / (h * h)) * Math.sin((k * Math.PI * h) / (2 * L)) ** 2;
    const Pn = (k: number) => EI * mu(k) + kf / mu(k);
    const byMode = (k: number) => primary.find((b) => Math.abs(b.value - Pn(k)) < 1e-8 * Pn(k))!;
    for (const [k, ref] of [
      [1, mode1],
      [2, mode2],
    ] as const) {
      const origin = byMode(k);
      expect(origin.newBranches).toHaveLength(2);
      for (const id of origin.newBranches) {
        const secondary = run.specials.filter((s): s is BranchPointEvent => s.kind === 'branch-point' && s.branch === id);
        expect(secondary, `branch ${id} (mode ${k})`).toHaveLength(1);
        expect(Math.abs(secondary[0].value - ref.P)).toBeLessThan(1e-7);
        expect(secondary[0].type).toBe('pitchfork');
        // the first point after the switch is a true solution at its own P (no 0-iteration acceptance of the predictor)
        const first = run.branch(id)[1];
        const w = Matrix.columnVector(Array.from(first.u));
        const largest = (m: Matrix) => Math.max(...m.to1DArray().map(Math.abs));
        const terms = D4.mmul(w).mul(EI).abs().add(D2.mmul(w).mul(first.parameter).abs());
        expect(largest(residual(w, first.parameter))).toBeLessThan(1e-6 * Math.max(1, largest(terms)));
      }
    }
    expect(run.points.filter((p) => p.unexplained)).toEqual([]);
    expect(run.warnings).toEqual([]);
  });
});
