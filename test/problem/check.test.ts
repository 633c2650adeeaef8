/**
 * The Jacobian checker on a model written in code (test/fixtures/code-model.ts) and on
 * deliberately wrong variants of it, which it must point at.
 */
import { describe, expect, it } from 'vitest';
import codeModel from '../fixtures/code-model.js';
import { checkJacobian, colourColumns, summariseCheck } from '../../src/problem/check.js';
import { models } from '../../discretisations/index.js';

describe('checkJacobian on a code model', () => {
  it('passes the correct model in 1D and 2D, with and without the dense constraint row', () => {
    for (const grid of [{ intervals: [30] }, { intervals: [9, 8] }]) {
      for (const constraint of [false, true]) {
        const r = checkJacobian(codeModel({ grid, constraint }));
        expect(r.passed, summariseCheck(r).join('\n')).toBe(true);
        expect(r.jacobian.maxRelativeError).toBeLessThan(1e-7);
        expect(r.jacobian.worst.length).toBeGreaterThan(0);
        expect(r.parameters.map((x) => x.name)).toEqual(['lambda', 'mean']);
      }
    }
  });

  it('points at one wrong stored entry (row 3, column 3)', () => {
    const r = checkJacobian(codeModel({ grid: { intervals: [30] }, wrong: 'entry' }));
    expect(r.passed).toBe(false);
    expect(r.jacobian.failureCount).toBe(1);
    const e = r.jacobian.failures[0];
    expect([e.row, e.column, e.inPattern]).toEqual([3, 3, true]);
    expect(e.analytic - e.finiteDifference).toBeCloseTo(1, 5);
    expect(e.rowLocation).toEqual({ kind: 'grid', field: 'u', node: [4] });
    // the parameter derivatives are still right
    expect(r.parameters.every((x) => x.passed)).toBe(true);
  });

  it('points at an entry missing from the pattern (row 5, column 6)', () => {
    const r = checkJacobian(codeModel({ grid: { intervals: [30] }, wrong: 'missing' }));
    expect(r.passed).toBe(false);
    expect(r.jacobian.missingCount).toBe(1);
    expect(r.jacobian.failureCount).toBe(1);
    const e = r.jacobian.failures[0];
    expect([e.row, e.column, e.inPattern, e.analytic]).toEqual([5, 6, false, 0]);
    expect(Math.abs(e.finiteDifference)).toBeGreaterThan(100); // ~ κ/h²
    expect(summariseCheck(r).join('\n')).toMatch(/row 5 \(u at node 6\), column 6 \(u at node 7\).*not in the pattern/);
  });

  it('points at the wrong rows of a parameter derivative', () => {
    const r = checkJacobian(codeModel({ grid: { intervals: [30] }, wrong: 'parameter' }));
    expect(r.passed).toBe(false);
    expect(r.jacobian.passed).toBe(true);
    const lam = r.parameters.find((x) => x.name === 'lambda')!;
    expect(lam.passed).toBe(false);
    expect(lam.worst.slice(0, 2).map((x) => x.row).sort()).toEqual([2, 7]);
    expect(lam.worst[2].relativeError).toBeLessThan(1e-6);
  });

  it('finds a wrong entry in a dense constraint row by bisection', () => {
    const pr = codeModel({ grid: { intervals: [200] }, constraint: true, wrong: 'dense-row' });
    const r = checkJacobian(pr);
    expect(r.denseRows).toBe(1);
    expect(r.passed).toBe(false);
    expect(r.jacobian.failureCount).toBe(1);
    const e = r.jacobian.failures[0];
    expect([e.row, e.column]).toEqual([pr.size - 1, 17]);
    expect(e.rowLocation).toEqual({ kind: 'extra', name: 'multiplier' });
    expect(e.finiteDifference).toBeCloseTo(pr.weights[17], 9);
    // a handful of groups plus about 2·log2(group size) bisection pairs, not one per column
    expect(r.residualEvaluations).toBeLessThan(60);
  });

  it('stays affordable on 10^4 unknowns: a few column groups, not one per column', () => {
    const pr = models['gray-scott'].factory({ grid: { intervals: [70, 70] }, boundary: 'periodic', initial: 'pulse' });
    expect(pr.size).toBe(9800);
    const r = checkJacobian(pr, { parameters: { F: 0.04, k: 0.06, Du: 1e-3, Dv: 5e-4 } });
    expect(r.passed, summariseCheck(r).join('\n')).toBe(true);
    expect(r.groups).toBeLessThanOrEqual(12);
    expect(r.residualEvaluations).toBeLessThan(60);
  });
});

describe('colourColumns', () => {
  it('gives columns that share a row different colours (tridiagonal: 3 colours)', () => {
    const n = 10;
    const colPtr = new Int32Array(n + 1);
    const rows: number[] = [];
    for (let j = 0; j < n; j++) {
      for (const i of [j - 1, j, j + 1]) if (i >= 0 && i < n) rows.push(i);
      colPtr[j + 1] = rows.length;
    }
    const rowIdx = Int32Array.from(rows);
    // CSR of a symmetric pattern equals its CSC
    const csr = { rowPtr: colPtr, col: rowIdx, pos: Int32Array.from(rows.keys()) };
    const { colour, count } = colourColumns(n, colPtr, rowIdx, csr, new Uint8Array(n));
    expect(count).toBe(3);
    for (let j = 0; j + 2 < n; j++) {
      expect(colour[j]).not.toBe(colour[j + 1]);
      expect(colour[j]).not.toBe(colour[j + 2]);
    }
  });
});

import { checkContract } from '../../src/problem/check.js';

describe('checkContract', () => {
  it('names shape violations of a code model in one line', () => {
    const good = codeModel({ grid: { intervals: [10] } });
    expect(() => checkContract(good)).not.toThrow();
    expect(() => checkContract({ ...good, weights: new Float64Array(3) })).toThrow(/weights has length 3, expected size 9/);
    expect(() => checkContract({ ...good, initialGuess: () => new Float64Array(2) })).toThrow(/initialGuess has length 2/);
    const pat = good.pattern();
    expect(() => checkContract({ ...good, pattern: () => ({ ...pat }) })).toThrow(/same object on every call/);
    expect(() => checkContract({ ...good, residual: (_u, _p, out) => out.fill(NaN) })).toThrow(/residual entry 0 is NaN/);
    expect(() => checkJacobian({ ...good, weights: new Float64Array(3) })).toThrow(/weights has length 3/);
  });
});
