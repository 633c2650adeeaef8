/** runCase on a scripted engine: files, checkpoint consistency, stop requests, failures, folder policy, resume. */
import { existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { type PreparedCase, prepareCase, prepareCaseObject } from '../../src/run/case.js';
import { InputError } from '../../src/run/errors.js';
import type { RunLedger } from '../../src/run/run-directory.js';
import { runCase } from '../../src/run/run-case.js';
import { formatSummary } from '../../src/run/summary.js';
import { readCsv, readNpy } from '../../src/run/writers.js';
import { type FakeEngine, defaultScript, fakeEngine } from './fake-engine.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-runcase-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));
let counter = 0;
const fresh = (): string => join(tmp, `run-${++counter}`);

let prepared: PreparedCase;
beforeAll(async () => {
  prepared = await prepareCase(resolve('test/fixtures/run/bratu-1d.yaml'));
});

const json = (file: string): Record<string, any> => JSON.parse(readFileSync(file, 'utf8'));

describe('a run on the scripted engine', () => {
  it('writes run.json, one CSV per branch, points.json and the special solutions', async () => {
    const out = fresh();
    const created: FakeEngine[] = [];
    const result = await runCase(prepared, { outDir: out, engine: fakeEngine(defaultScript, created) });
    expect(result.status).toBe('finished');
    expect(created[0].disposed).toBe(true);

    const run = json(join(out, 'run.json'));
    expect(run.status).toBe('finished');
    expect(run.format).toBe('branchline run');
    expect(run.software.version).toBe(JSON.parse(readFileSync('package.json', 'utf8')).version);
    expect(Date.parse(run.ended)).toBeGreaterThanOrEqual(Date.parse(run.started));
    expect(run.problem.unknowns).toBe(31);
    expect(run.problem.axes[0]).toEqual({ name: 'x', intervals: 32, length: 1, h: 1 / 32, nodes: 33 });
    expect(run.counts).toEqual({ branches: 2, points: 14, folds: 1, 'branch-points': 1, hopf: 0, ends: 2, solutions: 4 });
    expect(run.branches.map((b: any) => [b.id, b.points, b['stop-reason']])).toEqual([
      [1, 10, 'parameter-bound'],
      [2, 4, 'point-limit'],
    ]);
    expect(run.branches[1].origin).toEqual({ kind: 'branch-point', branch: 1, value: 0.2 + 0.3 * 6, direction: 'increase' });
    expect(run.caution).toMatch(/licensed engineer/);
    expect(run.case.continuation.bounds).toEqual([0, 4]);

    const expectedColumns = ['point', 'arclength', 'lambda', 'max', 'min', 'l2-norm', 'centre', 'newton-iterations', 'residual', 'step-length'];
    const b1 = readCsv(join(out, 'branches/1.csv'));
    expect(b1.columns).toEqual(expectedColumns);
    expect(b1.rows.length).toBe(10);
    expect(b1.rows.map((r) => r[0])).toEqual([0, 1, 2, 3, 4, 5, 6, 7, 8, 9]);
    expect(b1.rows[3][2]).toBe(0.2 + 0.3 * 3); // read back to the same double
    expect(readCsv(join(out, 'branches/2.csv')).rows.length).toBe(4);

    const points = json(join(out, 'points.json'));
    expect(points.parameter).toBe('lambda');
    expect(points.points.map((p: any) => [p.kind, p.branch])).toEqual([
      ['fold', 1],
      ['branch-point', 1],
      ['end', 1],
      ['end', 2],
    ]);
    const fold = points.points[0];
    expect(fold).toMatchObject({ parameter: 'lambda', value: 0.2 + 0.3 * 4, located: true, turn: 'maximum', solution: 'solutions/branch-1-fold-1.npy' });
    expect(points.points[1]).toMatchObject({ type: 'pitchfork', criticality: 'supercritical', 'new-branches': [2], 'new-branch-direction': 'increase', multiplicity: 1 });
    expect(points.points[2].reason).toBe('parameter-bound');

    // the node array: shape (fields, nx), Dirichlet ends filled in, interior = the state
    const npy = readNpy(join(out, fold.solution));
    expect(npy.shape).toEqual([1, 33]);
    expect(npy.data[0]).toBe(0);
    expect(npy.data[32]).toBe(0);
    expect(Math.max(...npy.data)).toBe(fold.monitors.max);
    expect(readdirSync(join(out, 'solutions')).sort()).toEqual(['branch-1-branch-point-1.npy', 'branch-1-end-1.npy', 'branch-1-fold-1.npy', 'branch-2-end-1.npy']);
  });

  it('summarises by branch, in words', async () => {
    const out = fresh();
    const result = await runCase(prepared, { outDir: out, engine: fakeEngine() });
    const text = formatSummary(result, prepared, tmp);
    const lines = text.trimEnd().split('\n');
    expect(lines[0]).toBe('Case slab-1d: Bratu–Gelfand problem Δu + λ e^u = 0 with u = 0 on the walls');
    expect(lines).toContain(
      'Branch 1 (from the start, lambda increasing): 10 points, fold at lambda = 1.4 (max = 0.5), ' +
        'branch point at lambda = 2 (pitchfork, supercritical, followed as branch 2, max = 0.7), ended: reached lambda = 2.9',
    );
    expect(lines).toContain('Branch 2 (from the branch point at lambda = 2 on branch 1, lambda increasing): 4 points, no fold or branch point, ended: reached the point limit (200)');
    expect(text).toMatch(new RegExp(`Files in ${out.slice(tmp.length + 1)}: run.json, points.json, points.csv, branches/ \\(2 files\\), solutions/ \\(4 .npy files\\)`));
    expect(lines[lines.length - 1]).toMatch(/^Caution: Model results for ignition/);
  });

  it('records Hopf points with frequency, period and crossing, and names them in the summary', async () => {
    const out = fresh();
    const result = await runCase(prepared, { outDir: out, engine: fakeEngine({ ...defaultScript, hopf: true, points2: 0 }) });
    const hopf = json(join(out, 'points.json')).points.find((p: any) => p.kind === 'hopf');
    expect(hopf).toMatchObject({ branch: 1, value: 0.2 + 0.3 * 8, located: true, frequency: 2, period: Math.PI, crossing: 'destabilising', solution: 'solutions/branch-1-hopf-1.npy' });
    expect(json(join(out, 'run.json')).counts.hopf).toBe(1);
    expect(formatSummary(result, prepared)).toMatch(/, Hopf point at lambda = 2\.6 \(frequency 2, period 3\.1416, destabilising, max = 0\.9\),/);
  });

  it('writes each row before the checkpoint hook runs: recorded lengths are the file sizes', async () => {
    const out = fresh();
    let calls = 0;
    await runCase(prepared, {
      outDir: out,
      engine: fakeEngine(),
      checkpoint: (c) => {
        calls++;
        expect(c.reason).toBe('point');
        expect(c.canSnapshot).toBe(true);
        for (const [file, len] of Object.entries(c.ledger.csvLengths)) expect(statSync(join(out, file)).size).toBe(len);
        const rows = c.ledger.branches.reduce((a, b) => a + b.points, 0);
        expect(rows).toBe(c.ledger.points);
        expect(c.snapshot()).toEqual({ next: expect.any(Number) });
      },
    });
    expect(calls).toBe(14);
  });

  it('writes a solution per point with solutions: all, none with solutions: none', async () => {
    const all = await prepareCaseObject({ ...baseCase(), output: { solutions: 'all' } }, { label: 'all', baseDir: tmp });
    const outAll = fresh();
    await runCase(all, { outDir: outAll, engine: fakeEngine() });
    expect(readdirSync(join(outAll, 'solutions')).length).toBe(14 + 4);
    const none = await prepareCaseObject({ ...baseCase(), output: { solutions: 'none' } }, { label: 'none', baseDir: tmp });
    const outNone = fresh();
    await runCase(none, { outDir: outNone, engine: fakeEngine() });
    expect(existsSync(join(outNone, 'solutions'))).toBe(false);
    expect(json(join(outNone, 'points.json')).points.every((p: any) => p.solution === undefined)).toBe(true);
  });

  it('an unexplained change of the unstable count: named in its CSV cell, in run.json and in the summary', async () => {
    const withStability = await prepareCaseObject(
      { model: 'bratu', grid: { intervals: [32] }, parameters: { lambda: 0.2 }, continuation: { parameter: 'lambda', bounds: [0, 4] }, stability: { eigenvalues: 2 } },
      { label: 'slab', baseDir: tmp },
    );
    const out = fresh();
    const result = await runCase(withStability, { outDir: out, engine: fakeEngine({ ...defaultScript, stability: true, unexplained: true }) });
    const csv = readCsv(join(out, 'branches/1.csv'), ['unexplained-change']);
    const text = readFileSync(join(out, 'branches/1.csv'), 'utf8').split('\n');
    const cell = csv.columns.indexOf('unexplained-change');
    expect(cell).toBe(csv.columns.length - 1);
    expect(text[4].endsWith(',the unstable count changed from 0 to 1')).toBe(true); // point 3
    expect(text.filter((l) => l.includes('unstable count changed'))).toHaveLength(1);
    expect(json(join(out, 'run.json')).warnings).toEqual([expect.stringMatching(/the unstable count changed from 0 to 1 between lambda/)]);
    expect(formatSummary(result, withStability)).toMatch(/1 warning \(listed in run\.json\):\n {2}branch 1: the unstable count changed from 0 to 1/);
  });

  it('adds the stability columns when eigenvalues are asked for, and writes extra unknowns by name', async () => {
    // Brusselator on a periodic line with a phase condition: one extra unknown, drift-x
    const c = await prepareCaseObject(
      {
        model: 'brusselator',
        boundary: 'periodic',
        'phase-condition': true,
        grid: { intervals: [16], length: [10] },
        continuation: { parameter: 'b', bounds: [0, 10] },
        stability: { eigenvalues: 4 },
      },
      { label: 'bz', baseDir: tmp },
    );
    const out = fresh();
    await runCase(c, { outDir: out, engine: fakeEngine({ ...defaultScript, stability: true }) });
    const csv = readFileSync(join(out, 'branches/1.csv'), 'utf8').split('\n');
    const eigen = [1, 2, 3, 4].flatMap((k) => [`eigenvalue-${k}-real`, `eigenvalue-${k}-imag`]).join(',');
    expect(csv[0]).toBe(`point,arclength,b,max:u,min:u,l2-norm:u,max:v,min:v,l2-norm:v,drift-x,newton-iterations,residual,step-length,stable,unstable-count,leading-real,leading-imag,search-complete,${eigen},unexplained-change`);
    // (the scripted engine gives no eigenvalue list: those cells stay empty)
    expect(csv[1].endsWith(',true,0,-1,0,true,,,,,,,,,')).toBe(true);
    expect(csv[2].endsWith(',,1,-0.9,0,true,,,,,,,,,')).toBe(true); // stable not certified: empty cell
    const points = json(join(out, 'points.json')).points;
    expect(points[0]['extra-unknowns']).toEqual({ 'drift-x': 0.25 * 0.5 });
    expect(readNpy(join(out, points[0].solution)).shape).toEqual([2, 16]);
  });
});

describe('the summary says where each branch is stable', () => {
  it('1D Bratu: stable up to the fold, one unstable eigenvalue after it', async () => {
    // the lower branch of Bratu's problem is stable and the upper one has one positive eigenvalue (from memory)
    const c = await prepareCaseObject({ ...baseCase(), stability: { eigenvalues: 3 }, continuation: { parameter: 'lambda', bounds: [0, 4], 'stop-when': [{ monitor: 'max', above: 3 }] } }, { label: 'slab', baseDir: tmp });
    const result = await runCase(c, { outDir: fresh() });
    const text = formatSummary(result, c);
    const line = text.split('\n').find((l) => l.startsWith('  stability:'));
    expect(line).toMatch(/^  stability: stable for lambda 0\.2 → 3\.5\d*; 1 unstable eigenvalue for lambda 3\.5\d* → /);
    const stretches = result.ledger.branches[0].stability!;
    expect(stretches.map((s) => [s.stable, s.unstable])).toEqual([
      [true, 0],
      [false, 1],
    ]);
  });
});

function baseCase(): Record<string, unknown> {
  return { name: 'slab-1d', model: 'bratu', grid: { intervals: [32] }, parameters: { lambda: 0.2 }, continuation: { parameter: 'lambda', bounds: [0, 4], 'max-points': 200 } };
}

describe('stops and failures keep run.json true', () => {
  it('a stop request finishes the current event, closes the files and marks the run stopped', async () => {
    const out = fresh();
    const controller = new AbortController();
    const stops: string[] = [];
    const result = await runCase(prepared, {
      outDir: out,
      engine: fakeEngine(),
      signal: controller.signal,
      progress: (p) => {
        if (p.points === 3) controller.abort();
      },
      checkpoint: (c) => stops.push(c.reason),
    });
    expect(result.status).toBe('stopped');
    expect(stops[stops.length - 1]).toBe('stop');
    const run = json(join(out, 'run.json'));
    expect(run.status).toBe('stopped');
    expect(run.branches[0]['stop-reason']).toBe('stopped');
    expect(readCsv(join(out, 'branches/1.csv')).rows.length).toBe(3);
    expect(formatSummary(result, prepared)).toMatch(/Stopped on request after/);
  });

  it('an engine error marks the run failed with the reason; what was written stays', async () => {
    const out = fresh();
    const logs: string[] = [];
    const created: FakeEngine[] = [];
    const result = await runCase(prepared, { outDir: out, engine: fakeEngine({ ...defaultScript, throwAt: 5 }, created), log: (_l, m) => logs.push(m) });
    expect(result.status).toBe('failed');
    expect(result.failure).toBe('the fake engine failed on purpose');
    expect(created[0].disposed).toBe(true);
    const run = json(join(out, 'run.json'));
    expect(run.status).toBe('failed');
    expect(run.failure).toBe('the fake engine failed on purpose');
    expect(readCsv(join(out, 'branches/1.csv')).rows.length).toBe(4);
    expect(logs.some((l) => l.includes('run failed: the fake engine failed on purpose'))).toBe(true);
  });

  it('a first branch that ends without convergence marks the run failed', async () => {
    const out = fresh();
    const result = await runCase(prepared, { outDir: out, engine: fakeEngine({ ...defaultScript, reason1: 'minimum-step', points2: 0 }) });
    expect(result.status).toBe('failed');
    expect(result.failure).toBe('branch 1 ended: branch 1: minimum-step');
    expect(json(join(out, 'run.json')).status).toBe('failed');
  });
});

describe('the output folder', () => {
  it('refuses a non-empty folder without --force and leaves it untouched', async () => {
    const out = fresh();
    mkdirSync(out);
    writeFileSync(join(out, 'notes.txt'), 'mine');
    await expect(runCase(prepared, { outDir: out, engine: fakeEngine() })).rejects.toThrow(InputError);
    await expect(runCase(prepared, { outDir: out, engine: fakeEngine(), force: true })).rejects.toThrow(/holds no earlier branchline run/);
    expect(readdirSync(out)).toEqual(['notes.txt']);
  });

  it('refuses a file in place of the folder', async () => {
    const out = fresh();
    writeFileSync(out, 'x');
    await expect(runCase(prepared, { outDir: out, engine: fakeEngine() })).rejects.toThrow(/exists and is a file/);
  });

  it('with --force replaces an earlier run and keeps the files the user added', async () => {
    const out = fresh();
    await runCase(prepared, { outDir: out, engine: fakeEngine() });
    writeFileSync(join(out, 'notes.txt'), 'mine');
    await expect(runCase(prepared, { outDir: out, engine: fakeEngine() })).rejects.toThrow(/is not empty \(it holds an earlier run\)/);
    const again = await runCase(prepared, { outDir: out, engine: fakeEngine({ ...defaultScript, points2: 0 }), force: true });
    expect(again.status).toBe('finished');
    expect(readdirSync(out).sort()).toEqual(['branches', 'diagram.svg', 'notes.txt', 'plots', 'points.csv', 'points.json', 'run.json', 'solutions']);
    expect(readdirSync(join(out, 'branches'))).toEqual(['1.csv']);
    expect(readdirSync(join(out, 'solutions')).sort()).toEqual(['branch-1-end-1.npy', 'branch-1-fold-1.npy']);
  });
});

describe('resume from a checkpoint (the plumbing the resume command uses)', () => {
  it('truncates the CSVs to the recorded lengths and ends with the same files as an uninterrupted run', async () => {
    const whole = fresh();
    await runCase(prepared, { outDir: whole, engine: fakeEngine() });

    for (const at of [2, 9, 12]) {
      // a run that records a checkpoint at point `at` and then goes on (a crash would leave
      // rows after the checkpoint in the files: here the whole run's rows are there)
      const out = fresh();
      let saved: { ledger: RunLedger; engineState: unknown } | undefined;
      const first = await runCase(prepared, {
        outDir: out,
        engine: fakeEngine(),
        checkpoint: (c) => {
          if (c.reason === 'point' && c.ledger.points === at) saved = { ledger: structuredClone(c.ledger), engineState: c.snapshot() };
        },
      });
      expect(saved).toBeDefined();
      const resumed = await runCase(prepared, {
        outDir: out,
        engine: fakeEngine(),
        resume: { ...saved!, started: String(first.record.started) },
      });
      expect(resumed.status).toBe('finished');
      for (const f of ['branches/1.csv', 'branches/2.csv', 'points.json']) {
        expect(readFileSync(join(out, f), 'utf8'), `${f} after resuming at point ${at}`).toBe(readFileSync(join(whole, f), 'utf8'));
      }
      const run = json(join(out, 'run.json'));
      expect(run.counts).toEqual(json(join(whole, 'run.json')).counts);
      expect(run.started).toBe(first.record.started);
    }
  });
});
