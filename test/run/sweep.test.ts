/**
 * Sweeps (`run CASE --sweep biot=...`) on this machine: each value's run is the run of the case
 * with that value, number for number (one after another here, or in worker processes); the
 * summary files agree with the runs; the located folds match both limits of the cooled slab;
 * bad sweeps are refused with one line before anything is written.
 */
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../src/cli/main.js';
import { parseSweep } from '../../src/run/sweep.js';
import { curveSpecialKinds } from '../../src/continuation/curves/types.js';

/** sweep.csv (text and number cells; ours has no quoted cells). */
function readCsv(file: string): { columns: string[]; rows: (number | string)[][] } {
  const [head, ...lines] = readFileSync(file, 'utf8').trim().split('\n');
  const cell = (c: string): number | string => (c !== '' && Number.isFinite(Number(c)) ? Number(c) : c);
  return { columns: head.split(','), rows: lines.map((l) => l.split(',').map(cell)) };
}

const tmp = mkdtempSync(join(tmpdir(), 'branchline-sweep-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

async function cli(...args: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = '';
  let err = '';
  const code = await main(['node', 'branchline', ...args], { out: (s) => (out += s), err: (s) => (err += s) });
  return { code, out, err };
}

// an invented slab cooled through both faces (Robin walls ∂u/∂n + biot·u = 0)
const caseText = (biot: number): string => `name: cooled-slab
model: bratu
boundary: robin
grid: {intervals: [64]}
parameters: {lambda: 0.001, biot: ${biot}}
continuation:
  parameter: lambda
  bounds: [0, 5]
  step: {initial: 0.001, min: 1.0e-9, max: 0.5}
  max-points: 300
  stop-when: [{monitor: max, above: 6}]
`;
const caseFile = join(tmp, 'cooled-slab.yaml');
const values = [0.01, 1, 10000];

describe('run --sweep', () => {
  const out = join(tmp, 'sweep');
  let r: { code: number; out: string; err: string };
  beforeAll(async () => {
    writeFileSync(caseFile, caseText(1));
    r = await cli('run', caseFile, '--sweep', `biot=${values.join(',')}`, '--out', out, '--quiet');
  });

  it('writes a run folder per value, equal to a run of the case with that value', async () => {
    expect(r.code, r.err).toBe(0);
    for (const v of values) {
      const single = join(tmp, `single-${v}.yaml`);
      writeFileSync(single, caseText(v));
      const s = await cli('run', single, '--out', join(tmp, `single-${v}`), '--quiet');
      expect(s.code, s.err).toBe(0);
      for (const f of ['branches/1.csv', 'points.json']) {
        expect(readFileSync(join(out, `biot-${v}`, f), 'utf8'), `biot ${v}: ${f}`).toBe(readFileSync(join(tmp, `single-${v}`, f), 'utf8'));
      }
      const run = JSON.parse(readFileSync(join(out, `biot-${v}`, 'run.json'), 'utf8')) as { case: { name: string; parameters: { biot: number } } };
      expect(run.case.name).toBe(`cooled-slab-biot-${v}`);
      expect(run.case.parameters.biot).toBe(v);
    }
  });

  it('summarises the values in sweep.csv, sweep.json, sweep.svg and a table', () => {
    const csv = readCsv(join(out, 'sweep.csv'));
    expect(csv.columns).toEqual(['biot', 'run', 'status', 'points', 'branches', 'folds', 'branch-points', 'hopf', 'first-fold', 'first-branch-point', 'first-hopf']);
    expect(csv.rows.map((row) => row[0])).toEqual(values);
    const doc = JSON.parse(readFileSync(join(out, 'sweep.json'), 'utf8')) as { parameter: string; values: number[]; runs: { directory: string; status: string; 'special-points': { kind: string; value: number }[] }[] };
    expect(doc.parameter).toBe('biot');
    expect(doc.values).toEqual(values);
    values.forEach((v, i) => {
      const points = JSON.parse(readFileSync(join(out, `biot-${v}`, 'points.json'), 'utf8')) as { points: { kind: string; value: number }[] };
      const fold = points.points.find((p) => p.kind === 'fold')!.value;
      expect(csv.rows[i][csv.columns.indexOf('first-fold')]).toBe(fold);
      expect(doc.runs[i]['special-points'].find((p) => p.kind === 'fold')!.value).toBe(fold);
      expect(doc.runs[i].status).toBe('finished');
    });
    const svg = readFileSync(join(out, 'sweep.svg'), 'utf8');
    for (const v of ['biot = 0.01', 'biot = 1', 'biot = 10000']) expect(svg).toContain(v);
    expect(r.out).toMatch(/^Sweep of biot over 3 values \(continuation in lambda\):/);
    expect(r.out).toMatch(/\n {2}10000 +finished +\d+ +1 +0 +0 +3\.51\d+\n/);
  });

  it('locates folds that match both limits of the cooled slab', () => {
    const csv = readCsv(join(out, 'sweep.csv'));
    const fold = (i: number): number => csv.rows[i][csv.columns.indexOf('first-fold')] as number;
    // weak cooling (biot → 0): the uniform-temperature balance λ e^u = 2 biot u (two faces of a
    // unit slab) has its fold at λ = 2 biot / e (Semenov's thermal explosion theory; from memory)
    expect(Math.abs(fold(0) - (2 * 0.01) / Math.E) / ((2 * 0.01) / Math.E)).toBeLessThan(0.01);
    // strong cooling (biot → ∞): fixed-temperature walls, the Bratu fold λ* = 3.513830719
    // (Bratu 1914; the discrete fold on 64 intervals is within 2e-3 of it)
    expect(Math.abs(fold(2) - 3.513830719125)).toBeLessThan(3e-3);
    // more cooling, a later ignition
    expect(fold(0)).toBeLessThan(fold(1));
    expect(fold(1)).toBeLessThan(fold(2));
  });

  it('gives the same files from worker processes (--jobs 2)', async () => {
    const two = join(tmp, 'sweep-two');
    const t = await cli('run', caseFile, '--sweep', `biot=${values.join(',')}`, '--out', two, '--jobs', '2', '--quiet');
    expect(t.code, t.err).toBe(0);
    for (const f of ['sweep.csv', 'sweep.svg']) expect(readFileSync(join(two, f), 'utf8')).toBe(readFileSync(join(out, f), 'utf8'));
    for (const v of values) expect(readFileSync(join(two, `biot-${v}`, 'branches/1.csv'), 'utf8')).toBe(readFileSync(join(out, `biot-${v}`, 'branches/1.csv'), 'utf8'));
  });

  it('refuses a used folder without --force, and replaces an earlier sweep with it', async () => {
    const again = await cli('run', caseFile, '--sweep', 'biot=1', '--out', out);
    expect(again.code).toBe(2);
    expect(again.err).toMatch(/^branchline: output folder .* is not empty \(it holds an earlier sweep\); choose another with --out, or pass --force/);
    const forced = await cli('run', caseFile, '--sweep', 'biot=1,2', '--out', out, '--force', '--quiet');
    expect(forced.code, forced.err).toBe(0);
    expect(readCsv(join(out, 'sweep.csv')).rows.map((row) => row[0])).toEqual([1, 2]);
  });

  it.each([
    [['--sweep', 'lambda=1,2'], /^branchline: --sweep: 'lambda' is the continuation parameter of .*; sweep another parameter \(accepted: biot\)\n$/],
    [['--sweep', 'cooling=1,2'], /^branchline: --sweep: 'cooling' is not a parameter of .* \(accepted: lambda, biot\)\n$/],
    [['--sweep', 'biot=1,1'], /^branchline: --sweep 'biot=1,1': the value 1 is listed twice\n$/],
    [['--sweep', 'biot=1,x'], /^branchline: --sweep 'biot=1,x': "x" is not a finite number \(accepted: NAME=V1,V2,\.\.\. /],
    [['--sweep', 'biot'], /^branchline: --sweep 'biot' is not accepted \(accepted: NAME=V1,V2/],
    [['--sweep', 'biot=1', '--partition', 'x'], /^branchline: --partition needs --slurm/],
  ])('refuses %j with one line and writes nothing', async (args, message) => {
    const where = join(tmp, `refused-${Math.random().toString(36).slice(2)}`);
    const e = await cli('run', caseFile, ...args, '--out', where);
    expect(e.code).toBe(2);
    expect(e.err).toMatch(message);
    expect(e.err.trim().split('\n')).toHaveLength(1);
    expect(existsSync(where)).toBe(false);
  });

  it('takes one case file', async () => {
    const e = await cli('run', caseFile, caseFile, '--sweep', 'biot=1,2');
    expect(e.code).toBe(2);
    expect(e.err).toBe('branchline: --sweep takes one case file (got 2); run each case\'s sweep on its own\n');
  });

  it('parses its values to the same doubles as the case file would', () => {
    expect(parseSweep('biot = 0.1, 1e-3 ,2').values).toEqual([0.1, 0.001, 2]);
  });
});

// Turing lines of a Brusselator strip (branch points of the uniform state in (a, b)), swept over Dv
const turing = `name: strip
model: brusselator
boundary: neumann
grid: {intervals: [30], length: [15]}
parameters: {a: 2, b: 2.5, Du: 1, Dv: 8}
continuation:
  follow: branch-point
  parameter: a
  free: b
  bounds: [1.5, 3.5]
  step: {initial: 0.05, max: 0.1}
`;

describe('run --sweep of a curve run', () => {
  const file = join(tmp, 'strip.yaml');
  const out = join(tmp, 'strip-sweep');
  const dvs = [8, 12];
  let r: { code: number; out: string; err: string };
  beforeAll(async () => {
    writeFileSync(file, turing);
    r = await cli('run', file, '--sweep', `Dv=${dvs.join(',')}`, '--out', out, '--quiet');
  });

  it('counts curves and curve points per value; each value’s mode changes lie where its Turing lines cross', () => {
    expect(r.code, r.err).toBe(0);
    const csv = readCsv(join(out, 'sweep.csv'));
    expect(csv.columns).toEqual(['Dv', 'run', 'status', 'points', 'curves', ...curveSpecialKinds]);
    const doc = JSON.parse(readFileSync(join(out, 'sweep.json'), 'utf8')) as { follow: string; 'free-parameter': string; runs: { 'special-points': { kind: string; value: number; free: number }[] }[] };
    expect(doc).toMatchObject({ follow: 'branch-point', 'free-parameter': 'b', 'continuation-parameter': 'a' });
    const h = 15 / 30;
    const q2 = (n: number): number => (4 / h ** 2) * Math.sin((n * Math.PI * h) / 30) ** 2; // the grid's no-flux Laplacian eigenvalues (LeVeque 2007, §2.10, from memory)
    dvs.forEach((Dv, i) => {
      const run = JSON.parse(readFileSync(join(out, `Dv-${Dv}`, 'run.json'), 'utf8')) as { counts: Record<string, number> };
      const row = csv.rows[i];
      expect(row.slice(0, 3)).toEqual([Dv, `Dv-${Dv}`, 'finished']);
      expect(row[csv.columns.indexOf('curves')]).toBe(run.counts.branches);
      for (const k of curveSpecialKinds) expect(row[csv.columns.indexOf(k)], `${Dv} ${k}`).toBe(run.counts[k]);
      const changes = doc.runs[i]['special-points'].filter((p) => p.kind === 'mode-change');
      expect(changes.length).toBeGreaterThan(0);
      expect(changes.length).toBe(run.counts['mode-change']);
      for (const c of changes) {
        // b_n(a) = (1 + Du q²)(a² + Dv q²)/(Dv q²) (Prigogine & Lefever 1968): neighbouring lines
        // cross where a² = Du Dv q_n² q_{n+1}²; b there on both lines
        const n = [...Array(29).keys()].map((k) => k + 1).find((m) => Math.abs(c.value - Math.sqrt(Dv * q2(m) * q2(m + 1))) < 1e-9);
        expect(n, `Dv = ${Dv}: mode change at a = ${c.value}`).toBeDefined();
        expect(Math.abs(c.free - ((1 + q2(n!)) * (c.value ** 2 + Dv * q2(n!))) / (Dv * q2(n!)))).toBeLessThan(1e-9);
      }
    });
    expect(r.out).toMatch(/^Sweep of Dv over 2 values \(branch point curves in a, b free\):\n {2}Dv +status +points +curves +points on the curves\n {2}8 +finished +\d+ +\d+ +mode-change \d+\n/);
  });

  it('draws every value’s curves in the plane of the two parameters', () => {
    const svg = readFileSync(join(out, 'sweep.svg'), 'utf8');
    expect(svg).toContain('<title>strip: the branch point curves in the plane of a and b, per value of Dv</title>');
    for (const v of ['Dv = 8, branch-point curve 1', 'Dv = 12, branch-point curve 2']) expect(svg).toContain(v);
    expect(svg).toContain('data-kind="mode-change"');
  });

  it('refuses to sweep the free parameter, with one line', async () => {
    const where = join(tmp, 'strip-free');
    const e = await cli('run', file, '--sweep', 'b=1,2', '--out', where);
    expect(e.code).toBe(2);
    expect(e.err).toMatch(/^branchline: --sweep: 'b' is the free parameter of the curve run .* \(it adjusts along the curve\); sweep another parameter \(accepted: Du, Dv\)\n$/);
    expect(existsSync(where)).toBe(false);
  });
});
