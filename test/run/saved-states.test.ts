/**
 * Every state a run writes is a solution (issue 11): for every built-in model, in every dimension
 * it offers and with every boundary kind, short runs with random parameters (ranges below) save
 * the state of every accepted point (`output.solutions: all`). A model built afresh from the case
 * reads each saved `.npy` back and re-evaluates the residual: the state passes the convergence
 * test (src/problem/residual-size.ts) at its recorded parameter, and the residual recorded in the
 * branch CSV and in points.json is exactly that re-evaluated ‖F‖_w.
 */
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import fc from 'fast-check';
import { afterAll, describe, expect, test } from 'vitest';
import { models } from '../../discretisations/index.js';
import { residualTest } from '../../src/problem/residual-size.js';
import { prepareCaseObject } from '../../src/run/case.js';
import { runCase } from '../../src/run/run-case.js';
import { readCsv, readNpy } from '../../src/run/writers.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-saved-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));
let counter = 0;

interface Scenario {
  model: string;
  options: Record<string, unknown>;
  grid: number[];
  length?: number[];
  parameters: Record<string, number>;
  parameter: string;
  bounds: [number, number];
  direction?: 'increase' | 'decrease';
  depth?: number;
  eigenvalues?: number;
  step?: number;
}

/** Run a scenario, then re-check every saved state with a model built afresh. Returns the states checked. */
async function runAndRecheck(s: Scenario): Promise<number> {
  const dir = join(tmp, `run-${++counter}`);
  const doc = {
    name: `saved-${counter}`,
    model: s.model,
    ...s.options,
    grid: { intervals: s.grid, ...(s.length ? { length: s.length } : {}) },
    parameters: s.parameters,
    continuation: {
      parameter: s.parameter,
      bounds: s.bounds,
      direction: s.direction ?? 'increase',
      step: { initial: s.step ?? 0.2, max: s.step ?? 0.2 },
      'max-points': 6,
      'branch-switching': { depth: s.depth ?? 0 },
    },
    stability: { eigenvalues: s.eigenvalues ?? 0 },
    output: { solutions: 'all' },
  };
  const prepared = await prepareCaseObject(doc, { label: 'scenario', baseDir: tmp });
  const result = await runCase(prepared, { outDir: dir });
  // a start that does not converge is a failed run (nothing accepted to check); anything else ran
  if (result.status !== 'finished') {
    expect(result.status).toBe('failed');
    expect(result.failure).toMatch(/start point did not converge|minimum step|Newton/);
  }
  const run = JSON.parse(readFileSync(join(dir, 'run.json'), 'utf8'));
  // (an expression model's `parameters` are its declarations, part of the model)
  const declared = s.model === 'reaction-diffusion' ? { parameters: s.parameters } : {};
  const fresh = models[s.model].factory({ ...s.options, ...declared, grid: { intervals: s.grid, ...(s.length ? { length: s.length } : {}) } } as never);
  const base: Record<string, number> = run['start-parameters'];
  const rtol = prepared.settings.newton.residualTolerance;
  /** The residual test of a saved state at the continuation parameter's value, extra unknowns by name. */
  const recheck = (file: string, value: number, extra: (name: string) => number) => {
    const npy = readNpy(join(dir, file));
    const p = { ...base, [s.parameter]: value };
    const u = fresh.fromNodeArray(npy.shape, npy.data, p, Float64Array.from(fresh.extraUnknowns.map((e) => extra(e.name))));
    return residualTest(fresh, u, p, rtol);
  };
  let checked = 0;
  for (const b of run.branches as { id: number; file: string }[]) {
    const csv = readCsv(join(dir, b.file), ['unexplained-change']);
    const col = (name: string) => csv.columns.indexOf(name);
    for (const row of csv.rows) {
      const r = recheck(join('solutions', `branch-${b.id}-point-${row[col('point')]}.npy`), row[col(s.parameter)], (name) => row[col(name)]);
      expect(r.norm, `branch ${b.id} point ${row[col('point')]}`).toBeLessThanOrEqual(r.bound);
      expect(row[col('residual')]).toBe(r.norm);
      checked++;
    }
  }
  const points = JSON.parse(readFileSync(join(dir, 'points.json'), 'utf8')).points as Record<string, any>[];
  for (const sp of points) {
    const r = recheck(sp.solution, sp.value, (name) => sp['extra-unknowns']?.[name]);
    expect(sp.residual).toBe(r.norm);
    if (sp.kind === 'end' || sp.located) expect(r.norm, `${sp.kind} on branch ${sp.branch}`).toBeLessThanOrEqual(r.bound);
    checked++;
  }
  return checked;
}

const num = (min: number, max: number) => fc.double({ min, max, noNaN: true });
const gridOf = (dim: number) => (dim === 1 ? [16] : dim === 2 ? [6, 5] : [3, 3, 4]);

/** One property per (model, variant): random parameters, a few runs. */
async function property<T>(arb: fc.Arbitrary<T>, scenario: (v: T) => Scenario, runs = 2): Promise<void> {
  let total = 0;
  await fc.assert(
    fc.asyncProperty(arb, async (v) => {
      total += await runAndRecheck(scenario(v));
    }),
    { numRuns: runs },
  );
  expect(total).toBeGreaterThan(0);
}

describe('saved states re-evaluated by a model built afresh', () => {
  // convective walls: steady states exist only below the fold, λ* < 2·Bi/e (Semenov's lumped
  // limit, from memory; internal gradients lower it): a start λ at most 0.3·Bi stays below it
  test.each([1, 2, 3])('bratu, %iD, cold (dirichlet) and convective (robin) walls — λ in [0.1, 1.5] (robin: at most 0.3·biot), biot in [0.5, 20]', async (dim) => {
    for (const boundary of ['dirichlet', 'robin']) {
      await property(fc.record({ fraction: num(0, 1), biot: num(0.5, 20) }), (v) => ({
        model: 'bratu',
        options: { boundary },
        grid: gridOf(dim),
        parameters:
          boundary === 'robin'
            ? { lambda: 0.1 + v.fraction * (Math.min(1.5, 0.3 * v.biot) - 0.1), biot: v.biot }
            : { lambda: 0.1 + v.fraction * 1.4 },
        parameter: 'lambda',
        bounds: [0, 20],
        eigenvalues: dim === 1 ? 2 : 0,
      }));
    }
  });

  test.each([1, 2, 3])('allen-cahn, %iD, dirichlet, neumann and periodic — λ in [1, 30], through the first pitchfork', async (dim) => {
    for (const boundary of ['dirichlet', 'neumann', 'periodic']) {
      await property(num(1, 30), (lambda) => ({
        model: 'allen-cahn',
        options: { boundary },
        grid: gridOf(dim),
        parameters: { lambda },
        parameter: 'lambda',
        bounds: [0, 200],
        step: 2,
        depth: 1,
        eigenvalues: 2,
      }), 1);
    }
  });

  test.each([1, 2])('gray-scott, %iD, neumann and periodic, uniform and pulse starts — F in [0.01, 0.06], k in [0.04, 0.07]', async (dim) => {
    for (const boundary of ['neumann', 'periodic']) {
      for (const initial of ['uniform', 'pulse']) {
        await property(fc.record({ F: num(0.01, 0.06), k: num(0.04, 0.07) }), (v) => ({
          model: 'gray-scott',
          options: { boundary, initial },
          grid: gridOf(dim),
          parameters: { ...v, Du: 0.01, Dv: 0.005 },
          parameter: 'F',
          bounds: [0, 0.1],
          step: 0.01,
          eigenvalues: 2,
        }), 1);
      }
    }
  });

  test.each([1, 2])('brusselator, %iD, neumann and periodic — a in [1, 3], b in [0.5, 4]', async (dim) => {
    for (const boundary of ['neumann', 'periodic']) {
      await property(fc.record({ a: num(1, 3), b: num(0.5, 4) }), (v) => ({
        model: 'brusselator',
        options: { boundary, initial: 'perturbed' },
        grid: gridOf(dim),
        parameters: { ...v, Du: 1, Dv: 8 },
        parameter: 'b',
        bounds: [0, 12],
        step: 0.5,
        eigenvalues: 2,
      }));
    }
  });

  test('elastica — λ in [1, 9], through the first buckling load with the buckled branch followed', async () => {
    await property(num(1, 9), (lambda) => ({
      model: 'elastica',
      options: {},
      grid: [24],
      parameters: { lambda },
      parameter: 'lambda',
      bounds: [0, 14],
      step: 1,
      depth: 1,
      eigenvalues: 2,
    }));
  });

  test('beam-foundation, pinned and clamped — EI in [0.5, 2], kf in [10, 100], k3 in [−50, 100], P from 0 through the first buckling load', async () => {
    for (const ends of ['pinned', 'clamped']) {
      await property(fc.record({ EI: num(0.5, 2), kf: num(10, 100), k3: num(-50, 100) }), (v) => ({
        model: 'beam-foundation',
        options: { ends },
        grid: [24],
        parameters: { P: 0, ...v },
        parameter: 'P',
        bounds: [0, 120],
        step: 8,
        depth: 1,
        eigenvalues: 2,
      }));
    }
  });

  test.each([1, 2, 3])('reaction-diffusion (expressions), %iD, dirichlet, neumann and robin — mu in [0.05, 1], gain in [0, 2]', async (dim) => {
    for (const boundary of ['dirichlet', 'neumann', { kind: 'robin', coefficient: 2, value: 0.1 }]) {
      await property(fc.record({ mu: num(0.05, 1), gain: num(0, 2) }), (v) => ({
        model: 'reaction-diffusion',
        options: {
          fields: ['u'],
          reaction: { u: 'mu*exp(u) - gain*u*(1 + u^2)/2' },
          diffusion: { u: 1 },
          boundary: { all: boundary },
        },
        grid: gridOf(dim),
        parameters: v,
        parameter: 'mu',
        bounds: [0, 5],
      }), 1);
    }
  });
});
