/**
 * The discrete Laplacian per boundary type against exact discrete eigenvalues.
 * Closed forms (the second-difference matrix is diagonalised by discrete sine/cosine/Fourier
 * modes; Dirichlet: LeVeque, Finite Difference Methods for ODEs and PDEs, SIAM 2007, §2.10, from memory; the others by the same substitution), each checked below against
 * ml-matrix's dense eigenvalues as the reference library:
 *   dirichlet, nodes 1..N−1:              −(4/h²) sin²(kπ/(2N)),       k = 1..N−1
 *   neumann (ghost points), nodes 0..N:   −(4/h²) sin²(kπ/(2N)),       k = 0..N
 *   periodic, nodes 0..N−1:               −(4/h²) sin²(kπ/N),          k = 0..N−1
 *   dirichlet left, neumann right:        −(4/h²) sin²((2k−1)π/(4N)),  k = 1..N
 * and in 2D/3D the sums over the axes (tensor-product grids).
 */
import { describe, expect, it } from 'vitest';
import { EigenvalueDecomposition, Matrix, solve } from 'ml-matrix';
import { Grid, type FieldBoundaries, type BoundaryCondition } from '../../discretisations/grid.js';
import { BoundaryData, OperatorBuilder, applyOperator, operatorMatrix } from '../../discretisations/operator.js';

function dense(grid: Grid, bd: BoundaryData, build: (b: OperatorBuilder) => OperatorBuilder): Matrix {
  const op = build(new OperatorBuilder(grid)).build();
  const t = operatorMatrix(op, bd);
  const m = Matrix.zeros(op.size, op.size);
  for (let k = 0; k < t.rows.length; k++) m.set(t.rows[k], t.cols[k], m.get(t.rows[k], t.cols[k]) + t.values[k]);
  return m;
}

function eigenvaluesSorted(m: Matrix): { re: number[]; maxIm: number } {
  const e = new EigenvalueDecomposition(m);
  return { re: e.realEigenvalues.slice().sort((a, b) => a - b), maxIm: Math.max(0, ...e.imaginaryEigenvalues.map(Math.abs)) };
}

const D: BoundaryCondition = { kind: 'dirichlet', value: 0 };
const N0: BoundaryCondition = { kind: 'neumann', flux: 0 };
const P: BoundaryCondition = { kind: 'periodic' };

function oracle1d(kind: 'dirichlet' | 'neumann' | 'periodic' | 'mixed', N: number, L: number): number[] {
  const h = L / N;
  const out: number[] = [];
  const s2 = (x: number) => Math.sin(x) ** 2;
  if (kind === 'dirichlet') for (let k = 1; k <= N - 1; k++) out.push((-4 / h ** 2) * s2((k * Math.PI) / (2 * N)));
  if (kind === 'neumann') for (let k = 0; k <= N; k++) out.push((-4 / h ** 2) * s2((k * Math.PI) / (2 * N)));
  if (kind === 'periodic') for (let k = 0; k < N; k++) out.push((-4 / h ** 2) * s2((k * Math.PI) / N));
  if (kind === 'mixed') for (let k = 1; k <= N; k++) out.push((-4 / h ** 2) * s2(((2 * k - 1) * Math.PI) / (4 * N)));
  return out.sort((a, b) => a - b);
}

function sums(lists: number[][]): number[] {
  let acc = [0];
  for (const l of lists) acc = acc.flatMap((a) => l.map((b) => a + b));
  return acc.sort((a, b) => a - b);
}

function expectClose(a: number[], b: number[], rel = 1e-9): void {
  expect(a.length).toBe(b.length);
  const scale = Math.max(...b.map(Math.abs), 1);
  for (let i = 0; i < a.length; i++) expect(Math.abs(a[i] - b[i])).toBeLessThan(rel * scale);
}

describe('discrete Laplacian eigenvalues (exact closed forms, checked against ml-matrix)', () => {
  const cases: [string, FieldBoundaries, 'dirichlet' | 'neumann' | 'periodic' | 'mixed'][] = [
    ['dirichlet', { all: D }, 'dirichlet'],
    ['neumann (ghost points)', { all: N0 }, 'neumann'],
    ['periodic', { all: P }, 'periodic'],
    ['dirichlet left, neumann right', { xmin: D, xmax: N0 }, 'mixed'],
  ];
  for (const [name, bc, kind] of cases) {
    it(`1D ${name}`, () => {
      const N = 12;
      const L = 2.5;
      const grid = new Grid({ intervals: [N], length: [L] }, ['u'], bc);
      const m = dense(grid, new BoundaryData(grid).resolve({}), (b) => b.laplacian(0));
      const { re, maxIm } = eigenvaluesSorted(m);
      expect(maxIm).toBeLessThan(1e-8);
      expectClose(re, oracle1d(kind, N, L));
    });
  }

  it('2D dirichlet in x, periodic in y: sums of the 1D eigenvalues', () => {
    const grid = new Grid({ intervals: [7, 6], length: [1, 2] }, ['u'], { xmin: D, xmax: D, ymin: P, ymax: P });
    const m = dense(grid, new BoundaryData(grid).resolve({}), (b) => b.laplacian(0));
    const { re, maxIm } = eigenvaluesSorted(m);
    expect(maxIm).toBeLessThan(1e-8);
    expectClose(re, sums([oracle1d('dirichlet', 7, 1), oracle1d('periodic', 6, 2)]));
  });

  it('2D neumann in x (unsymmetric ghost rows), mixed in y', () => {
    const grid = new Grid({ intervals: [6, 5] }, ['u'], { xmin: N0, xmax: N0, ymin: D, ymax: N0 });
    const m = dense(grid, new BoundaryData(grid).resolve({}), (b) => b.laplacian(0));
    const { re, maxIm } = eigenvaluesSorted(m);
    expect(maxIm).toBeLessThan(1e-8);
    expectClose(re, sums([oracle1d('neumann', 6, 1), oracle1d('mixed', 5, 1)]));
  });

  it('3D dirichlet x neumann x periodic', () => {
    const grid = new Grid({ intervals: [4, 3, 5] }, ['u'], { xmin: D, xmax: D, ymin: N0, ymax: N0, zmin: P, zmax: P });
    const m = dense(grid, new BoundaryData(grid).resolve({}), (b) => b.laplacian(0));
    const { re } = eigenvaluesSorted(m);
    expectClose(re, sums([oracle1d('dirichlet', 4, 1), oracle1d('neumann', 3, 1), oracle1d('periodic', 5, 1)]));
  });

  it('two fields with different boundaries: the spectrum is the union of the per-field spectra', () => {
    const grid = new Grid({ intervals: [8] }, ['u', 'v'], [{ all: D }, { all: N0 }]);
    const m = dense(grid, new BoundaryData(grid).resolve({}), (b) => b.laplacian(0).laplacian(1));
    const { re } = eigenvaluesSorted(m);
    expectClose(re, [...oracle1d('dirichlet', 8, 1), ...oracle1d('neumann', 8, 1)].sort((a, b) => a - b));
  });
});

/**
 * Boundary data conventions (outward normal): solve u'' = f on (0, 1) with manufactured
 * u(x) = cos(2x) + x² and check second-order convergence of the nodal error — this pins the
 * signs of the neumann flux, the robin coefficient and the dirichlet values.
 */
describe('boundary data: second-order convergence of a linear solve', () => {
  const exact = (x: number) => Math.cos(2 * x) + x * x;
  const du = (x: number) => -2 * Math.sin(2 * x) + 2 * x;
  const d2u = (x: number) => -4 * Math.cos(2 * x) + 2;
  // outward normal derivative at x = 0 is −u'(0), at x = 1 it is +u'(1)
  const beta = 1.7;
  const variants: [string, (p: Record<string, number>) => FieldBoundaries][] = [
    ['dirichlet (values from parameters)', () => ({ xmin: { kind: 'dirichlet', value: 'a' }, xmax: { kind: 'dirichlet', value: 'b' } })],
    ['neumann flux left, dirichlet right', () => ({ xmin: { kind: 'neumann', flux: 'a' }, xmax: { kind: 'dirichlet', value: 'b' } })],
    ['robin both sides', () => ({ xmin: { kind: 'robin', coefficient: beta, value: 'a' }, xmax: { kind: 'robin', coefficient: 'beta', value: 'b' } })],
  ];
  for (const [name, bcOf] of variants) {
    it(name, () => {
      const errs: number[] = [];
      for (const N of [10, 20, 40, 80]) {
        let p: Record<string, number>;
        if (name.startsWith('dirichlet')) p = { a: exact(0), b: exact(1) };
        else if (name.startsWith('neumann')) p = { a: -du(0), b: exact(1) };
        else p = { a: -du(0) + beta * exact(0), b: du(1) + beta * exact(1), beta };
        const grid = new Grid({ intervals: [N] }, ['u'], bcOf(p));
        const bd = new BoundaryData(grid).resolve(p);
        const op = new OperatorBuilder(grid).laplacian(0).build();
        const m = dense(grid, bd, (b) => b.laplacian(0));
        // affine part: L·0
        const zero = new Float64Array(op.size);
        const c = new Float64Array(op.size);
        applyOperator(op, grid, zero, bd, c);
        const rhs = new Float64Array(op.size);
        const x = new Float64Array(1);
        for (let r = 0; r < op.size; r++) {
          grid.position(grid.unknownNode[r], x);
          rhs[r] = d2u(x[0]) - c[r];
        }
        const sol = solve(m, Matrix.columnVector(Array.from(rhs))).to1DArray();
        let e = 0;
        for (let r = 0; r < op.size; r++) {
          grid.position(grid.unknownNode[r], x);
          e = Math.max(e, Math.abs(sol[r] - exact(x[0])));
        }
        errs.push(e);
      }
      for (let k = 0; k + 1 < errs.length; k++) {
        const order = Math.log2(errs[k] / errs[k + 1]);
        expect(order).toBeGreaterThan(1.9);
        expect(order).toBeLessThan(2.1);
      }
    });
  }
});
