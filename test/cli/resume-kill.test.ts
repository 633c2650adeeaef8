/**
 * Overnight safety with real processes (the built binary): a run killed with SIGKILL at random
 * instants — also while it is being resumed — and resumed until it finishes ends with the same
 * branch files as a run that was never interrupted (every number within 1e-10, the same rows);
 * a run stopped with SIGINT or SIGTERM exits 1 with run.json `stopped` and resumes to the same
 * files. The case is small and 1D but exercises what a resume must carry: branch switching (the
 * queue of branches), stability (eigen-solver warm starts), special points and their solutions.
 *
 * The kill instants are drawn at random (printed with any failure): the run is killed when its
 * branch files have reached a random fraction of their final size, after a random extra delay.
 */
import type { ChildProcess } from 'node:child_process';
import { existsSync, mkdtempSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../src/cli/main.js';
import { ensureBuilt } from './built.js';
import { type Ended, csvBytes, json, sleep, start, switchingCase } from './processes.js';
import { expectSameFiles as expectReference } from './same-files.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-kill-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

const caseText = switchingCase('kill-me', '{every-points: 3, every-seconds: 0.05}');
const caseFile = join(tmp, 'kill-me.yaml');
const reference = join(tmp, 'reference');

/** Send `signal` once the run's branch files reach `bytes` (plus `extraMs`); false when the run ended first. */
async function signalAt(p: { child: ChildProcess; ended: Promise<Ended> }, dir: string, bytes: number, extraMs: number, signal: NodeJS.Signals): Promise<boolean> {
  let done = false;
  void p.ended.then(() => (done = true));
  while (!done && csvBytes(dir) < bytes) await sleep(3);
  if (extraMs > 0) await sleep(extraMs);
  if (done) return false;
  return p.child.kill(signal);
}


const expectSameFiles = (dir: string, what: string): void => expectReference(dir, reference, what);

let totalBytes = 0;

let errors = '';
beforeAll(async () => {
  ensureBuilt();
  writeFileSync(caseFile, caseText);
  const r = await main(['node', 'branchline', 'run', caseFile, '--out', reference, '--quiet'], { out: () => {}, err: (s) => (errors += s) });
  if (r !== 0) throw new Error(`the uninterrupted run failed: ${errors}`);
  totalBytes = csvBytes(reference);
}, 120_000);

describe('kill -9 at random instants, then resume', () => {
  it('ends with the same branch files as the uninterrupted run (several trials, kills during resumes too)', async () => {
    expect(readdirSync(join(reference, 'branches')).length).toBeGreaterThan(2); // branch switching happened
    const trial = async (k: number): Promise<string> => {
      const dir = join(tmp, `killed-${k}`);
      const notes: string[] = [];
      // kill points: a random fraction of the final branch-file size, in increasing order
      const kills = (k === 0 ? [0.1 + 0.8 * Math.random()] : [0.1 + 0.35 * Math.random(), 0.5 + 0.4 * Math.random()]).map((f) => ({ f, extra: Math.floor(25 * Math.random()) }));
      let args = ['run', caseFile, '--out', dir, '--quiet'];
      for (const kill of kills) {
        const p = start(args);
        const killed = await signalAt(p, dir, kill.f * totalBytes, kill.extra, 'SIGKILL');
        const e = await p.ended;
        notes.push(`killed at ${(100 * kill.f).toFixed(1)}% + ${kill.extra} ms: ${killed ? `signal ${e.signal}` : `ended first (code ${e.code})`}`);
        if (!killed) break;
        expect(e.signal, notes.join('; ')).toBe('SIGKILL');
        // killed: run.json still says running (nobody was left to change it), and resume accepts it
        expect(json(join(dir, 'run.json')).status, notes.join('; ')).toBe('running');
        args = ['resume', dir, '--quiet'];
      }
      if (args[0] === 'resume') {
        const last = start(args);
        const e = await last.ended;
        expect(e.code, `${notes.join('; ')}: ${e.err}`).toBe(0);
        expect(e.err).toBe('');
        expect(e.out).toMatch(/Finished in/);
      }
      expectSameFiles(dir, `trial ${k} (${notes.join('; ')})`);
      return notes.join('; ');
    };
    const notes = await Promise.all([0, 1].map(trial));
    expect(notes.join('\n')).toMatch(/signal SIGKILL/);
  }, 120_000);
});

describe('SIGINT and SIGTERM stop a run cleanly', () => {
  it('exit 1, run.json stopped, a checkpoint; resume finishes with the same files', async () => {
    const trial = async (signal: 'SIGINT' | 'SIGTERM'): Promise<void> => {
      const dir = join(tmp, `stopped-${signal}`);
      const p = start(['run', caseFile, '--out', dir]);
      const fraction = 0.2 + 0.6 * Math.random();
      const sent = await signalAt(p, dir, fraction * totalBytes, Math.floor(20 * Math.random()), signal);
      const e = await p.ended;
      if (sent) {
        expect(e.code, e.err).toBe(1);
        expect(e.err).toMatch(new RegExp(`${signal}: finishing the current step, writing a checkpoint and stopping`));
        expect(e.out).toMatch(/Stopped on request after/);
        expect(e.out).toMatch(/To continue: branchline resume /);
        const run = json(join(dir, 'run.json'));
        expect(run.status).toBe('stopped');
        expect(run.process).toBeUndefined();
        expect(run.checkpoint.points).toBeGreaterThan(0);
        expect(existsSync(join(dir, 'checkpoint.bin'))).toBe(true);
        const r = start(['resume', dir, '--quiet']);
        const re = await r.ended;
        expect(re.code, re.err).toBe(0);
        expect(json(join(dir, 'run.json')).resumed).toHaveLength(1);
      } else {
        expect(e.code).toBe(0); // the run ended before the signal could be sent
      }
      expectSameFiles(dir, `${signal} at ${(100 * fraction).toFixed(1)}%`);
    };
    await Promise.all([trial('SIGINT'), trial('SIGTERM')]);
  }, 120_000);
});

describe('a batch whose worker process is killed', () => {
  it('records that case as failed with the reason, runs the others, and the killed run resumes to the same files', async () => {
    const out = join(tmp, 'batch');
    const other = join(tmp, 'other.yaml');
    writeFileSync(other, caseText.replace('name: kill-me', 'name: other'));
    const p = start(['run', caseFile, other, '--out', out, '--jobs', '2', '--json', '--quiet']);
    // the worker writing kill-me/ names itself in run.json while it runs
    const runJson = join(out, 'kill-me', 'run.json');
    let pid: number | undefined;
    let done = false;
    void p.ended.then(() => (done = true));
    while (!done && pid === undefined) {
      await sleep(3);
      try {
        const run = json(runJson);
        if (run.status === 'running' && run.process?.pid && csvBytes(join(out, 'kill-me')) > 0.2 * totalBytes) pid = run.process.pid;
      } catch {
        /* not written yet */
      }
    }
    if (pid !== undefined) process.kill(pid, 'SIGKILL');
    const e = await p.ended;
    if (pid === undefined) return expect(e.code).toBe(0); // the batch finished before the kill
    expect(e.code, e.err).toBe(1);
    const summary = JSON.parse(e.out);
    expect(summary.cases.map((c: any) => [c.name, c.status])).toEqual([
      ['kill-me', 'failed'],
      ['other', 'finished'],
    ]);
    expect(summary.cases[0].reason).toBe('the worker process ended by signal SIGKILL before the run finished');
    // run.json tells the truth: failed, with the reason; its checkpoint lets resume go on
    expect(json(runJson)).toMatchObject({ status: 'failed', failure: summary.cases[0].reason });
    const r = start(['resume', join(out, 'kill-me'), '--quiet']);
    const re = await r.ended;
    expect(re.code, re.err).toBe(0);
    expectSameFiles(join(out, 'kill-me'), 'the killed worker resumed');
  }, 120_000);
});
