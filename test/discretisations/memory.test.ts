/** The up-front LU memory estimate and the refusal of hopeless grids. */
import { describe, expect, it } from 'vitest';
import { assertFactorMemory, assertFactorWork, defaultFactorSecondsLimit, defaultFactorWorkLimit, estimateFactorMemory, defaultFactorMemoryLimit, factorRates } from '../../discretisations/memory.js';
import { likelySolver } from '../../src/run/case.js';
import { models } from '../../discretisations/index.js';

describe('factor memory estimate', () => {
  it('grows like n in 1D, n log n in 2D and n^(4/3) in 3D (nested dissection, George 1973)', () => {
    const e1 = (k: number) => estimateFactorMemory([k]).factorEntries;
    const e2 = (k: number) => estimateFactorMemory([k, k]).factorEntries;
    const e3 = (k: number) => estimateFactorMemory([k, k, k]).factorEntries;
    expect(e1(200_000) / e1(100_000)).toBeCloseTo(2, 1);
    // 2D: doubling k quadruples n; n log n gives a ratio a little above 4
    const r2 = e2(512) / e2(256);
    expect(r2).toBeGreaterThan(4);
    expect(r2).toBeLessThan(5);
    // 3D: doubling k multiplies n by 8 and n^(4/3) by 16
    const r3 = e3(64) / e3(32);
    expect(r3).toBeGreaterThan(13);
    expect(r3).toBeLessThan(19);
  });

  it('scales with the square of the unknowns per node and adds dense rows for extras', () => {
    const one = estimateFactorMemory([100, 100], 1).factorEntries;
    const two = estimateFactorMemory([100, 100], 2).factorEntries;
    expect(two / one).toBeGreaterThan(3.9);
    expect(two / one).toBeLessThan(4.1);
    const extra = estimateFactorMemory([100, 100], 1, 1);
    expect(extra.factorEntries - one).toBeCloseTo(2 * extra.unknowns, -1);
  });

  it('refuses a large 3D grid with a one-line message; modest ones pass', () => {
    expect(() => models.bratu.factory({ grid: { intervals: [200, 200, 200] } })).toThrow(
      /^model 'bratu' on grid 200x200x200: the sparse LU would need about [\d.]+ GiB .* over the 3\.0 GiB limit; use fewer intervals/,
    );
    expect(() => models.bratu.factory({ grid: { intervals: [12, 12, 12] } })).not.toThrow();
    expect(() => assertFactorMemory(estimateFactorMemory([2000, 2000], 2), 'grid 2000x2000')).toThrow(/grid 2000x2000/);
    expect(defaultFactorMemoryLimit).toBe(3 * 1024 ** 3);
  });

  it('factorisation work grows like n^(3/2) in 2D and n² in 3D (nested dissection: George 1973; Lipton, Rose & Tarjan 1979, from memory)', () => {
    const w2 = (k: number) => estimateFactorMemory([k, k]).flops;
    const w3 = (k: number) => estimateFactorMemory([k, k, k]).flops;
    // 2D: doubling k quadruples n, n^(3/2) grows 8-fold
    expect(w2(512) / w2(256)).toBeGreaterThan(7);
    expect(w2(512) / w2(256)).toBeLessThan(9);
    // 3D: doubling k multiplies n by 8, n² by 64
    expect(w3(64) / w3(32)).toBeGreaterThan(55);
    expect(w3(64) / w3(32)).toBeLessThan(72);
    // m×m blocks: m³ times the work
    expect(estimateFactorMemory([100, 100], 2).flops / estimateFactorMemory([100, 100], 1).flops).toBeCloseTo(8, 1);
  });

  it('refuses a 3D grid whose factorisation takes minutes (52³ intervals fits in memory but not in time); 40³ passes', () => {
    const at = (k: number) => estimateFactorMemory([k - 1, k - 1, k - 1], 1, 1);
    expect(at(52).bytes).toBeLessThan(defaultFactorMemoryLimit);
    expect(() => assertFactorWork(at(52), 'grid 52x52x52')).toThrow(
      /^grid 52x52x52: one sparse LU factorisation would need about 2\.2e11 floating-point operations \(132652 unknowns\), about 4 minutes at the solver's \(KLU\) measured 0\.9 Gflop\/s, and every point needs several; over the 1\.0e11 limit; use fewer intervals/,
    );
    expect(() => assertFactorWork(at(40), 'grid 40x40x40')).not.toThrow();
    expect(defaultFactorWorkLimit).toBe(1e11);
  });

  it('takes the chosen sparse LU\'s rate: SuperLU, about three times faster on 3D grids (wasm/README.md, measured), takes 52³ and refuses 64³', () => {
    const at = (k: number) => estimateFactorMemory([k - 1, k - 1, k - 1], 1, 1);
    // the same time limit (about two minutes) at each solver's rate
    expect(defaultFactorSecondsLimit * factorRates.klu).toBeCloseTo(defaultFactorWorkLimit, -6);
    expect(factorRates.superlu / factorRates.klu).toBeGreaterThan(3);
    expect(() => assertFactorWork(at(52), 'grid 52x52x52', 'superlu')).not.toThrow();
    expect(() => assertFactorWork(at(64), 'grid 64x64x64', 'superlu')).toThrow(/at the solver's \(SuperLU\) measured 3 Gflop\/s, and every point needs several; over the 3\.3e11 limit/);
    // which one the automatic choice would take, from the estimate: SuperLU for 3D grids, KLU for small or scalar 2D ones
    expect(likelySolver(at(52), 'auto')).toBe('superlu');
    expect(likelySolver(at(52), 'klu')).toBe('klu');
    expect(likelySolver(estimateFactorMemory([199, 199], 1, 1), 'auto')).toBe('klu');
    expect(likelySolver(estimateFactorMemory([20, 20], 1, 1), 'auto')).toBe('klu');
  });
});

