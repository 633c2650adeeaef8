/**
 * The README's performance tables are printed by the benchmark from its own figures
 * (tools/bench/readme.ts). The arithmetic behind the growth line and the targets table is
 * checked here on invented rows whose answers are known by construction: a cost that grows
 * exactly as n^1.25 from 100² to 300² and as n^1.75 from 300² to 400² gives those exponents
 * (log(t₂/t₁)/log(n₂/n₁), the usual local exponent), and each target is met or missed as
 * its figure says.
 */
import { describe, expect, test } from 'vitest';
import { growthExponents, readmeTables, targetRows, type BenchResults } from '../../tools/bench/readme.js';
import type { StepBenchRow } from '../../tools/bench/continuation.js';

const shares = { assembly: 0, factorisation: 0, solves: 0, eigen: 0, other: 1 };
const row = (name: string, unknowns: number, eigenvalues: number, secondsPerStep: number, peakRssMiB = 100): StepBenchRow => ({
  case: name,
  eigenvalues,
  unknowns,
  secondsPerStep,
  factorisationsPerStep: 1,
  solvesPerStep: 5,
  eigenSolvesPerStep: eigenvalues ? 20 : 0,
  eigenFactorisationsPerStep: 0,
  peakRssMiB,
  shares,
});

const t100 = 0.1;
const cost = (n: number) => (n <= 90000 ? t100 * (n / 1e4) ** 1.25 : t100 * 9 ** 1.25 * (n / 9e4) ** 1.75);
const results: BenchResults = {
  date: '2026-12-03T00:00:00Z',
  machine: 'test',
  steps: [
    row('2D Bratu 100x100', 1e4, 0, 0.02),
    row('2D Bratu 100x100', 1e4, 6, cost(1e4)),
    row('2D Bratu 200x200', 4e4, 6, cost(4e4)),
    row('2D Bratu 300x300', 9e4, 6, cost(9e4)),
    row('2D Gray–Scott 128x128', 32768, 6, 1.1),
    row('3D Bratu 40^3 intervals', 59319, 6, 9.5),
  ],
  memory: row('2D Bratu 400x400', 16e4, 6, cost(16e4), 1100),
  reference: {
    python: '/usr/bin/python3',
    note: 'SciPy',
    rows: [
      { case: '2D Bratu 200x200', unknowns: 4e4, eigenvalues: 6, steps: 20, oursSecondsPerStep: 0.5, referenceSecondsPerStep: 5, ratio: 0.1 },
      { case: '2D Bratu 200x200', unknowns: 4e4, eigenvalues: 6, steps: 40, oursSecondsPerStep: 0.4, referenceSecondsPerStep: 2, ratio: 0.2 },
    ],
  },
};

describe('README tables from benchmark figures', () => {
  test('local growth exponents between neighbouring sizes, 400² taken from the memory run', () => {
    const g = growthExponents(results);
    expect(g.map((x) => [x.from, x.to])).toEqual([
      [100, 200],
      [200, 300],
      [300, 400],
    ]);
    expect(g[0].exponent).toBeCloseTo(1.25, 12);
    expect(g[1].exponent).toBeCloseTo(1.25, 12);
    expect(g[2].exponent).toBeCloseTo(1.75, 12);
  });

  test('each target met or missed as its figure says', () => {
    const byFigure = new Map(targetRows(results).map((t) => [t.figure, t]));
    const met = (prefix: string) => [...byFigure.values()].find((t) => t.figure.startsWith(prefix))?.met;
    expect(met('2D Bratu 200², 6 eigenvalues, 20 steps: ratio')).toBe(true); // 0.10 ≤ 0.15
    expect(met('2D Bratu 200², 6 eigenvalues, 40 steps: ratio')).toBe(false); // 0.20 > 0.10
    expect(met('2D Bratu 200², 0 eigenvalues')).toBeUndefined(); // no such reference row
    expect(met('2D Bratu 200², 6 eigenvalues, 40 steps: s/step')).toBe(false); // 0.40 > 0.35
    expect(met('2D Gray–Scott')).toBe(true); // 1.1 ≤ 1.2
    expect(met('3D Bratu')).toBe(false); // 9.5 > 3
    expect(met('growth')).toBe(false); // 1.75 > 1.5 at 300 → 400
    expect(met('peak memory')).toBe(false); // 1100 MiB > 1024
    const text = readmeTables(results);
    expect(text).toContain('300→400: n^1.75');
    expect(text).toContain('| peak memory at 400² with 6 eigenvalues | ≤ 1024 MiB | 1100 MiB | no |');
  });

  test('KLU against SuperLU: one line per case, both backends side by side, the automatic choice', () => {
    const b = (backend: 'klu' | 'superlu', factorSeconds: number, factorEntries: number) => ({
      case: '3D Bratu 40^3 intervals', unknowns: 59320, backend, analyseSeconds: 0.3, factorSeconds, refactorSeconds: factorSeconds * 0.75, solveSeconds: 0.04, solve6Seconds: 0.14, factorEntries, wasmMiB: 400, auto: 'superlu' as const, reason: 'invented',
    });
    const text = readmeTables({ backends: [b('klu', 31, 27.5e6), b('superlu', 6.4, 26.1e6)] });
    expect(text).toContain('| 3D Bratu 40^3 intervals | 59,320 | 31.0 s | 23.3 s | 6.40 s | 0.040 s | 0.040 s | 27.5 M / 26.1 M | SuperLU |');
  });
});
