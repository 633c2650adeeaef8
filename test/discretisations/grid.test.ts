/** Grid layout, weights, node arrays and option errors. */
import { describe, expect, it } from 'vitest';
import { Grid } from '../../discretisations/grid.js';
import { models } from '../../discretisations/index.js';
import { resolveParameters, weightedNorm } from '../../src/problem/problem.js';
import { reservedColumnNames, validateProblemNames } from '../../src/problem/names.js';

describe('grid', () => {
  it('h = length/intervals for every boundary type; node counts per type', () => {
    const g = new Grid({ intervals: [8, 6, 4], length: [2, 3, 1] }, ['u'], {
      xmin: { kind: 'dirichlet' }, xmax: { kind: 'dirichlet' }, ymin: { kind: 'neumann' }, ymax: { kind: 'robin', coefficient: 1 }, zmin: { kind: 'periodic' }, zmax: { kind: 'periodic' },
    });
    expect(g.axes.map((a) => a.h)).toEqual([0.25, 0.5, 0.25]);
    expect(g.nodeShape).toEqual([4, 7, 9]); // (nz, ny, nx)
    expect(g.gridUnknowns).toBe(7 * 7 * 4); // x: nodes 1..7; y: 0..6; z: 0..3
  });

  it('weights: Σ w = measure of the domain with neumann/periodic boundaries (trapezoid halving)', () => {
    for (const bc of ['neumann', 'periodic'] as const) {
      const g = new Grid({ intervals: [5, 7], length: [1.5, 2] }, ['u'], { all: bc === 'neumann' ? { kind: 'neumann' } : { kind: 'periodic' } });
      const w = g.unknownWeights();
      expect(w.reduce((a, b) => a + b, 0)).toBeCloseTo(3, 13);
    }
    // dirichlet: interior nodes only, full weight; the discrete L2 norm of sin(πx) tends to 1/√2
    const pr = models.bratu.factory({ grid: { intervals: [64] } });
    const u = Float64Array.from({ length: pr.size }, (_, i) => Math.sin((Math.PI * (i + 1)) / 64));
    expect(weightedNorm(pr.weights, u)).toBeCloseTo(Math.SQRT1_2, 12);
  });

  it('a step means the same on every grid: the weighted norm of a smooth field converges', () => {
    const norms = [16, 32, 64].map((N) => {
      const pr = models['allen-cahn'].factory({ grid: { intervals: [N, N] }, boundary: 'neumann' });
      const x = new Float64Array(2);
      const u = new Float64Array(pr.size);
      const g = (pr as unknown as { grid: Grid }).grid;
      for (let r = 0; r < pr.size; r++) {
        g.position(g.unknownNode[r], x);
        u[r] = Math.cos(Math.PI * x[0]) * Math.cos(Math.PI * x[1]);
      }
      return weightedNorm(pr.weights, u);
    });
    // exact ∫∫cos²cos² = 1/4 → norm 1/2; trapezoid is exact for these trigonometric sums
    for (const n of norms) expect(n).toBeCloseTo(0.5, 12);
  });

  it('interleaved layout with per-field boundaries; node arrays round-trip and fill dirichlet values', () => {
    const pr = models.bratu.factory({ grid: { intervals: [4, 3] } });
    const p = resolveParameters(pr);
    const u = Float64Array.from({ length: pr.size }, (_, i) => i + 1);
    const arr = pr.toNodeArray(u, p);
    expect(arr.shape).toEqual([1, 4, 5]);
    expect(arr.data[0]).toBe(0); // corner, dirichlet value
    expect(arr.data[1 * 5 + 1]).toBe(1); // node (1, 1) is the first unknown
    const back = pr.fromNodeArray(arr.shape, arr.data, p);
    expect(Array.from(back)).toEqual(Array.from(u));
    expect(() => pr.fromNodeArray([1, 5, 4], arr.data, p)).toThrow(/shape \(1, 5, 4\), this grid needs \(1, 4, 5\)/);

    const g = new Grid({ intervals: [3] }, ['u', 'v'], [{ all: { kind: 'dirichlet', value: 2 } }, { all: { kind: 'neumann' } }]);
    // node 0: v only; nodes 1, 2: u, v; node 3: v only
    expect(Array.from(g.unknownIndex)).toEqual([-1, 0, 1, 2, 3, 4, -1, 5]);
    expect(g.layoutText()).toMatch(/interleaved/);
    const nodes = g.toNodeArray(Float64Array.from([10, 11, 12, 13, 14, 15]), {});
    expect(nodes.shape).toEqual([2, 4]);
    expect(Array.from(nodes.data)).toEqual([2, 11, 13, 2, 10, 12, 14, 15]);
  });

  it('one-line errors for bad grids and boundaries', () => {
    expect(() => new Grid({ intervals: [] }, ['u'], { all: { kind: 'neumann' } })).toThrow(/1 to 3 entries/);
    expect(() => new Grid({ intervals: [1] }, ['u'], { all: { kind: 'neumann' } })).toThrow(/intervals\[0\] \(axis x\) must be an integer >= 2, got 1/);
    expect(() => new Grid({ intervals: [4], length: [-1] }, ['u'], { all: { kind: 'neumann' } })).toThrow(/length\[0\].*positive/);
    expect(() => new Grid({ intervals: [4] }, ['u'], { xmin: { kind: 'periodic' }, xmax: { kind: 'neumann' } })).toThrow(/periodic boundaries must be set on both sides/);
    expect(() => new Grid({ intervals: [4] }, ['u'], { xmin: { kind: 'neumann' } })).toThrow(/no condition for side 'xmax'/);
    expect(() => new Grid({ intervals: [4] }, ['u'], { all: { kind: 'neumann' }, ymin: { kind: 'neumann' } })).toThrow(/unknown side 'ymin' for a 1D grid/);
    expect(() => new Grid({ intervals: [4] }, ['u'], { all: { kind: 'robin' } as never })).toThrow(/robin condition needs a coefficient/);
    expect(() => new Grid({ intervals: [4] }, ['u'], { all: { kind: 'fixed' } as never })).toThrow(/unknown boundary kind 'fixed'/);
    expect(() => models['gray-scott'].factory({ grid: { intervals: [4, 4, 4] } })).toThrow(/supports 1D, 2D/);
  });

  it('multilinear interpolation reproduces linear fields exactly', () => {
    const g = new Grid({ intervals: [4, 5], length: [2, 1] }, ['u'], { all: { kind: 'neumann' } });
    const data = new Float64Array(g.nodeCount);
    const x = new Float64Array(2);
    for (let n = 0; n < g.nodeCount; n++) {
      g.position(n, x);
      data[n] = 3 * x[0] - 2 * x[1] + 1;
    }
    expect(g.interpolate(data, 0, [1.3, 0.37])).toBeCloseTo(3 * 1.3 - 2 * 0.37 + 1, 13);
    expect(() => g.interpolate(data, 0, [2.5, 0])).toThrow(/outside the domain/);
  });
});

describe('names', () => {
  it('every built-in model passes the name rules; reserved names are refused for parameters', () => {
    for (const [id, entry] of Object.entries(models)) {
      if (id === 'reaction-diffusion') continue; // needs its expressions; tested with the expression model
      const pr = entry.factory({ grid: { intervals: entry.dimensions.includes(2) ? [6, 5] : [8] } });
      validateProblemNames(pr);
      expect(pr.model).toBe(id);
      for (const s of pr.parameters) expect(reservedColumnNames).not.toContain(s.name);
    }
    const pr = models.bratu.factory({ grid: { intervals: [4] } });
    const bad = { ...pr, parameters: [{ name: 'step-length', default: 1, description: '' }] };
    expect(() => validateProblemNames(bad)).toThrow(/parameter name 'step-length' is reserved/);
  });
});
