/**
 * The sparse LU a run uses: chosen automatically (recorded in run.json with the reason) or forced
 * with the case key `continuation.sparse-lu`; both backends trace the same branch.
 */
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { prepareCaseObject } from '../../src/run/case.js';
import { runCase } from '../../src/run/run-case.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-linear-solver-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

const slab = (sparseLu?: string) => ({
  name: 'slab',
  model: 'bratu',
  grid: { intervals: [64] },
  parameters: { lambda: 0.2 },
  continuation: { parameter: 'lambda', bounds: [0, 4], step: { initial: 0.2, min: 1e-6, max: 0.5 }, 'max-points': 60, 'stop-when': [{ monitor: 'max', above: 3 }], ...(sparseLu ? { 'sparse-lu': sparseLu } : {}) },
  stability: { eigenvalues: 2 },
  output: { solutions: 'none' },
});

async function run(doc: Record<string, unknown>, name: string): Promise<Record<string, any>> {
  const prepared = await prepareCaseObject(doc, { label: `${name}.yaml`, baseDir: tmp });
  const out = join(tmp, name);
  const result = await runCase(prepared, { outDir: out });
  expect(result.status).toBe('finished');
  return { run: JSON.parse(readFileSync(join(out, 'run.json'), 'utf8')), points: JSON.parse(readFileSync(join(out, 'points.json'), 'utf8')) };
}

describe('the sparse LU of a run', () => {
  it('is chosen automatically and recorded in run.json with its reason; forcing SuperLU traces the same fold', async () => {
    const auto = await run(slab(), 'auto');
    expect(auto.run['linear-solver']).toMatchObject({ backend: 'klu', requested: 'auto' });
    expect(auto.run['linear-solver'].reason).toMatch(/small problem \(64 unknowns/);
    expect(auto.run.case.continuation['sparse-lu']).toBe('auto');

    const forced = await run(slab('superlu'), 'superlu');
    expect(forced.run['linear-solver']).toEqual({ backend: 'superlu', requested: 'superlu', reason: 'superlu requested' });
    expect(forced.run.case.continuation['sparse-lu']).toBe('superlu');

    const fold = (r: Record<string, any>): number => r.points.points.find((p: { kind: string }) => p.kind === 'fold')?.value;
    const a = fold(auto);
    const b = fold(forced);
    expect(Number.isFinite(a)).toBe(true);
    // the discrete fold of 1D Bratu is 3.5138307… + O(h²) (exact continuum value, Bratu 1914)
    expect(Math.abs(a - 3.513830719)).toBeLessThan(1e-3);
    expect(Math.abs(a - b)).toBeLessThan(1e-9 * a);
  });
});
