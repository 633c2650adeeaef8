/**
 * Grid-refinement studies end to end (real engine, real files): the located fold of 2D and 1D
 * Bratu and the first branch point of Allen–Cahn over grid sequences, uniform and non-uniform
 * ratios, a sequence that is not yet in the asymptotic range, the folder policy and the CLI.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../src/cli/main.js';
import { prepareCaseObject } from '../../src/run/case.js';
import { InputError } from '../../src/run/errors.js';
import { type StudyResult, runStudy, scaledGrids } from '../../src/refine/study.js';
import { parseXml } from '../plot/xml-check.js';
import { robinSlabFold } from '../exact/bratu-robin.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-refine-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));
let counter = 0;
const fresh = (name: string): string => join(tmp, `${name}-${++counter}`);
const json = (file: string): Record<string, any> => JSON.parse(readFileSync(file, 'utf8'));

/**
 * 1D Bratu fold, exact: λ(θ) = θ²/(2 cosh²(θ/4)) along the exact branch
 * u = −2 ln[cosh((x−½)θ/2)/cosh(θ/4)], largest where (θ/4) tanh(θ/4) = 1 (Bratu 1914).
 * Computed here by Newton on g(t) = t tanh t − 1 with t = θ/4.
 */
function bratuFold1D(): number {
  let t = 1.2;
  for (let i = 0; i < 50; i++) {
    const g = t * Math.tanh(t) - 1;
    const dg = Math.tanh(t) + t / Math.cosh(t) ** 2;
    t -= g / dg;
  }
  const theta = 4 * t;
  return theta ** 2 / (2 * Math.cosh(theta / 4) ** 2);
}
const exactFold1D = 3.513830719125; // exact: the closed-form branch u = −2 ln[cosh((x−½)θ/2)/cosh(θ/4)], fold at (θ/4)·tanh(θ/4) = 1 (Bratu 1914)

const bratu1d = {
  name: 'bratu-1d',
  model: 'bratu',
  grid: { intervals: [32] },
  parameters: { lambda: 0.2 },
  continuation: { parameter: 'lambda', bounds: [0, 5], step: { initial: 0.2, max: 0.5 }, 'stop-when': [{ monitor: 'max', above: 2 }] },
};

async function prepare(doc: Record<string, unknown>, label = 'test case') {
  return prepareCaseObject(doc, { label, baseDir: tmp });
}

describe('refine on 2D Bratu (unit square, u = 0 on the walls)', () => {
  let r: StudyResult;
  let out: string;
  beforeAll(async () => {
    out = fresh('bratu-2d');
    const prepared = await prepare({
      name: 'bratu-2d',
      model: 'bratu',
      grid: { intervals: [32, 32] },
      parameters: { lambda: 1 },
      continuation: { parameter: 'lambda', bounds: [0, 10], step: { initial: 1, min: 1e-8, max: 1.5 }, 'stop-when': [{ monitor: 'max', above: 2.5 }] },
      output: { solutions: 'none' },
    });
    r = await runStudy(prepared, { grids: [32, 64, 128], outDir: out });
  });

  it('observes order 2 ± 0.05 and extrapolates the fold to within 2e-6 of 6.8081244', () => {
    expect(r.status).toBe('finished');
    const doc = json(join(out, 'refine.json'));
    expect(doc.point).toBe('fold 1 on branch 1');
    expect(doc.parameter).toBe('lambda');
    expect(Math.abs(doc.order - 2)).toBeLessThan(0.05);
    // 6.8081244: the continuum fold of 2D Bratu on the unit square, widely reported (from memory)
    expect(Math.abs(doc.extrapolated - 6.8081244)).toBeLessThan(2e-6);
    expect(doc['asymptotic-range']).toBe('consistent');
    expect(doc.warnings).toEqual([]);
    expect(doc.values.map((v: any) => v.grid)).toEqual([32, 64, 128]);
    expect(doc.values.map((v: any) => v.intervals)).toEqual([[32, 32], [64, 64], [128, 128]]);
  });

  it('writes refine.csv with the grids, unknowns, h, values, differences and the order', () => {
    const lines = readFileSync(join(out, 'refine.csv'), 'utf8').trim().split('\n');
    expect(lines[0]).toBe('grid,unknowns,h,value,difference,observed-order');
    const rows = lines.slice(1).map((l) => l.split(','));
    expect(rows.map((c) => Number(c[0]))).toEqual([32, 64, 128]);
    expect(rows.map((c) => Number(c[1]))).toEqual([31 * 31, 63 * 63, 127 * 127]); // Dirichlet walls eliminated
    expect(rows.map((c) => Number(c[2]))).toEqual([1 / 32, 1 / 64, 1 / 128]);
    expect(rows[0][4]).toBe('');
    expect(Number(rows[2][4])).toBeCloseTo(Number(rows[2][3]) - Number(rows[1][3]), 15);
    expect(Math.abs(Number(rows[2][5]) - 2)).toBeLessThan(0.05);
  });

  it('keeps each grid as a run folder and draws refine.svg', () => {
    for (const g of ['grid-32x32', 'grid-64x64', 'grid-128x128']) {
      expect(json(join(out, g, 'run.json')).status).toBe('finished');
      expect(existsSync(join(out, g, 'diagram.svg'))).toBe(true);
    }
    const svg = readFileSync(join(out, 'refine.svg'), 'utf8');
    const root = parseXml(svg);
    expect(root.attrs['data-plot']).toBe('refinement');
    expect(svg).toContain('grid refinement of lambda at fold 1 on branch 1');
    expect(svg).toContain('data-role="fitted-slope"');
    expect(svg).toContain('licensed'); // the ignition caution in the footer
  });
});

describe('refine on 1D Bratu', () => {
  it('the exact fold used below is the maximum of the exact family (Bratu 1914)', () => {
    expect(Math.abs(bratuFold1D() - exactFold1D)).toBeLessThan(1e-12);
  });

  it('converges to 3.513830719125 over four doubled grids, the error estimates bracketing the true errors', async () => {
    const out = fresh('bratu-1d');
    const r = await runStudy(await prepare(bratu1d), { grids: [32, 64, 128, 256], outDir: out });
    expect(r.status).toBe('finished');
    const a = r.analysis!;
    expect(Math.abs(a.order! - 2)).toBeLessThan(0.02);
    expect(a.asymptoticRange).toBe('consistent');
    const fine = a.grids[a.grids.length - 1].value;
    // the extrapolated value's error lies within the error estimate, the finest value's within its GCI band
    expect(Math.abs(a.extrapolated! - exactFold1D)).toBeLessThanOrEqual(a.errorEstimate!);
    expect(Math.abs(fine - exactFold1D)).toBeLessThanOrEqual(a.gciAbsolute!);
    expect(Math.abs(a.extrapolated! - exactFold1D)).toBeLessThan(1e-6);
    expect(a.extrapolationSpread).not.toBeNull();
    expect(json(join(out, 'refine.json'))['extrapolation-spread']).toBe(a.extrapolationSpread);
    expect(json(join(out, 'refine.json'))).toMatchObject({ 'error-estimate-source': 'extrapolation-spread', 'finest-grid-error-bound': a.gciAbsolute });
    // the spread is the realistic figure for the extrapolated value: within two orders of magnitude
    // of its true error, while the GCI (a bound for the finest value) is far larger
    expect(a.errorEstimate!).toBeLessThan(100 * Math.max(Math.abs(a.extrapolated! - exactFold1D), 1e-12));
    expect(a.gciAbsolute!).toBeGreaterThan(100 * a.errorEstimate!);
  });

  it('convective (Robin) faces: each error figure brackets the true error of the value it claims to cover', async () => {
    // Exact family (Bratu 1914 for u'' + λe^u = 0, worked for the Robin faces in
    // test/exact/bratu-robin.ts): λ(a) = 2a² sech²(a/2) exp(−(2a/Bi) tanh(a/2)); the fold is its maximum.
    const biot = 5;
    const exact = robinSlabFold(biot);
    const robin = {
      name: 'slab-robin',
      model: 'bratu',
      boundary: 'robin',
      grid: { intervals: [25] },
      parameters: { lambda: 0.05, biot },
      continuation: { parameter: 'lambda', bounds: [0, 5], 'max-points': 300, 'stop-when': [{ monitor: 'max', above: 3 }] },
    };
    for (const grids of [
      [25, 50, 100],
      [25, 50, 100, 200],
    ]) {
      const out = fresh(`bratu-robin-${grids.length}`);
      const r = await runStudy(await prepare(robin), { grids, outDir: out });
      expect(r.status).toBe('finished');
      const a = r.analysis!;
      const fine = a.grids[a.grids.length - 1].value;
      expect(Math.abs(fine - exact)).toBeLessThanOrEqual(a.gciAbsolute!);
      expect(Math.abs(a.extrapolated! - exact)).toBeLessThanOrEqual(a.errorEstimate!);
      expect(a.errorEstimateSource).toBe(grids.length === 3 ? 'finest-grid-gci' : 'extrapolation-spread');
    }
  });

  it('handles non-uniform ratios (24, 40, 100 intervals: ratios 5/3 and 5/2)', async () => {
    const out = fresh('bratu-1d-nonuniform');
    const r = await runStudy(await prepare(bratu1d), { grids: [24, 40, 100], outDir: out });
    expect(r.status).toBe('finished');
    const a = r.analysis!;
    expect(a.grids[0].ratio).toBeNull();
    expect(a.grids[1].ratio).toBeCloseTo(5 / 3, 14);
    expect(a.grids[2].ratio).toBeCloseTo(5 / 2, 14);
    expect(Math.abs(a.order! - 2)).toBeLessThan(0.05);
    expect(Math.abs(a.extrapolated! - exactFold1D)).toBeLessThanOrEqual(a.errorEstimate!);
    expect(Math.abs(a.extrapolated! - exactFold1D)).toBeLessThan(1e-5);
  });

  it('says clearly when the grids are not yet in the asymptotic range', async () => {
    const out = fresh('bratu-1d-coarse');
    const r = await runStudy(await prepare(bratu1d), { grids: [2, 3, 4], outDir: out });
    const doc = json(join(out, 'refine.json'));
    expect(doc['asymptotic-range']).toBe('not-reached');
    expect(doc.warnings.length).toBeGreaterThan(0);
    let text = '';
    await main(['node', 'branchline', 'plot', out], { out: (s) => (text += s), err: () => {} });
    expect(text).toMatch(/Drew \d+ pictures/);
    const { formatStudySummary } = await import('../../src/refine/study.js');
    expect(formatStudySummary(r)).toMatch(/NOT in the asymptotic range/);
    expect(readFileSync(join(out, 'refine.svg'), 'utf8')).toContain('NOT in the asymptotic range');
  });
});

describe('refine at a branch point (1D Allen–Cahn, u = 0 on the walls)', () => {
  const allenCahn = {
    name: 'allen-cahn',
    model: 'allen-cahn',
    grid: { intervals: [16] },
    parameters: { lambda: 1 },
    continuation: { parameter: 'lambda', bounds: [0, 12], step: { initial: 0.5, max: 1 }, 'branch-switching': { depth: 0 } },
    output: { solutions: 'none' },
  };

  it('extrapolates the first branch point from u = 0 to π² (the first Dirichlet eigenvalue of −d²/dx²)', async () => {
    const out = fresh('allen-cahn');
    const r = await runStudy(await prepare(allenCahn), { grids: [16, 32, 64], outDir: out, point: { kind: 'branch-point', index: 1 } });
    expect(r.status).toBe('finished');
    const a = r.analysis!;
    // discrete values (4/h²) sin²(πh/2) (LeVeque, Finite Difference Methods for ODEs and PDEs, SIAM 2007, §2.10, from memory), exact for the discretisation
    const discrete = (n: number) => 4 * n * n * Math.sin(Math.PI / (2 * n)) ** 2;
    a.grids.forEach((g, i) => expect(Math.abs(g.value - discrete([16, 32, 64][i]))).toBeLessThan(1e-7));
    expect(Math.abs(a.order! - 2)).toBeLessThan(0.02);
    expect(Math.abs(a.extrapolated! - Math.PI ** 2)).toBeLessThan(1e-4);
    expect(Math.abs(a.extrapolated! - Math.PI ** 2)).toBeLessThanOrEqual(a.errorEstimate!);
  });

  it('without --point and without a fold, names what the runs found', async () => {
    const out = fresh('allen-cahn-nofold');
    const r = await runStudy(await prepare(allenCahn), { grids: [16, 32], outDir: out });
    expect(r.status).toBe('failed');
    expect(r.failure).toMatch(/no fold on branch 1 on any grid; choose the point with --point \(grid 16 has: branch 1: branch-point:1 \(lambda = 9\.8/);
  });
});

describe('refine at a Hopf point (1D Brusselator, uniform state)', () => {
  it('finds the Hopf point of the uniform state at b = 1 + a² on every grid', async () => {
    const out = fresh('hopf');
    const prepared = await prepare({
      name: 'oscillator',
      model: 'brusselator',
      grid: { intervals: [8] },
      parameters: { a: 2, b: 4, Du: 1, Dv: 8 },
      continuation: { parameter: 'b', bounds: [4, 5.5], step: { initial: 0.1, max: 0.25 }, 'branch-switching': { depth: 0 } },
      stability: { eigenvalues: 2 },
      output: { solutions: 'none' },
    });
    const r = await runStudy(prepared, { grids: [8, 16, 32], outDir: out, point: { kind: 'hopf', index: 1 } });
    // Hopf of the uniform state at b = 1 + a² (Prigogine & Lefever 1968): the uniform mode does
    // not feel the grid, so every grid gives it to the location tolerance
    for (const run of r.runs) expect(Math.abs(run.value! - 5)).toBeLessThan(1e-7);
    expect(json(join(out, 'refine.json')).point).toBe('Hopf point 1 on branch 1');
  });
});

describe('grids and folders', () => {
  it('scales every axis alike and refuses fractional intervals', () => {
    expect(scaledGrids([32, 16], [32, 48, 64])).toEqual([[32, 16], [48, 24], [64, 32]]);
    expect(scaledGrids([10, 20, 30], [5, 20])).toEqual([[5, 10, 15], [20, 40, 60]]);
    expect(() => scaledGrids([32, 16], [32, 33])).toThrow(/grid 33 would need 16\.5 intervals along y/);
    expect(() => scaledGrids([32], [32])).toThrow(/at least two grids/);
    expect(() => scaledGrids([32], [32, 32])).toThrow(/listed twice/);
    expect(() => scaledGrids([32], [32, 1])).toThrow(InputError);
  });

  it('refuses a non-empty folder, replaces an earlier study with force and keeps the user’s files', async () => {
    const out = fresh('folder');
    mkdirSync(out);
    writeFileSync(join(out, 'notes.txt'), 'mine');
    const prepared = await prepare(bratu1d);
    await expect(runStudy(prepared, { grids: [8, 16], outDir: out })).rejects.toThrow(/not empty/);
    await expect(runStudy(prepared, { grids: [8, 16], outDir: out, force: true })).rejects.toThrow(/holds no earlier refinement study/);
    rmSync(join(out, 'notes.txt'));
    const first = await runStudy(prepared, { grids: [8, 16], outDir: out });
    // two grids: the order is assumed (2), the safety factor 3 (Roache 1994)
    expect(first.analysis!.orderSource).toBe('assumed');
    expect(first.analysis!.safetyFactor).toBe(3);
    writeFileSync(join(out, 'notes.txt'), 'mine');
    await expect(runStudy(prepared, { grids: [8, 16], outDir: out })).rejects.toThrow(/holds an earlier refinement study/);
    await runStudy(prepared, { grids: [10, 20], outDir: out, force: true });
    expect(readdirSync(out).sort()).toEqual(['grid-10', 'grid-20', 'notes.txt', 'refine.csv', 'refine.json', 'refine.svg']);
  });

  it('refuses a case that starts from a saved state (it fits one grid only)', async () => {
    const base = fresh('start-run');
    const prepared = await prepare(bratu1d);
    await runStudy(prepared, { grids: [8, 16], outDir: base });
    const started = await prepare({ ...bratu1d, grid: { intervals: [8] }, start: { run: join(base, 'grid-8'), point: 'fold' } });
    await expect(runStudy(started, { grids: [8, 16], outDir: fresh('x') })).rejects.toThrow(/fits only the grid it was computed on/);
  });
});

describe('the refine command', () => {
  const caseFile = join(tmp, 'bratu-1d.json');
  beforeAll(() => writeFileSync(caseFile, JSON.stringify(bratu1d)));
  async function cli(...args: string[]) {
    let out = '';
    let err = '';
    const code = await main(['node', 'branchline', ...args], { out: (s) => (out += s), err: (s) => (err += s) });
    return { code, out, err };
  }

  it('prints a table, the extrapolated value and where the files went', async () => {
    const out = fresh('cli');
    const r = await cli('refine', caseFile, '--grids', '16,32,64', '--out', out, '--quiet');
    expect(r.code, r.err).toBe(0);
    expect(r.out).toMatch(/^Refinement of lambda at fold 1 on branch 1 \(case bratu-1d\), 3 grids:\n/);
    expect(r.out).toMatch(/\n  16 +15 +0\.0625 +3\.5\d+/);
    expect(r.out).toMatch(/\nExtrapolated: lambda = 3\.5138\d+ \(Richardson extrapolation with the observed order 2\.0\d*\)\.\n/);
    expect(r.out).toMatch(/\nError bound of the finest grid's value \(lambda = 3\.51\d+\): ± [\d.e-]+ \(grid convergence index, safety factor 1\.25, Roache 1994\)\.\n/);
    expect(r.out).toMatch(/\nWithout a fourth grid this bound is also the only \(conservative\) error estimate of the extrapolated value/);
    expect(r.out).toMatch(/\nCaution: .*licensed/);
    expect(r.err).toBe('');
  });

  it('bad options are one-line errors with exit code 2', async () => {
    for (const [args, pattern] of [
      [['--grids', '16,x'], /--grids '16,x' is not accepted/],
      [['--grids', '16,32', '--point', 'saddle'], /--point 'saddle' is not accepted \(accepted: fold, branch-point, hopf or end/],
      [['--grids', '16,32', '--point', 'end'], /the end of a branch/],
      [['--grids', '16,32', '--jobs', '0'], /--jobs '0' is not accepted/],
      [['--grids', '16'], /at least two grids/],
    ] as [string[], RegExp][]) {
      const r = await cli('refine', caseFile, ...args, '--out', fresh('bad'));
      expect(r.code).toBe(2);
      expect(r.err).toMatch(pattern);
      expect(r.err.trim().split('\n')).toHaveLength(1);
    }
  });
});

describe('parallel jobs (worker processes of the compiled program)', () => {
  it('give exactly the values of the grids run one after another', async () => {
    // compile to a private folder under the repository's ignored tmp/ (modules and wasm resolve upwards)
    const build = resolve('tmp', `refine-build-${process.pid}`);
    rmSync(build, { recursive: true, force: true });
    spawnSync(process.execPath, [resolve('node_modules/typescript/bin/tsc'), '-p', 'tsconfig.json', '--outDir', build], { stdio: 'ignore' });
    try {
      const worker = join(build, 'src/refine/worker.js');
      expect(existsSync(worker)).toBe(true);
      const prepared = await prepare(bratu1d);
      const parallel = await runStudy(prepared, { grids: [16, 24, 32, 48], outDir: fresh('jobs'), jobs: 3, workerScript: worker });
      const serial = await runStudy(prepared, { grids: [16, 24, 32, 48], outDir: fresh('serial') });
      expect(parallel.status).toBe('finished');
      expect(parallel.runs.map((x) => x.value)).toEqual(serial.runs.map((x) => x.value));
      expect(parallel.analysis!.extrapolated).toBe(serial.analysis!.extrapolated);
    } finally {
      rmSync(build, { recursive: true, force: true });
    }
  });
});
