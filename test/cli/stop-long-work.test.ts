/**
 * Stopping during long numerical work (real processes, real signals): the numerics run in a
 * worker thread and the main thread answers SIGTERM/SIGINT at once; a stop request abandons the
 * step in progress at its next factorisation, the run is marked stopped at its last finished
 * step, and resuming it ends with the same files as a run never interrupted. The model here is
 * the sine code model with a Jacobian that takes 0.25 s (standing in for a factorisation of a
 * large 3D grid) and logs every call, so that "mid-step" is a count, not a time.
 */
import { type ChildProcess, spawn } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ensureBuilt } from './built.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-stop-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));
beforeAll(() => ensureBuilt(), 60_000);
const bin = resolve('bin/branchline.js');

const model = join(tmp, 'slow-model.mjs');
writeFileSync(
  model,
  `import { appendFileSync, existsSync, readFileSync } from 'node:fs';
import sine from ${JSON.stringify(resolve('test/fixtures/code-model.mjs'))};
const pause = new Int32Array(new SharedArrayBuffer(4));
// every Jacobian call: one log line "call rows" (rows: points written so far), then 0.25 s of "work"
export default function (options) {
  const p = sine(options);
  const log = process.env.SLOW_MODEL_LOG;
  const csv = process.env.SLOW_MODEL_CSV;
  let calls = 0;
  return {
    ...p,
    jacobian(u, q, values) {
      calls++;
      const rows = csv && existsSync(csv) ? readFileSync(csv, 'utf8').trim().split('\\n').length - 1 : 0;
      if (log) appendFileSync(log, calls + ' ' + rows + '\\n');
      Atomics.wait(pause, 0, 0, 250);
      return p.jacobian(u, q, values);
    },
  };
}
`,
);
const caseFile = join(tmp, 'slow.yaml');
writeFileSync(
  caseFile,
  'name: slow\nmodel: ./slow-model.mjs\ngrid: {intervals: [24]}\ncontinuation: {parameter: lambda, bounds: [0, 30], max-points: 4, step: {initial: 0.5}}\nstability: {eigenvalues: 2}\ncheckpoint: {every-points: 1}\n',
);

interface Ended {
  code: number | null;
  signal: NodeJS.Signals | null;
  err: string;
}

function start(args: string[], log: string, out: string): { child: ChildProcess; ended: Promise<Ended>; stderr: () => string } {
  const child = spawn(process.execPath, [bin, ...args], { cwd: tmp, stdio: ['ignore', 'pipe', 'pipe'], env: { ...process.env, SLOW_MODEL_LOG: log, SLOW_MODEL_CSV: join(out, 'branches/1.csv') } });
  let err = '';
  child.stdout!.resume();
  child.stderr!.on('data', (d: Buffer) => (err += d.toString()));
  const ended = new Promise<Ended>((done) => child.on('exit', (code, signal) => done({ code, signal, err })));
  return { child, ended, stderr: () => err };
}

const sleep = (ms: number): Promise<void> => new Promise((r) => setTimeout(r, ms));
const calls = (log: string): { call: number; rows: number }[] =>
  existsSync(log)
    ? readFileSync(log, 'utf8')
        .trim()
        .split('\n')
        .filter(Boolean)
        .map((l) => {
          const [call, rows] = l.split(' ').map(Number);
          return { call, rows };
        })
    : [];

/** Wait until the model has been called `n` times (the n-th call is then in progress). */
async function untilCall(log: string, n: number, p: { ended: Promise<Ended> }): Promise<void> {
  let done = false;
  void p.ended.then(() => (done = true));
  while (!done && calls(log).length < n) await sleep(20);
  expect(done, 'the run ended before the call to stop at').toBe(false);
}

const json = (file: string): Record<string, any> => JSON.parse(readFileSync(file, 'utf8'));

describe('a stop request during long numerical work', () => {
  const reference = join(tmp, 'reference');
  const refLog = join(tmp, 'reference.log');
  let firstPointCalls = 0;

  beforeAll(async () => {
    const r = await start(['run', caseFile, '--out', reference, '--quiet'], refLog, reference).ended;
    expect(r.code, r.err).toBe(0);
    // Jacobian calls made before the first point was written (the start point's Newton, tangent, eigenvalues)
    firstPointCalls = calls(refLog).findIndex((c) => c.rows >= 1);
    expect(firstPointCalls).toBeGreaterThan(3);
  }, 120_000);

  it('SIGTERM in the middle of the first step: answered at once, the step abandoned at its next factorisation, status stopped', async () => {
    const out = join(tmp, 'stopped');
    const log = join(tmp, 'stopped.log');
    const p = start(['run', caseFile, '--out', out], log, out);
    await untilCall(log, 2, p);
    p.child.kill('SIGTERM');
    const r = await p.ended;
    expect(r.code, r.err).toBe(1);
    expect(r.err).toMatch(/SIGTERM: finishing the current step, writing a checkpoint and stopping/);
    // the Jacobian in progress was finished, its factorisation never started
    expect(calls(log).length).toBeLessThanOrEqual(3);
    expect(calls(log).length).toBeLessThan(firstPointCalls);
    const run = json(join(out, 'run.json'));
    expect(run.status).toBe('stopped');
    expect(run.counts.points).toBe(0);

    // (a run stopped before its first point has no checkpoint to resume from; the next test resumes one)
  }, 120_000);

  it('SIGINT after the first points: stopped mid-step, resumed to byte-identical files; a second signal leaves at once', async () => {
    const out = join(tmp, 'later');
    const log = join(tmp, 'later.log');
    const p = start(['run', caseFile, '--out', out], log, out);
    // a call made after the first point was written (a checkpoint exists), in the middle of a step
    const target = firstPointCalls + 2;
    await untilCall(log, target, p);
    p.child.kill('SIGINT');
    const r = await p.ended;
    expect(r.code, r.err).toBe(1);
    expect(calls(log).length).toBeLessThanOrEqual(target + 1);
    expect(json(join(out, 'run.json')).status).toBe('stopped');
    const resumed = await start(['resume', out, '--case', caseFile, '--quiet'], join(tmp, 'later-resume.log'), out).ended;
    expect(resumed.code, resumed.err).toBe(0);
    for (const f of ['branches/1.csv', 'points.json']) expect(readFileSync(join(out, f), 'utf8'), f).toBe(readFileSync(join(reference, f), 'utf8'));
    expect(readdirSync(join(out, 'solutions')).sort()).toEqual(readdirSync(join(reference, 'solutions')).sort());
    for (const f of readdirSync(join(reference, 'solutions'))) expect(readFileSync(join(out, 'solutions', f)).equals(readFileSync(join(reference, 'solutions', f))), f).toBe(true);

    // two signals: the second leaves at once (exit 130), in the middle of the model's work
    const twice = join(tmp, 'twice');
    const twiceLog = join(tmp, 'twice.log');
    const q = start(['run', caseFile, '--out', twice], twiceLog, twice);
    await untilCall(twiceLog, 2, q);
    q.child.kill('SIGINT');
    // the first is answered at once (the model is still working in the other thread) ...
    while (!/SIGINT: finishing the current step/.test(q.stderr())) await sleep(10);
    // ... and the second leaves
    q.child.kill('SIGINT');
    const e = await q.ended;
    expect(e.code).toBe(130);
    expect(e.err).toMatch(/second SIGINT: leaving at once/);
    expect(calls(twiceLog).length).toBeLessThanOrEqual(3);
  }, 180_000);
});

describe('a stop request during a long time integration (settle)', () => {
  it('is answered while the model is still working, and a second signal leaves at once', async () => {
    // each Jacobian call logs "start n", works 3 s (a long factorisation's stand-in), then logs "end n"
    const slow = join(tmp, 'slow-settle-model.mjs');
    writeFileSync(
      slow,
      `import { appendFileSync } from 'node:fs';
import sine from ${JSON.stringify(resolve('test/fixtures/code-model.mjs'))};
const pause = new Int32Array(new SharedArrayBuffer(4));
export default function (options) {
  const p = sine(options);
  let calls = 0;
  return { ...p, jacobian(u, q, values) {
    const n = ++calls;
    appendFileSync(process.env.SLOW_MODEL_LOG, 'start ' + n + '\\n');
    Atomics.wait(pause, 0, 0, 3000);
    appendFileSync(process.env.SLOW_MODEL_LOG, 'end ' + n + '\\n');
    return p.jacobian(u, q, values);
  } };
}
`,
    );
    const settleFile = join(tmp, 'slow-settle.yaml');
    writeFileSync(settleFile, 'name: slow-settle\nmodel: ./slow-settle-model.mjs\ngrid: {intervals: [16]}\nparameters: {lambda: 1}\ninitial: {u: 0.5*sin(pi*x)}\ntime: {end: 100}\n');
    const out = join(tmp, 'slow-settle');
    const log = join(tmp, 'slow-settle.log');
    const lines = (): string[] => (existsSync(log) ? readFileSync(log, 'utf8').trim().split('\n') : []);
    const p = start(['settle', settleFile, '--out', out], log, out);
    let done = false;
    void p.ended.then(() => (done = true));
    while (!done && !lines().includes('start 1')) await sleep(20);
    expect(done, 'the integration ended before the model was called').toBe(false);
    p.child.kill('SIGINT');
    while (!done && !/SIGINT: finishing the current step/.test(p.stderr())) await sleep(10);
    // answered while the first Jacobian call is still at work (in the integration's thread)
    expect(lines()).not.toContain('end 1');
    p.child.kill('SIGINT');
    const e = await p.ended;
    expect(e.code, e.err).toBe(130);
    expect(e.err).toMatch(/second SIGINT: leaving at once/);
    expect(lines()).not.toContain('end 1');
  }, 120_000);
});
