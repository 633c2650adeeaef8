/**
 * Starting a case from a saved state: a special point of an earlier run (with its parameter
 * values and extra unknowns) or a .npy solution file; shape checks with one-line errors.
 */
import { copyFileSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../src/cli/main.js';
import { prepareCaseObject } from '../../src/run/case.js';
import { CaseError } from '../../src/run/errors.js';
import { runCase } from '../../src/run/run-case.js';
import { parsePointSpec } from '../../src/run/start.js';
import { readCsv, writeNpy } from '../../src/run/writers.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-start-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));
const json = (file: string): Record<string, any> => JSON.parse(readFileSync(file, 'utf8'));
let counter = 0;
const fresh = (name: string) => join(tmp, `${name}-${++counter}`);
const prepare = (doc: Record<string, unknown>) => prepareCaseObject(doc, { label: 'case.yaml', baseDir: tmp });

// A slab with convective faces (Bratu with Robin walls), first traced in lambda
const slab = {
  name: 'slab',
  model: 'bratu',
  boundary: 'robin',
  grid: { intervals: [64] },
  parameters: { lambda: 0.1, biot: 2 },
  continuation: { parameter: 'lambda', bounds: [0, 5], step: { initial: 0.1, max: 0.5 }, 'stop-when': [{ monitor: 'max', above: 4 }] },
  stability: { eigenvalues: 2 },
};
const first = join(tmp, 'first');
let fold: Record<string, any>;

beforeAll(async () => {
  const r = await runCase(await prepare(slab), { outDir: first });
  expect(r.status).toBe('finished');
  fold = json(join(first, 'points.json')).points.find((p: any) => p.kind === 'fold');
});

describe('point names', () => {
  it('parses kind[:N] in plain words and refuses anything else', () => {
    expect(parsePointSpec('fold')).toEqual({ kind: 'fold', index: 1 });
    expect(parsePointSpec('branch-point:2')).toEqual({ kind: 'branch-point', index: 2 });
    expect(parsePointSpec(' Hopf : 3 ')).toEqual({ kind: 'hopf', index: 3 });
    expect(parsePointSpec('end:1')).toEqual({ kind: 'end', index: 1 });
    for (const bad of ['', 'fold:0', 'fold:-1', 'fold:1.5', 'saddle', 'fold:x', 'BP']) expect(parsePointSpec(bad)).toBeNull();
  });
});

describe('start from a special point of an earlier run', () => {
  it('continues in a second parameter from the fold: converges at once and goes on', async () => {
    const prepared = await prepare({
      ...slab,
      name: 'from-fold',
      parameters: {},
      continuation: { parameter: 'biot', bounds: [0, 10], step: { initial: 0.1, max: 0.5 }, 'max-points': 30 },
      start: { run: first, point: 'fold' },
    });
    // the point's parameter values: lambda at the fold, biot as in the earlier run
    expect(prepared.params.lambda).toBe(fold.value);
    expect(prepared.params.biot).toBe(2);
    expect(prepared.start!.from).toBe(`the fold 1 on branch 1 of run ${first}`);
    const out = fresh('from-fold');
    const r = await runCase(prepared, { outDir: out });
    expect(r.status).toBe('finished');
    const csv = readCsv(join(out, 'branches/1.csv'));
    const col = (name: string) => csv.columns.indexOf(name);
    expect(csv.rows[0][col('newton-iterations')]).toBeLessThanOrEqual(2);
    expect(csv.rows[0][col('biot')]).toBe(2);
    expect(csv.rows[0][col('max')]).toBeCloseTo(fold.monitors.max, 9);
    expect(csv.rows.length).toBe(30);
    // the fold in lambda is a fold in biot as well (J is singular there): every later point has biot > 2
    for (const row of csv.rows.slice(1)) expect(row[col('biot')]).toBeGreaterThan(2);
    const run = json(join(out, 'run.json'));
    expect(run.case.start).toEqual({ run: first, point: 'fold:1', branch: 1 });
    expect(run['start-parameters']).toEqual({ lambda: fold.value, biot: 2 });
  });

  it('values listed under parameters override the run point’s', async () => {
    const prepared = await prepare({
      ...slab,
      parameters: { biot: 2.5 },
      continuation: { parameter: 'lambda', bounds: [0, 5], direction: 'decrease' },
      start: { run: first, point: 'fold:1', branch: 1 },
    });
    expect(prepared.params).toEqual({ lambda: fold.value, biot: 2.5 });
  });

  it('names what the run has when the point is not there', async () => {
    await expect(prepare({ ...slab, start: { run: first, point: 'fold:2' } })).rejects.toThrow(
      /^case\.yaml: start\.point: run .*first has no fold 2 on branch 1 \(it has: branch 1: fold:1 \(lambda = [\d.]+\), end:1 \(lambda = [\d.]+\)\)$/,
    );
    await expect(prepare({ ...slab, start: { run: first, point: 'fold', branch: 3 } })).rejects.toThrow(/no fold 1 on branch 3/);
    await expect(prepare({ ...slab, start: { run: first, point: 'saddle' } })).rejects.toThrow(/start\.point: 'saddle' is not accepted \(accepted: fold, branch-point, hopf or end/);
    await expect(prepare({ ...slab, start: { run: first } })).rejects.toThrow(/start\.point: is missing/);
    await expect(prepare({ ...slab, start: { run: join(tmp, 'nowhere'), point: 'fold' } })).rejects.toThrow(/start\.run: .*nowhere: no such folder/);
    await expect(prepare({ ...slab, start: { run: first, solution: 'x.npy' } })).rejects.toThrow(/start: gives both solution and run/);
    await expect(prepare({ ...slab, start: { solution: 'x.npy', point: 'fold' } })).rejects.toThrow(/point and branch go with run/);
    await expect(prepare({ ...slab, start: { file: 'x.npy' } })).rejects.toThrow(/start: unknown key 'file' \(accepted: solution, run, point, branch\)/);
  });

  it('takes the start value of the continuation parameter from the run, with a clear error when it leaves the bounds', async () => {
    await expect(
      prepare({ ...slab, parameters: {}, continuation: { parameter: 'lambda', bounds: [0, 1] }, start: { run: first, point: 'fold' } }),
    ).rejects.toThrow(/parameters\.lambda: the start value [\d.]+ lies outside continuation\.bounds \[0, 1\] \(the value at the fold 1 on branch 1 of run .*; widen the bounds or set parameters\.lambda\)/);
  });
});

describe('start from a solution file', () => {
  it('reads a .npy of the right shape and starts from it', async () => {
    const prepared = await prepare({ ...slab, parameters: { lambda: fold.value, biot: 2 }, continuation: { parameter: 'lambda', bounds: [0, 5], direction: 'decrease', 'max-points': 5 }, start: { solution: join(first, fold.solution) } });
    expect(prepared.start!.u.length).toBe(65);
    const out = fresh('from-file');
    const r = await runCase(prepared, { outDir: out });
    expect(r.status).toBe('finished');
    const csv = readCsv(join(out, 'branches/1.csv'));
    expect(csv.rows[0][csv.columns.indexOf('newton-iterations')]).toBeLessThanOrEqual(2);
  });

  it('resolves the path against the case file’s folder (the run command)', async () => {
    const folder = join(tmp, 'cases');
    mkdirSync(folder, { recursive: true });
    copyFileSync(join(first, fold.solution), join(folder, 'hot.npy'));
    const file = join(folder, 'again.json');
    writeFileSync(file, JSON.stringify({ ...slab, parameters: { lambda: fold.value, biot: 2 }, continuation: { parameter: 'lambda', bounds: [0, 5], direction: 'decrease', 'max-points': 4 }, start: { solution: 'hot.npy' } }));
    let err = '';
    const code = await main(['node', 'branchline', 'run', file, '--out', fresh('cli'), '--quiet'], { out: () => {}, err: (s) => (err += s) });
    expect(code, err).toBe(0);
  });

  it('refuses a file of another grid with the expected and found shapes', async () => {
    const file = join(tmp, 'wrong.npy');
    writeNpy(file, [1, 33], new Float64Array(33));
    await expect(prepare({ ...slab, start: { solution: file } })).rejects.toThrow(
      /^case\.yaml: start\.solution: .*wrong\.npy: solution array has shape \(1, 33\), this grid needs \(1, 65\) = \(fields, nx\)$/,
    );
    await expect(prepare({ ...slab, start: { solution: 'absent.npy' } })).rejects.toThrow(/start\.solution: .*absent\.npy: no such file/);
    writeFileSync(join(tmp, 'text.npy'), 'hello');
    await expect(prepare({ ...slab, start: { solution: 'text.npy' } })).rejects.toThrow(CaseError);
    const nan = join(tmp, 'nan.npy');
    writeNpy(nan, [1, 65], new Float64Array(65).fill(NaN));
    await expect(prepare({ ...slab, start: { solution: nan } })).rejects.toThrow(/holds non-finite values/);
  });

  it('takes the extra unknowns from the run’s points.json when the file lies in its solutions folder', async () => {
    // the elastica carries one extra unknown, the end reaction (extra unknown 'end-reaction')
    const strut = { name: 'strut', model: 'elastica', grid: { intervals: [24] }, parameters: { lambda: 5 }, continuation: { parameter: 'lambda', bounds: [0, 12], 'branch-switching': { depth: 0 } } };
    const dir = fresh('strut');
    await runCase(await prepare(strut), { outDir: dir });
    const points = json(join(dir, 'points.json'));
    const bp = points.points.find((p: any) => p.kind === 'branch-point');
    expect(Object.keys(bp['extra-unknowns'])).toEqual(['end-reaction']);
    // plant a recognisable value to see it travel
    bp['extra-unknowns']['end-reaction'] = 0.125;
    writeFileSync(join(dir, 'points.json'), JSON.stringify(points));
    const fromFile = await prepare({ ...strut, start: { solution: join(dir, bp.solution) } });
    expect(fromFile.start!.u[fromFile.start!.u.length - 1]).toBe(0.125);
    const fromRun = await prepare({ ...strut, parameters: {}, start: { run: dir, point: 'branch-point' } });
    expect(fromRun.start!.u[fromRun.start!.u.length - 1]).toBe(0.125);
    expect(fromRun.params.lambda).toBe(bp.value);
    // a copy outside any run: the model's initial guess for the end reaction (0)
    copyFileSync(join(dir, bp.solution), join(tmp, 'loose.npy'));
    const loose = await prepare({ ...strut, start: { solution: join(tmp, 'loose.npy') } });
    expect(loose.start!.u[loose.start!.u.length - 1]).toBe(0);
  });
});
