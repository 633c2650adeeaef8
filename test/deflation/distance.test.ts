/**
 * Distances modulo translation and the deflation operator's gradient.
 *
 *  - A state shifted by whole nodes along periodic axes (done here by re-indexing the node
 *    array, not by the FFT) is at distance zero from the state, with that shift found.
 *  - A trigonometric polynomial of degree below N/2 sampled on N equispaced nodes is reproduced
 *    exactly by trigonometric interpolation (standard result, e.g. Trefethen, Spectral Methods
 *    in MATLAB, 2000, ch. 3), so a copy shifted by a fraction of a node is at distance zero too,
 *    and the shift found is that fraction.
 *  - Without periodic axes the distance is the plain root-mean-square distance, written out here.
 *  - The gradient of log η (the deflation operator) against central finite differences.
 */
import { describe, expect, it } from 'vitest';
import { models } from '../../discretisations/index.js';
import { Deflation } from '../../src/deflation/deflation.js';
import { StateDistance, periodicAxes } from '../../src/deflation/distance.js';
import { seededRandom } from '../../src/linalg/random.js';
import { type Problem, resolveParameters } from '../../src/problem/problem.js';

function randomState(problem: Problem, seed: number): Float64Array {
  const r = seededRandom(seed);
  return Float64Array.from({ length: problem.size }, () => 2 * r() - 1);
}

/** The state with its node array rolled by s[a] nodes along axis a (x first): v(x) = u(x − s h). */
function rolled(problem: Problem, u: Float64Array, s: number[]): Float64Array {
  const p = resolveParameters(problem);
  const { shape, data } = problem.toNodeArray(u, p);
  const dim = shape.length - 1;
  const out = new Float64Array(data.length);
  const strides = shape.map((_, d) => shape.slice(d + 1).reduce((a, b) => a * b, 1));
  for (let k = 0; k < data.length; k++) {
    let target = 0;
    for (let d = 0; d < shape.length; d++) {
      let i = Math.floor(k / strides[d]) % shape[d];
      const axis = dim - d; // array dimension d is axis dim − d (x last)
      if (d > 0 && s[axis] !== undefined) i = (((i + s[axis]) % shape[d]) + shape[d]) % shape[d];
      target += i * strides[d];
    }
    out[target] = data[k];
  }
  return problem.fromNodeArray(shape, out, p);
}

describe('distance modulo translation', () => {
  it('finds whole-node shifts on a 1D periodic grid and on a 2D periodic two-field grid', () => {
    const one = models['allen-cahn'].factory({ grid: { intervals: [40] }, boundary: 'periodic' });
    const two = models['gray-scott'].factory({ grid: { intervals: [12, 10] }, boundary: 'periodic' });
    expect(periodicAxes(one)).toEqual([0]);
    expect(periodicAxes(two)).toEqual([0, 1]);
    for (const [problem, shifts] of [
      [one, [[7], [39], [20]]],
      [two, [[3, 0], [0, 4], [11, 9], [6, 5]]],
    ] as const) {
      const p = resolveParameters(problem);
      const distance = new StateDistance(problem, p, { translation: true });
      for (const [i, s] of shifts.entries()) {
        const r = randomState(problem, 11 + i);
        const u = rolled(problem, r, [...s]);
        const near = distance.nearest(distance.probe(u), distance.reference(r));
        expect(near.distance).toBeLessThan(1e-13);
        near.shift.forEach((c, a) => expect(Math.abs(c - s[a])).toBeLessThan(1e-9));
        // without translation the two are far apart
        expect(distance.plain(u, r)).toBeGreaterThan(0.1);
      }
    }
  });

  it('finds fractional shifts of trigonometric polynomials exactly (1D, and 2D with another length)', () => {
    const L = 2.5;
    const one = models['allen-cahn'].factory({ grid: { intervals: [36], length: [L] }, boundary: 'periodic' });
    const p1 = resolveParameters(one);
    const f = (x: number) => 0.3 + Math.sin((2 * Math.PI * x) / L) + 0.4 * Math.cos((6 * Math.PI * x) / L + 0.2);
    const h = L / 36;
    for (const c of [0.37, 5.5, -2.25]) {
      const r = one.fromNodeArray([1, 36], Float64Array.from({ length: 36 }, (_, j) => f(j * h)), p1);
      const u = one.fromNodeArray([1, 36], Float64Array.from({ length: 36 }, (_, j) => f((j - c) * h)), p1);
      const d = new StateDistance(one, p1, { translation: true });
      const near = d.nearest(d.probe(u), d.reference(r));
      expect(near.distance).toBeLessThan(1e-12);
      expect(Math.abs((((near.shift[0] - c) % 36) + 36) % 36)).toBeLessThan(1e-8);
      for (let i = 0; i < u.length; i++) expect(Math.abs(near.copy[i] - u[i])).toBeLessThan(1e-12);
    }
    const two = models['gray-scott'].factory({ grid: { intervals: [16, 12], length: [1, 0.75] }, boundary: 'periodic' });
    const p2 = resolveParameters(two);
    const g = (x: number, y: number, k: number) => Math.sin(2 * Math.PI * x + k) * Math.cos((2 * Math.PI * y) / 0.75) + 0.5 * Math.sin((4 * Math.PI * y) / 0.75);
    const node = (cx: number, cy: number) => {
      const data = new Float64Array(2 * 12 * 16);
      for (let f2 = 0; f2 < 2; f2++) for (let j = 0; j < 12; j++) for (let i = 0; i < 16; i++) data[f2 * 192 + j * 16 + i] = g((i - cx) / 16, ((j - cy) * 0.75) / 12, f2);
      return two.fromNodeArray([2, 12, 16], data, p2);
    };
    const d2 = new StateDistance(two, p2, { translation: true });
    const near = d2.nearest(d2.probe(node(2.3, 4.6)), d2.reference(node(0, 0)));
    expect(near.distance).toBeLessThan(1e-12);
    expect(Math.abs(near.shift[0] - 2.3)).toBeLessThan(1e-8);
    expect(Math.abs(near.shift[1] - 4.6)).toBeLessThan(1e-8);
  });

  it('is the plain root-mean-square distance without periodic axes (and when translation is off)', () => {
    for (const problem of [
      models.bratu.factory({ grid: { intervals: [9, 7] } }),
      models['gray-scott'].factory({ grid: { intervals: [10] }, boundary: 'neumann' }),
      models['allen-cahn'].factory({ grid: { intervals: [10] }, boundary: 'periodic' }),
    ]) {
      const p = resolveParameters(problem);
      const u = randomState(problem, 1);
      const r = randomState(problem, 2);
      let s = 0;
      let area = 0;
      for (let i = 0; i < problem.size; i++) s += problem.weights[i] * (u[i] - r[i]) ** 2;
      for (let i = 0; i < problem.gridUnknowns; i++) area += problem.weights[i];
      const d = new StateDistance(problem, p, { translation: false });
      expect(d.translation).toBe(false);
      expect(Math.abs(d.distance(u, r) - Math.sqrt(s / area))).toBeLessThan(1e-14);
    }
  });
});

describe('the deflation operator', () => {
  it('has the gradient of log η that central finite differences give (with and without translation)', () => {
    const cases: [Problem, boolean][] = [
      [models['allen-cahn'].factory({ grid: { intervals: [14] } }), false],
      [models['allen-cahn'].factory({ grid: { intervals: [14] }, boundary: 'periodic' }), true],
      [models['gray-scott'].factory({ grid: { intervals: [6, 5] }, boundary: 'periodic' }), true],
    ];
    for (const [problem, translation] of cases) {
      const p = resolveParameters(problem);
      for (const power of [1, 1.5, 2]) {
        const deflation = new Deflation(problem, p, { power, shift: 0.7, translation });
        deflation.add(randomState(problem, 3));
        deflation.add(randomState(problem, 4));
        const u = randomState(problem, 5);
        const g = new Float64Array(problem.size);
        const value = deflation.evaluate(u, g);
        expect(Number.isFinite(value.logFactor)).toBe(true);
        const eps = 1e-6;
        for (let i = 0; i < problem.size; i++) {
          const a = u.slice();
          const b = u.slice();
          a[i] += eps;
          b[i] -= eps;
          const fd = (deflation.evaluate(a).logFactor - deflation.evaluate(b).logFactor) / (2 * eps);
          expect(Math.abs(fd - g[i])).toBeLessThan(1e-6 * (1 + Math.abs(g[i])));
        }
      }
    }
  });

  it('grows without bound at a known state and tends to σ^m far from every one', () => {
    const problem = models['allen-cahn'].factory({ grid: { intervals: [20] } });
    const p = resolveParameters(problem);
    const deflation = new Deflation(problem, p, { power: 2, shift: 1, translation: true });
    const r = randomState(problem, 9);
    deflation.add(r);
    deflation.add(randomState(problem, 10));
    expect(deflation.evaluate(r).logFactor).toBe(Infinity);
    const near = r.slice();
    near[3] += 1e-6;
    expect(deflation.evaluate(near).logFactor).toBeGreaterThan(20);
    const far = r.map((x) => x + 1e6);
    expect(Math.abs(deflation.evaluate(far).logFactor)).toBeLessThan(1e-10);
  });
});
