/**
 * Hopf points through the command line: the criticality of a branch's Hopf point in points.json,
 * points.csv and the summary; a Hopf-curve run's files (CSV test-function columns, points.json
 * records, the diagram) from the `new --follow hopf` starter; a Hopf curve started at the
 * Bogdanov–Takens point of a fold-curve run, drawn with that run's fold curves; a batch's plane
 * diagram; a run stopped in the middle and resumed to the same files; bad keys refused.
 */
import { existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { prepareCase } from '../../src/run/case.js';
import { Checkpointer } from '../../src/run/checkpoint.js';
import { runCase } from '../../src/run/run-case.js';
import { readCsv } from '../../src/run/writers.js';
import { cli, json, writerIn } from './processes.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-hopf-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

const write = writerIn(tmp);

/** The gray-scott Hopf starter on a coarse grid. */
async function starter(): Promise<string> {
  const r = await cli('new', 'gray-scott', '--follow', 'hopf');
  expect(r.code, r.err).toBe(0);
  return r.out.replace('intervals: [100]', 'intervals: [10]');
}

describe('Hopf points and curves: files', () => {
  it('a branch through the Brusselator Hopf point: l₁ and the criticality in points.json, points.csv and the summary', async () => {
    const text = `name: bruss-branch
model: brusselator
boundary: neumann
grid: {intervals: [10]}
parameters: {a: 1, b: 1.5, Du: 1, Dv: 1}
continuation: {parameter: b, bounds: [1.5, 2.5], step: {initial: 0.1, max: 0.2}}
stability: {eigenvalues: 4}
`;
    const out = join(tmp, 'bruss-branch');
    const r = await cli('run', write('bruss-branch.yaml', text), '--out', out, '--quiet');
    expect(r.code, r.err).toBe(0);
    expect(r.out).toMatch(/Hopf point at b = 2(\.0*\d*)? \(frequency 1(\.0*\d*)?, period 6\.28\d*, destabilising, supercritical, first Lyapunov coefficient -0\.\d+/);
    const hopf = (json(join(out, 'points.json')).points as Record<string, any>[]).find((p) => p.kind === 'hopf')!;
    expect(hopf.criticality).toBe('supercritical');
    expect(hopf['first-lyapunov-coefficient']).toBeLessThan(0);
    const lines = readFileSync(join(out, 'points.csv'), 'utf8').trim().split('\n');
    expect(lines[0]).toBe('kind,branch,b,located,frequency,period,first-lyapunov-coefficient,criticality,max:u,min:u,l2-norm:u,max:v,min:v,l2-norm:v,solution');
    const row = lines.find((l) => l.startsWith('hopf,'))!.split(',');
    expect(Number(row[2])).toBe(hopf.value);
    expect(Number(row[6])).toBe(hopf['first-lyapunov-coefficient']);
    expect(row[7]).toBe('supercritical');
  });

  it('the gray-scott starter: two Hopf curves, the Bautin point and the Bogdanov–Takens end, with their columns, records and markers', async () => {
    const out = join(tmp, 'gs-hopf');
    const r = await cli('run', write('gs-hopf.yaml', await starter()), '--out', out, '--quiet');
    expect(r.code, r.err).toBe(0);
    expect(r.out).toMatch(/Curve 1 \(Hopf curve, k increasing from the first point\): \d+ points, Bogdanov–Takens point at k = 0\.0625, F = 0\.0625 \(frequency 0, .*\), ended: at the Bogdanov–Takens point/);
    expect(r.out).toMatch(/Curve 2 \(Hopf curve, k decreasing from the first point\): \d+ points, Bautin point at k = 0\.035156\d*, F = 0\.011718\d* \(frequency 0\.0331\d*/);
    expect(r.out).toMatch(/criticality: subcritical for k 0\.05 → 0\.0356\d*; supercritical for k 0\.034\d* → 0\.02 \(the sign of the first Lyapunov coefficient\)/);
    const csv = readCsv(join(out, 'branches', '2.csv'));
    expect(csv.columns).toEqual(['point', 'arclength', 'k', 'F', 'max:u', 'min:u', 'l2-norm:u', 'max:v', 'min:v', 'l2-norm:v', 'newton-iterations', 'residual', 'step-length', 'frequency', 'jacobian-determinant-sign', 'first-lyapunov-coefficient', 'next-pair-real-part']);
    // Gray & Scott 1984: every row on (F + k)² = F√k with ω² = (F + k)(k − F)
    for (const row of csv.rows) {
      expect(Math.abs((row[3] + row[2]) ** 2 - row[3] * Math.sqrt(row[2]))).toBeLessThan(1e-9);
      expect(Math.abs(row[13] ** 2 - (row[3] + row[2]) * (row[2] - row[3]))).toBeLessThan(1e-9);
    }
    const points = json(join(out, 'points.json')).points as Record<string, any>[];
    const bautin = points.find((p) => p.kind === 'bautin')!;
    expect(bautin).toMatchObject({ branch: 2, parameter: 'k', 'free-parameter': 'F', located: true, solution: 'solutions/branch-2-bautin-1.npy' });
    expect(Math.abs(bautin['first-lyapunov-coefficient'])).toBeLessThan(1e-6);
    expect(bautin.frequency).toBeCloseTo(0.0331456, 6);
    expect(bautin.period).toBeCloseTo((2 * Math.PI) / bautin.frequency, 9);
    const end = points.find((p) => p.kind === 'end' && p.branch === 1)!;
    expect(end.reason).toBe('bogdanov-takens');
    const run = json(join(out, 'run.json'));
    expect(run).toMatchObject({ status: 'finished', follow: 'hopf', 'free-parameter': 'F' });
    expect(run.counts).toMatchObject({ bautin: 1, 'bogdanov-takens': 1 });
    expect(run.branches[0]['stop-reason']).toBe('bogdanov-takens');
    const svg = readFileSync(join(out, 'diagram.svg'), 'utf8');
    expect(svg).toContain('data-kind="bautin"');
    expect(svg).toContain('data-kind="bogdanov-takens"');
    expect(svg).toContain('the Hopf curves in the plane of k and F');
    expect(existsSync(join(out, 'plots', 'branch-2-bautin-1.svg'))).toBe(true);
  });

  it('a Hopf curve from the Bogdanov–Takens point of a fold-curve run, drawn with its fold curves; a batch of both gets one plane diagram', async () => {
    const fold = `name: gs-fold
model: gray-scott
boundary: neumann
grid: {intervals: [10]}
initial: {u: 0.1127016653792583, v: 0.4436491673103709}
parameters: {F: 0.05, k: 0.05, Du: 1, Dv: 1}
continuation: {follow: fold, parameter: k, free: F, bounds: [0.03, 0.07], free-bounds: [0, 1], step: {initial: 0.004, max: 0.008}}
`;
    const foldDir = join(tmp, 'chain', 'gs-fold');
    expect((await cli('run', write('gs-fold.yaml', fold), '--out', foldDir, '--quiet')).code).toBe(0);
    const hopf = `name: gs-hopf-bt
model: gray-scott
boundary: neumann
grid: {intervals: [10]}
parameters: {Du: 1, Dv: 1}
start: {run: chain/gs-fold, point: bogdanov-takens}
continuation: {follow: hopf, parameter: k, free: F, bounds: [0.03, 0.07], free-bounds: [0, 1], step: {initial: 0.002, max: 0.005}}
stability: {eigenvalues: 4}
`;
    const hopfDir = join(tmp, 'chain', 'gs-hopf-bt');
    const r = await cli('run', write('gs-hopf-bt.yaml', hopf), '--out', hopfDir, '--quiet');
    expect(r.code, r.err).toBe(0);
    expect(r.out).toMatch(/Curve 1 \(Hopf curve, from the Bogdanov–Takens point, ω growing from 0\): \d+ points, Bautin point at k = 0\.035156/);
    const first = readCsv(join(hopfDir, 'branches', '1.csv')).rows[0];
    // Gray & Scott 1984: k = F = 1/16, ω = 0 at the start
    expect(Math.abs(first[2] - 1 / 16)).toBeLessThan(1e-7);
    expect(first[12]).toBe(0);
    const svg = readFileSync(join(hopfDir, 'diagram.svg'), 'utf8');
    expect(svg).toContain('with the curves of gs-fold, where it started');
    expect(svg).toContain('fold curve 1 of gs-fold');
    expect(svg).toContain('Hopf curve 1');
    // both as a batch into one folder: a plane diagram of both kinds
    const b = await cli('run', join(tmp, 'gs-fold.yaml'), write('gs-hopf-batch.yaml', hopf.replace('chain/gs-fold', 'chain/gs-fold').replace('gs-hopf-bt', 'gs-hopf-batch')), '--out', join(tmp, 'batch'), '--quiet');
    expect(b.code, b.err).toBe(0);
    expect(b.out).toMatch(/The curves of 2 runs in the plane of k and F: .*plane-k-F\.svg/);
    const plane = readFileSync(join(tmp, 'batch', 'plane-k-F.svg'), 'utf8');
    expect(plane).toContain('fold curve 1 of gs-fold');
    expect(plane).toContain('Hopf curve 1 of gs-hopf-batch');
  });

  it('check covers the Hopf system; bad keys are one line', async () => {
    const c = await cli('check', write('gs-hopf-check.yaml', await starter()), '--json');
    expect(c.code, c.err).toBe(0);
    const doc = JSON.parse(c.out);
    expect(doc.curve.kind).toBe('Hopf curve');
    expect(doc.curve['jacobian-error']).toBeLessThan(1e-6);
    const text = await starter();
    const bad: [string, string, RegExp][] = [
      ['eigenvalues on a fold curve', text.replace('follow: hopf', 'follow: fold').replace('stability: {eigenvalues: 6}', 'stability: {eigenvalues: 3}'), /stability\.eigenvalues: 3: fold curves compute no eigenvalues/],
      ['follow misspelt', text.replace('follow: hopf', 'follow: hopff'), /continuation\.follow: 'hopff' is not accepted \(accepted: fold, branch-point, hopf\)/],
    ];
    for (const [what, t, expected] of bad) {
      const r = await cli('run', write(`bad-${what.replace(/ /g, '-')}.yaml`, t), '--out', join(tmp, `bad-${what.replace(/ /g, '-')}`), '--quiet');
      expect(r.code, what).toBe(2);
      expect(r.err.trim().split('\n'), what).toHaveLength(1);
      expect(r.err, what).toMatch(expected);
    }
  });
});

describe('Hopf curves: stop and resume', () => {
  it('a run stopped in the middle (checkpoints at sync points) resumes to the files of the uninterrupted run', async () => {
    const file = write('gs-hopf-resume.yaml', (await starter()).replace(/every-points: \d+/, 'every-points: 3').replace(/every-seconds: \d+/, 'every-seconds: 0.01'));
    const reference = join(tmp, 'resume-reference');
    expect((await cli('run', file, '--out', reference, '--quiet')).code).toBe(0);
    const prepared = await prepareCase(file);
    const dir = join(tmp, 'resume-stopped');
    const controller = new AbortController();
    const checkpointer = new Checkpointer(prepared.case.checkpoint);
    const stopped = await runCase(prepared, { outDir: dir, signal: controller.signal, checkpoint: checkpointer.hook, progress: (p) => p.points === 30 && controller.abort() });
    expect(stopped.status).toBe('stopped');
    const r = await cli('resume', dir, '--quiet');
    expect(r.code, r.err).toBe(0);
    for (const f of ['1.csv', '2.csv']) {
      const a = readCsv(join(dir, 'branches', f));
      const b = readCsv(join(reference, 'branches', f));
      expect(a.rows.length).toBe(b.rows.length);
      a.rows.forEach((row, i) => row.forEach((v, j) => expect(Object.is(v, b.rows[i][j]), `${f} row ${i} ${b.columns[j]}`).toBe(true)));
    }
    const pa = json(join(dir, 'points.json')).points as Record<string, any>[];
    const pb = json(join(reference, 'points.json')).points as Record<string, any>[];
    expect(pa.map((p) => [p.kind, p.branch, p.value, p.free, p['first-lyapunov-coefficient']])).toEqual(pb.map((p) => [p.kind, p.branch, p.value, p.free, p['first-lyapunov-coefficient']]));
    expect(readFileSync(join(dir, 'points.csv'), 'utf8')).toBe(readFileSync(join(reference, 'points.csv'), 'utf8'));
  });
});
