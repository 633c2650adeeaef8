/**
 * Curve runs through the command line: the files a curve run writes (CSV columns with both
 * parameters, test functions and modes; points.json with codimension-two points; run.json; the
 * diagram in the parameter plane), bad curve keys refused with one line, and a run stopped with
 * SIGINT (the built binary, a real process) resumed to the same files as an uninterrupted run.
 */
import { type ChildProcess, spawn } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readCsv } from '../../src/run/writers.js';
import { ensureBuilt } from './built.js';
import { bin, cli, csvBytes, json, sleep, writerIn } from './processes.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-curves-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));
const write = writerIn(tmp);

// Turing lines of a Brusselator line: curves joined at mode changes
const turing = `name: turing-lines
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
checkpoint: {every-points: 3, every-seconds: 0.05}
`;

// the cubic normal form: its fold curve both ways from the first fold, through the cusp
const cusp = `name: cusp
model: reaction-diffusion
fields: [u]
parameters: {p1: -0.5, p2: 1}
reaction: {u: p1 + p2*u - u^3}
diffusion: {u: 1}
boundary: neumann
initial: {u: -1.2}
grid: {intervals: [8]}
continuation:
  follow: fold
  parameter: p2
  free: p1
  bounds: [-0.5, 2]
  direction: both
  step: {initial: 0.05, max: 0.1}
`;

describe('curve runs: files', () => {
  it('a fold curve both ways: both parameters, test functions, the cusp in points.json and on the diagram', async () => {
    const out = join(tmp, 'cusp-run');
    const r = await cli('run', write('cusp.yaml', cusp), '--out', out, '--quiet');
    expect(r.code, r.err).toBe(0);
    expect(r.out).toMatch(/Curve 1 \(fold curve, p2 increasing from the first point\): \d+ points, no codimension-two point, ended: reached p2 = 2/);
    expect(r.out).toMatch(/Curve 2 \(fold curve, p2 decreasing from the first point\): \d+ points, cusp at p2 = [-\d.e]+, p1 = [-\d.e]+/);
    const csv = readCsv(join(out, 'branches', '2.csv'));
    expect(csv.columns).toEqual(['point', 'arclength', 'p2', 'p1', 'max', 'min', 'l2-norm', 'newton-iterations', 'residual', 'step-length', 'cusp-coefficient', 'bogdanov-takens', 'determinant-sign']);
    // every row on 27 p1² = 4 p2³
    for (const row of csv.rows) expect(Math.abs(27 * row[3] ** 2 - 4 * row[2] ** 3)).toBeLessThan(1e-8);
    const points = json(join(out, 'points.json')).points as Record<string, any>[];
    const c = points.find((p) => p.kind === 'cusp')!;
    expect(c).toMatchObject({ branch: 2, parameter: 'p2', 'free-parameter': 'p1', located: true, solution: 'solutions/branch-2-cusp-1.npy' });
    expect(Math.abs(c.value)).toBeLessThan(1e-8);
    expect(Math.abs(c.free)).toBeLessThan(1e-8);
    expect(existsSync(join(out, c.solution))).toBe(true);
    const run = json(join(out, 'run.json'));
    expect(run).toMatchObject({ status: 'finished', follow: 'fold', 'free-parameter': 'p1', 'continuation-parameter': 'p2' });
    expect(run.counts.cusp).toBe(1);
    expect(run.case.continuation).toMatchObject({ follow: 'fold', free: 'p1', direction: 'both' });
    const svg = readFileSync(join(out, 'diagram.svg'), 'utf8');
    expect(svg).toContain('data-kind="cusp"');
    expect(svg).toContain('the fold curves in the plane of p2 and p1');
    expect(svg).toContain('fold curve 2');
    expect(existsSync(join(out, 'plots', 'branch-2-cusp-1.svg'))).toBe(true);
  });

  it('check covers the augmented systems (fold and branch-point curves)', async () => {
    const a = await cli('check', write('cusp-check.yaml', cusp));
    expect(a.code, a.out + a.err).toBe(0);
    expect(a.out).toMatch(/fold curve system \(F = 0 and the bordered null-vector condition, in p2 and p1\): agrees — linearisation against differences [\d.]+e-\d+, bordered solve [\d.]+e-\d+ \(relative\)\nThe Jacobian and the parameter derivatives agree with finite differences\.\n$/);
    const b = await cli('check', write('turing-check.yaml', turing), '--json');
    expect(b.code).toBe(0);
    const doc = JSON.parse(b.out);
    expect(doc.agree).toBe(true);
    expect(doc.curve.kind).toBe('branch-point curve');
    expect(doc.curve['jacobian-error']).toBeLessThan(1e-6);
  });

  it('new --follow prints curve starters that check accepts; models without one are told which exist', async () => {
    for (const [model, kind] of [['bratu', 'fold'], ['brusselator', 'branch-point'], ['beam-foundation', 'fold'], ['beam-foundation', 'branch-point'], ['brusselator', 'hopf'], ['gray-scott', 'hopf']]) {
      const r = await cli('new', model, '--follow', kind);
      expect(r.code, r.err).toBe(0);
      expect(r.out).toContain(`follow: ${kind}`);
      const file = write(`starter-${model}-${kind}.yaml`, r.out.replace(/intervals: \[100\]/, 'intervals: [20]'));
      const c = await cli('check', file, '--json');
      expect(c.code, `${model} ${kind}: ${c.err}`).toBe(0);
      expect(JSON.parse(c.out).curve.kind).toBe(kind === 'hopf' ? 'Hopf curve' : `${kind} curve`);
    }
    const none = await cli('new', 'allen-cahn', '--follow', 'fold');
    expect(none.code).toBe(2);
    expect(none.err).toMatch(/no curve starter for model 'allen-cahn' \(offered: bratu --follow fold, brusselator --follow branch-point/);
    const bad = await cli('new', 'bratu', '--follow', 'cusp');
    expect(bad.code).toBe(2);
    expect(bad.err).toMatch(/--follow: 'cusp' is not accepted \(accepted: fold, branch-point, hopf\)/);
  });

  it('refine --point cusp and --point bogdanov-takens: the points of uniform states are the same on every grid', async () => {
    const a = await cli('refine', write('cusp-refine.yaml', cusp), '--grids', '8,16,32', '--point', 'cusp', '--out', join(tmp, 'cusp-refine'));
    expect(a.code, a.err).toBe(0);
    expect(a.out).toMatch(/Refinement of p2 at cusp 1 on branch 2 \(case cusp\), 3 grids/);
    expect(a.out).toMatch(/the finest values agree to round-off/);
    const study = json(join(tmp, 'cusp-refine', 'refine.json'));
    for (const r of study.runs) expect(Math.abs(r.value)).toBeLessThan(1e-8);
    // Gray–Scott by expressions, from a uniform state on the upper root at F = k = 0.05
    const gs = `name: gray-scott-uniform
model: reaction-diffusion
fields: [u, v]
parameters: {F: 0.05, k: 0.05}
reaction: {u: -u*v^2 + F*(1 - u), v: u*v^2 - (F + k)*v}
diffusion: {u: 1, v: 1}
boundary: neumann
initial: {u: 0.1127016653792583, v: 0.4436491673103709}
grid: {intervals: [8]}
continuation:
  follow: fold
  parameter: k
  free: F
  bounds: [0.03, 0.07]
  free-bounds: [0, 1]
  step: {initial: 0.004, max: 0.008}
`;
    const b = await cli('refine', write('gs-refine.yaml', gs), '--grids', '8,16,32', '--point', 'bogdanov-takens', '--out', join(tmp, 'gs-refine'));
    expect(b.code, b.err).toBe(0);
    // Gray & Scott 1984: k = F = 1/16 at the Bogdanov–Takens point of the uniform fold curve
    for (const r of json(join(tmp, 'gs-refine', 'refine.json')).runs) expect(Math.abs(r.value - 1 / 16)).toBeLessThan(1e-7);
  });

  it('bad curve keys: one line naming the field and what is accepted (exit 2)', async () => {
    const bad: [string, string, RegExp][] = [
      ['free missing', cusp.replace('  free: p1\n', ''), /continuation\.free: is missing: the parameter that adjusts to stay on the fold \(accepted: one of p1, p2 other than p2\)/],
      ['free is the parameter', cusp.replace('free: p1', 'free: p2'), /continuation\.free: 'p2' is the continuation parameter itself/],
      ['free unknown', cusp.replace('free: p1', 'free: q'), /continuation\.free: 'q' is not a parameter of this model \(accepted: p1\)/],
      ['follow misspelt', cusp.replace('follow: fold', 'follow: folds'), /continuation\.follow: 'folds' is not accepted \(accepted: fold, branch-point, hopf\)/],
      ['method with a curve', cusp.replace('  follow: fold\n', '  follow: fold\n  method: natural\n'), /continuation\.method: does not apply to a curve run \(follow: fold\); remove it/],
      ['free without follow', cusp.replace('  follow: fold\n', '').replace('direction: both', 'direction: increase'), /continuation\.free: goes with a curve run \(accepted: add follow: fold, branch-point, hopf, or remove free\)/],
      ['both without follow', cusp.replace('  follow: fold\n', '').replace('  free: p1\n', ''), /continuation\.direction: 'both' goes with curve runs/],
      ['eigenvalues on a curve', cusp + 'stability: {eigenvalues: 3}\n', /stability\.eigenvalues: 3: fold curves compute no eigenvalues/],
      ['free bounds reversed', cusp.replace('  free: p1\n', '  free: p1\n  free-bounds: [1, -1]\n'), /continuation\.free-bounds: \[1, -1\] is reversed/],
      ['start outside free bounds', cusp.replace('  free: p1\n', '  free: p1\n  free-bounds: [0, 1]\n'), /parameters\.p1: the start value -0\.5 lies outside continuation\.free-bounds \[0, 1\]/],
    ];
    for (const [what, text, expected] of bad) {
      const r = await cli('run', write(`bad-${what.replace(/ /g, '-')}.yaml`, text), '--out', join(tmp, `bad-${what.replace(/ /g, '-')}`), '--quiet');
      expect(r.code, what).toBe(2);
      expect(r.err.trim().split('\n'), what).toHaveLength(1);
      expect(r.err, what).toMatch(expected);
    }
  });
});

// the slab's fold in lambda at biot = 1 (a one-parameter run), then its fold curve in (biot, lambda)
const slabBranch = `name: slab
model: bratu
boundary: robin
grid: {intervals: [20]}
parameters: {lambda: 0.1, biot: 1}
continuation:
  parameter: lambda
  bounds: [0, 5]
  step: {initial: 0.1, max: 0.2}
  max-points: 40
`;
const slabCurve = (name: string, first: string) => `name: ${name}
model: bratu
boundary: robin
grid: {intervals: [20]}
${first}
continuation:
  follow: fold
  parameter: biot
  bounds: [0.5, 2]
  direction: both
  free: lambda
  step: {initial: 0.05, max: 0.2}
`;

describe('curve runs: from the fold of an earlier run, and several at a time', () => {
  it('start: {run, point: fold} begins the curve at that fold; it matches the curve found by searching, both run with --jobs 2', async () => {
    ensureBuilt();
    const branch = join(tmp, 'slab-branch');
    const r0 = await cli('run', write('slab-branch.yaml', slabBranch), '--out', branch, '--quiet');
    expect(r0.code, r0.err).toBe(0);
    const fold = (json(join(branch, 'points.json')).points as Record<string, any>[]).find((p) => p.kind === 'fold')!;
    expect(fold).toBeDefined();
    const from = write('slab-from-fold.yaml', slabCurve('slab-from-fold', `start: {run: ${branch}, point: fold}`));
    const searched = write('slab-searched.yaml', slabCurve('slab-searched', 'parameters: {lambda: 0.1, biot: 1}'));
    const parent = join(tmp, 'slab-curves');
    const r = await cli('run', from, searched, '--out', parent, '--jobs', '2', '--quiet');
    expect(r.code, r.err).toBe(0);
    expect(r.out).toMatch(/2 cases: 2 finished/);
    const a = json(join(parent, 'slab-from-fold', 'run.json'));
    expect(a.case.start).toMatchObject({ point: 'fold:1', branch: 1 });
    expect(a['start-parameters']).toMatchObject({ biot: 1 });
    // the first point is the earlier run's fold (no search; the curve's own Newton test may polish
    // it in the last digits)
    const first = readCsv(join(parent, 'slab-from-fold', 'branches', '1.csv'));
    expect(first.rows[0][2]).toBe(1);
    expect(Math.abs(first.rows[0][3] - fold.value)).toBeLessThan(1e-12 * Math.abs(fold.value));
    // both ways from it to the bounds, and on the same curve as the run that searched for the fold
    for (const f of ['1.csv', '2.csv']) {
      const x = readCsv(join(parent, 'slab-from-fold', 'branches', f)).rows;
      const y = readCsv(join(parent, 'slab-searched', 'branches', f)).rows;
      expect(x[x.length - 1][2]).toBe(y[y.length - 1][2]);
      expect([0.5, 2]).toContain(x[x.length - 1][2]);
      expect(Math.abs(x[x.length - 1][3] - y[y.length - 1][3])).toBeLessThan(1e-9);
    }
  });
});

describe('curve runs: stop and resume', () => {
  const reference = join(tmp, 'turing-reference');
  beforeAll(async () => {
    ensureBuilt();
    const r = await cli('run', write('turing.yaml', turing), '--out', reference, '--quiet');
    expect(r.code, r.err).toBe(0);
  });

  it('SIGINT in the middle, then resume: the same curve files, mode changes and counts as the uninterrupted run', async () => {
    const ref = json(join(reference, 'run.json'));
    expect(ref.branches.length).toBeGreaterThanOrEqual(2);
    expect(ref.counts['mode-change']).toBe(ref.branches.length - 1);
    const total = csvBytes(reference);
    const dir = join(tmp, 'turing-stopped');
    const child: ChildProcess = spawn(process.execPath, [bin, 'run', join(tmp, 'turing.yaml'), '--out', dir, '--quiet'], { stdio: ['ignore', 'pipe', 'pipe'] });
    let done = false;
    const ended = new Promise<number | null>((ok) => child.on('exit', (code) => ((done = true), ok(code))));
    while (!done && csvBytes(dir) < total / 2) await sleep(3);
    // (the run is slow enough to be caught in the middle: it searches first, then writes three curves)
    expect(done).toBe(false);
    child.kill('SIGINT');
    const code = await ended;
    expect(code).toBe(1);
    expect(json(join(dir, 'run.json')).status).toBe('stopped');
    expect(csvBytes(dir)).toBeLessThan(total);
    const r = await cli('resume', dir, '--quiet');
    expect(r.code, r.err).toBe(0);
    const run = json(join(dir, 'run.json'));
    expect(run.status).toBe('finished');
    expect(run.counts).toEqual(ref.counts);
    for (const f of readdirSync(join(reference, 'branches'))) {
      const a = readCsv(join(dir, 'branches', f));
      const b = readCsv(join(reference, 'branches', f));
      expect(a.columns).toEqual(b.columns);
      expect(a.rows.length).toBe(b.rows.length);
      a.rows.forEach((row, i) => row.forEach((v, j) => expect(Object.is(v, b.rows[i][j]) || Math.abs(v - b.rows[i][j]) <= 1e-10 * Math.max(1, Math.abs(v)), `${f} row ${i} ${b.columns[j]}`).toBe(true)));
    }
    const pa = json(join(dir, 'points.json')).points as Record<string, any>[];
    const pb = json(join(reference, 'points.json')).points as Record<string, any>[];
    expect(pa.map((p) => [p.kind, p.branch, p.value, p.free, p['new-mode']])).toEqual(pb.map((p) => [p.kind, p.branch, p.value, p.free, p['new-mode']]));
  });
});
