/**
 * A periodic Gray–Scott strip where a state and its translate are reported once. On a periodic
 * domain a pattern and its shifted copies are one state (translation is a symmetry of the
 * problem); two guesses here are one pulse and the same pulse shifted by a third of the strip.
 *
 * With deflation modulo translation no two reported states are shifted copies of each other:
 * checked here independently of the search's FFT code by shifting one state's node array by
 * every whole number of nodes (a copy shifted by a fraction of a node is then within half a
 * node's change of the state, far below the distances between different patterns). Without it,
 * the same search does report a state and its translate: the check has teeth. Every state's
 * residual is evaluated again with the difference formula written out.
 */
import { describe, expect, it } from 'vitest';
import { models } from '../../discretisations/index.js';
import { resolveParameters } from '../../src/problem/problem.js';
import { rms, search } from './helpers.js';

const L = 0.3;
const N = 60;
const h = L / N;
const problem = models['gray-scott'].factory({ grid: { intervals: [N], length: [L] }, boundary: 'periodic' });
const p = resolveParameters(problem, { F: 0.04, k: 0.064 });
const bump = (c: number) => `exp(-(x-${c})^2/0.0025)`;
const guesses = [0.1, 0.2].map((c) => ({ u: `1 - 0.5*${bump(c)}`, v: `0.25*${bump(c)}` }));

/** The smallest plain distance between a and b shifted by a whole number of nodes (node arrays (2, N)). */
function rolledDistance(a: Float64Array, b: Float64Array): number {
  let best = Infinity;
  for (let s = 0; s < N; s++) {
    const c = new Float64Array(2 * N);
    for (let f = 0; f < 2; f++) for (let i = 0; i < N; i++) c[f * N + i] = b[f * N + ((i + s) % N)];
    best = Math.min(best, rms(a, c));
  }
  return best;
}

function steady(u: Float64Array): number {
  const { F, k, Du, Dv } = p;
  let worst = 0;
  for (let i = 0; i < N; i++) {
    const [l, r] = [(i + N - 1) % N, (i + 1) % N];
    const [a, b] = [u[i], u[N + i]];
    const fu = (Du * (u[l] - 2 * a + u[r])) / (h * h) - a * b * b + F * (1 - a);
    const fv = (Dv * (u[N + l] - 2 * b + u[N + r])) / (h * h) + a * b * b - (F + k) * b;
    worst = Math.max(worst, Math.abs(fu), Math.abs(fv));
  }
  return worst;
}

describe('a periodic Gray–Scott strip: a state and its translate are one state', () => {
  it('reports no state twice modulo translation, and would without it', () => {
    const withShift = search(problem, p, guesses, { maxSolves: 12 });
    const nodes = withShift.states.map((s) => problem.toNodeArray(s.u, p).data);
    expect(nodes.length).toBeGreaterThanOrEqual(2);
    // a pulse among them, stable with one neutral (translation) eigenvalue
    for (const u of nodes) expect(steady(u)).toBeLessThan(1e-9);
    for (let a = 0; a < nodes.length; a++) for (let b = a + 1; b < nodes.length; b++) expect(rolledDistance(nodes[a], nodes[b])).toBeGreaterThan(0.05);

    const without = search(problem, p, guesses, { maxSolves: 12, deflation: { power: 1.5, shift: 1, translation: false } });
    const plain = without.states.map((s) => problem.toNodeArray(s.u, p).data);
    for (const u of plain) expect(steady(u)).toBeLessThan(1e-9);
    let translates = 0;
    for (let a = 0; a < plain.length; a++) for (let b = a + 1; b < plain.length; b++) if (rolledDistance(plain[a], plain[b]) < 0.02) translates++;
    expect(translates).toBeGreaterThan(0);
  });

  it('finds the pulse once with its neutral translation mode', () => {
    const run = search(problem, p, guesses, { maxStates: 1, stability: { eigenvalues: 4 } });
    expect(run.reason).toBe('max-states');
    const s = run.states[0];
    expect(s.monitors['max:v']).toBeGreaterThan(0.2);
    expect(s.stability?.neutralCount).toBe(1);
    expect(s.stability?.stable).toBe(true);
  });
});
