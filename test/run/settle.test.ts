/**
 * `branchline settle` end to end: the run folder of a time integration (run.json with the
 * outcome, monitors.csv, snapshots, the final state re-checked with an independent residual,
 * the pictures), a continuation started from its final state, stopping and resuming to the same
 * files bit for bit (in process, and with SIGINT to the built program), exit codes and one-line
 * refusals of bad settle cases.
 */
import { spawn } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../src/cli/main.js';
import { prepareSettleCase } from '../../src/run/settle-case.js';
import { prepareSettleResume, settleCase } from '../../src/run/settle.js';
import { settleView, settledFraction } from '../../src/run/settle-progress.js';
import { readCsv, readNpy } from '../../src/run/writers.js';
import { parseXml, findAll } from '../plot/xml-check.js';
import { ensureBuilt } from '../cli/built.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-settle-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));
const json = (file: string): Record<string, any> => JSON.parse(readFileSync(file, 'utf8'));

async function cli(...args: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = '';
  let err = '';
  const code = await main(['node', 'branchline', ...args], { out: (s) => (out += s), err: (s) => (err += s) });
  return { code, out, err };
}

let counter = 0;
function caseFile(text: string): string {
  const file = join(tmp, `case-${++counter}.yaml`);
  writeFileSync(file, text);
  return file;
}

/** A pulse of the autocatalyst in a no-flux strip (Gray–Scott, 1D): settles within a few hundred steps. */
const pulse = (extra = '') => `
name: pulse
model: gray-scott
boundary: neumann
grid: {intervals: [60], length: [0.3]}
parameters: {F: 0.04, k: 0.064}
initial:
  u: 1 - 0.5*exp(-(x-0.15)^2/0.0025)
  v: 0.25*exp(-(x-0.15)^2/0.0025)
  noise: {amplitude: 0.001, seed: 1}
time: {end: 50000}
stability: {eigenvalues: 3}
checkpoint: {every-points: 1}
${extra}`;

describe('branchline settle (in process)', () => {
  const out = join(tmp, 'pulse');
  let result: { code: number; out: string; err: string };
  beforeAll(async () => {
    result = await cli('settle', caseFile(pulse()), '--out', out);
  });

  it('exits 0 with a summary that names the steady state, its stability and how to trace it', () => {
    expect(result.code, result.err).toBe(0);
    expect(result.out).toMatch(/^Case pulse: Gray–Scott/);
    expect(result.out).toMatch(/\nSteady state reached at t = [\d.]+ \(residual [\d.e-]+, polished by Newton to [\d.e-]+\)\.\n/);
    expect(result.out).toMatch(/The steady state is stable \(rightmost eigenvalue -/);
    expect(result.out).toMatch(/start: \{run: .*pulse, point: final\}/);
  });

  it('writes run.json with the outcome, the final state, the seed, the snapshots and the counts', () => {
    const run = json(join(out, 'run.json'));
    expect(run).toMatchObject({ format: 'branchline run', kind: 'settle', status: 'finished', outcome: { kind: 'steady' }, final: { solution: 'solutions/final.npy' } });
    expect(run['initial-state']['noise-seed']).toBe(1);
    expect(run.final.stability.stable).toBe(true);
    expect(run.checkpoint).toBeUndefined();
    expect(existsSync(join(out, 'checkpoint.bin'))).toBe(false);
    expect(run.snapshots[0]).toEqual({ time: 0, file: 'snapshots/time-0.npy' });
    for (const s of run.snapshots) expect(existsSync(join(out, s.file))).toBe(true);
    expect(readdirSync(join(out, 'snapshots'))).toHaveLength(run.snapshots.length);
    expect(run.counts.steps).toBeGreaterThan(10);
  });

  it('writes one monitors.csv row per step and a final state whose residual is at round-off', async () => {
    const run = json(join(out, 'run.json'));
    const csv = readCsv(join(out, 'monitors.csv'));
    expect(csv.columns).toEqual(['step', 'time', 'time-step', 'max:u', 'min:u', 'l2-norm:u', 'max:v', 'min:v', 'l2-norm:v', 'residual', 'newton-iterations', 'factorised']);
    expect(csv.rows).toHaveLength(run.counts.steps + 1);
    expect(csv.rows.map((r) => r[0])).toEqual(csv.rows.map((_r, i) => i));
    // the saved final state, read back and checked with the model's residual
    const prepared = await prepareSettleCase(caseFile(pulse()));
    const { shape, data } = readNpy(join(out, 'solutions/final.npy'));
    const u = prepared.problem.fromNodeArray(shape, data, prepared.params);
    const f = new Float64Array(u.length);
    prepared.problem.residual(u, prepared.params, f);
    expect(Math.max(...f.map(Math.abs))).toBeLessThan(1e-10);
    expect(run.final.monitors['max:v']).toBeCloseTo(Math.max(...data.subarray(61)), 12);
  });

  it('draws the monitors against time and the initial and final states', () => {
    const root = parseXml(readFileSync(join(out, 'monitors.svg'), 'utf8'));
    expect(findAll(root, 'g', { 'data-role': 'panel' }).map((g) => g.attrs['data-panel'])).toEqual(['u', 'v', 'scaled residual']);
    for (const f of ['plots/initial.svg', 'plots/final.svg']) expect(readFileSync(join(out, f), 'utf8')).toMatch(/data-field="v"/);
  });

  it('is redrawn by plot, and its case is checked by check', async () => {
    const r = await cli('plot', out);
    expect(r.code, r.err).toBe(0);
    expect(r.out).toMatch(/Drew 3 pictures in .* \(a time integration\): monitors\.svg, plots\/ \(2 files\)/);
    const c = await cli('check', caseFile(pulse()));
    expect(c.code, c.out + c.err).toBe(0);
    expect(c.out).toMatch(/The Jacobian and the parameter derivatives agree with finite differences/);
  });

  it('hands its final state to a continuation: start: {run: DIR, point: final}', async () => {
    const trace = caseFile(`
name: trace
model: gray-scott
boundary: neumann
grid: {intervals: [60], length: [0.3]}
start: {run: ${out}, point: final}
continuation: {parameter: F, bounds: [0.035, 0.045], max-points: 3}
`);
    const r = await cli('run', trace, '--out', join(tmp, 'trace'));
    expect(r.code, r.err).toBe(0);
    const first = readCsv(join(tmp, 'trace', 'branches/1.csv'));
    expect(first.rows[0][first.columns.indexOf('F')]).toBe(0.04);
    expect(first.rows[0][first.columns.indexOf('newton-iterations')]).toBe(0);
    // a continuation run has no final state to start from
    const bad = await cli('run', caseFile(`
model: gray-scott
boundary: neumann
grid: {intervals: [60], length: [0.3]}
start: {run: ${join(tmp, 'trace')}, point: final}
continuation: {parameter: F, bounds: [0.035, 0.045]}
`));
    expect(bad.code).toBe(2);
    expect(bad.err).toMatch(/start\.run: run .* is a continuation run; final names the last state of a time integration/);
  });
});

describe('stopping and resuming a time integration', () => {
  it('a stopped integration resumes to the same files as an uninterrupted one', async () => {
    const whole = join(tmp, 'whole');
    const parts = join(tmp, 'parts');
    const prepared = await prepareSettleCase(caseFile(pulse()));
    await settleCase(prepared, { outDir: whole });
    const controller = new AbortController();
    const stopped = await settleCase(prepared, { outDir: parts, signal: controller.signal, progress: (p) => p.step === 70 && controller.abort() });
    expect(stopped.status).toBe('stopped');
    expect(json(join(parts, 'run.json')).status).toBe('stopped');
    // resuming takes the folder's lock first; the caller hands it on and releases it
    const { prepared: again, outDir, resume, lock } = await prepareSettleResume(parts);
    // the checkpoint is the last sync point before the stop
    expect(resume.checkpoint.ledger.points).toBe(50);
    const done = await settleCase(again, { outDir, resume, lock });
    lock.release();
    expect(done.status).toBe('finished');
    expect(readFileSync(join(parts, 'monitors.csv'), 'utf8')).toBe(readFileSync(join(whole, 'monitors.csv'), 'utf8'));
    expect(readFileSync(join(parts, 'solutions/final.npy'))).toEqual(readFileSync(join(whole, 'solutions/final.npy')));
    expect(readdirSync(join(parts, 'snapshots')).sort()).toEqual(readdirSync(join(whole, 'snapshots')).sort());
    expect(json(join(parts, 'run.json')).resumed).toHaveLength(1);
    // a finished integration has nothing to resume
    const r = await cli('resume', parts);
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/the run finished .*nothing to resume/);
  });

  it('SIGINT to the program stops it with a checkpoint (exit 1), and resume finishes it (exit 0)', async () => {
    ensureBuilt();
    const file = caseFile(pulse().replace('end: 50000', 'end: 50000, max-step: 5'));
    const dir = join(tmp, 'signalled');
    const child = spawn(process.execPath, [resolve('bin/branchline.js'), 'settle', file, '--out', dir], { stdio: ['ignore', 'pipe', 'pipe'] });
    let err = '';
    child.stderr.on('data', (d) => (err += String(d)));
    // wait for the first checkpoint, then interrupt
    for (let i = 0; i < 600 && !existsSync(join(dir, 'checkpoint.bin')); i++) await new Promise((r) => setTimeout(r, 100));
    child.kill('SIGINT');
    const code = await new Promise<number | null>((r) => child.on('exit', r));
    expect(code, err).toBe(1);
    expect(json(join(dir, 'run.json')).status).toBe('stopped');
    const resumed = await cli('resume', dir, '--quiet');
    expect(resumed.code, resumed.err).toBe(0);
    expect(json(join(dir, 'run.json'))).toMatchObject({ status: 'finished', outcome: { kind: 'steady' } });
  }, 120_000);
});

describe('bad settle cases', () => {
  it.each([
    ['no time section', pulse().replace('time: {end: 50000}', ''), /: time: is missing \(accepted: a map with keys end, /],
    ['a negative end', pulse().replace('end: 50000', 'end: -1'), /: time\.end: -1 is not accepted \(accepted: a positive number\)/],
    ['an unknown time key', pulse().replace('end: 50000', 'end: 5, stop: 3'), /: time: unknown key 'stop' \(accepted: end, max-steps/],
    ['a phase condition (index 2)', pulse().replace('boundary: neumann', 'boundary: periodic\nphase-condition: true'), /: phase-condition: the algebraic unknowns drift-x \(zero mass\) do not enter their own equations/],
    ['a bad initial expression', pulse().replace('v: 0.25*exp', 'v: 0.25*exq'), /: initial\.v: .*exq/],
  ])('%s: exit 2, one line, nothing written', async (_what, text, pattern) => {
    const dir = join(tmp, `bad-${++counter}`);
    const r = await cli('settle', caseFile(text), '--out', dir);
    expect(r.code).toBe(2);
    expect(r.err).toMatch(pattern);
    expect(r.err.trim().split('\n')).toHaveLength(1);
    expect(existsSync(dir)).toBe(false);
  });

  it('a case for run without continuation says so; one for settle may hold both', async () => {
    const r = await cli('run', caseFile(pulse()), '--out', join(tmp, 'no-continuation'));
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/: continuation: is missing .*a case with time: only is for `branchline settle`/);
  });
});

describe('the progress of an integration', () => {
  it('fills the bar by the residual’s way down to the tolerance (log scale) or the time, whichever is further, and prints plain lines off a terminal', () => {
    const p = { step: 10, time: 5, end: 100, stepSize: 0.5, residual: 1e-4, steadyTolerance: 1e-6, maxSteps: 1000 };
    // from 1e-2 to 1e-6: 1e-4 is half way on a log scale; the time is 5% of the way
    expect(settledFraction(p, 1e-2)).toBeCloseTo(0.5, 12);
    expect(settledFraction({ ...p, time: 80 }, 1e-2)).toBeCloseTo(0.8, 12);
    let text = '';
    let now = 0;
    const view = settleView({ tty: false, quiet: false, write: (s) => (text += s), intervalSeconds: 10, now: () => now });
    view.progress(p);
    now = 11_000;
    view.progress({ ...p, step: 20, time: 9 });
    view.log(undefined, 'info', 'a line');
    view.close();
    expect(text).toMatch(/^branchline: step 20, t = 9 of 100, step size 0\.5, residual 1\.0e-4 \(steady below 1e-6\), [\d.]+ steps\/s\nbranchline: a line\n$/);
  });
});

