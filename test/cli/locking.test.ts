/**
 * One writer per run folder, with real processes: two `resume` commands started at once on a
 * stopped run (one finishes, the other refuses in one line with exit code 2; the files equal an
 * uninterrupted run's), `run --force` refused while a resume writes the folder, a lock held by a
 * live process refused, and stale locks (dead writer, pid reused by another process, another
 * boot) taken over; processes racing for one stale lock: exactly one wins. `settle`, `refine`
 * and their --force take the same lock: a live writer makes each refuse, touching nothing.
 */
import { spawn } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { hostname, tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { prepareCase } from '../../src/run/case.js';
import { Checkpointer } from '../../src/run/checkpoint.js';
import { FolderLock, lockFile, processStart, selfIdentity } from '../../src/run/lock.js';
import { runCase } from '../../src/run/run-case.js';
import { ensureBuilt } from './built.js';
import { cli, json, sleep, smallSwitching, start, switchingCase } from './processes.js';
import { expectSameFiles } from './same-files.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-lock-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

const caseText = switchingCase('locked', undefined, smallSwitching);
const caseFile = join(tmp, 'locked.yaml');
const reference = join(tmp, 'reference');

/** A run of the case stopped (as by Ctrl-C) after `points` points, with its checkpoint. */
async function stoppedRun(dir: string, points: number): Promise<void> {
  const stopper = new AbortController();
  const checkpointer = new Checkpointer({ everyPoints: 3, everySeconds: 60 });
  const r = await runCase(await prepareCase(caseFile), { outDir: dir, signal: stopper.signal, checkpoint: checkpointer.hook, progress: (p) => p.points >= points && stopper.abort() });
  expect(r.status).toBe('stopped');
}

/** A lock file naming `identity` (what a writer writes), placed by hand. */
function placeLock(dir: string, identity: Record<string, unknown>): void {
  writeFileSync(join(dir, lockFile), JSON.stringify({ purpose: 'resume', since: '2025-01-01T00:00:00.000Z', ...identity }) + '\n');
}

const expectOneLine = (r: { code: number | null; out: string; err: string }, pattern: RegExp): void => {
  expect(r.code, r.err).toBe(2);
  expect(r.out).toBe('');
  expect(r.err.trimEnd().split('\n')).toHaveLength(1);
  expect(r.err).toMatch(pattern);
};

beforeAll(async () => {
  ensureBuilt();
  writeFileSync(caseFile, caseText);
  const r = await cli('run', caseFile, '--out', reference, '--quiet');
  if (r.code !== 0) throw new Error(`the uninterrupted run failed: ${r.err}`);
}, 60_000);

describe('two resumes at once', () => {
  it('one finishes, the other refuses with one line (exit 2), run --force is refused meanwhile; the files equal an uninterrupted run', async () => {
    const dir = join(tmp, 'twice');
    await stoppedRun(dir, 20);
    const a = start(['resume', dir, '--quiet']);
    const b = start(['resume', dir, '--quiet']);
    // while one of them writes the folder, nothing else may start writing it
    let forced: { code: number; out: string; err: string } | undefined;
    let done = false;
    void Promise.all([a.ended, b.ended]).then(() => (done = true));
    while (!done && !forced) {
      if (existsSync(join(dir, lockFile))) forced = await cli('run', caseFile, '--out', dir, '--force', '--quiet');
      else await sleep(5);
    }
    const ends = await Promise.all([a.ended, b.ended]);
    const winners = ends.filter((e) => e.code === 0);
    const losers = ends.filter((e) => e.code !== 0);
    expect(winners, ends.map((e) => e.err).join(' | ')).toHaveLength(1);
    expect(winners[0].out).toMatch(/Finished in/);
    // the loser either found the folder held by the winner or (when it came late) the run finished
    expectOneLine(losers[0], /: is being written by process \d+ \(resume, since .*\) on this machine; wait for it to end or stop it first|the run finished at .*; there is nothing to resume/);
    if (forced && !done) expectOneLine(forced, /is being written by process \d+ \(resume, since .*\) on this machine/);
    expectSameFiles(dir, reference, 'after two resumes at once');
    expect(json(join(dir, 'run.json')).resumed).toHaveLength(1);
  }, 90_000);

  it('a resume started while another one holds the folder names it (every trial, several at once)', async () => {
    const dir = join(tmp, 'many');
    await stoppedRun(dir, 10);
    const runs = [0, 1, 2].map(() => start(['resume', dir, '--quiet']));
    const ends = await Promise.all(runs.map((r) => r.ended));
    expect(ends.filter((e) => e.code === 0), ends.map((e) => e.err).join(' | ')).toHaveLength(1);
    for (const e of ends.filter((x) => x.code !== 0)) expectOneLine(e, /is being written by process \d+|there is nothing to resume/);
    expectSameFiles(dir, reference, 'after three resumes at once');
  }, 90_000);
});

describe('locks and their writers', () => {
  it('a live writer (a real process named with its start time and boot id) is refused; once it is gone, or when its pid was reused, the lock is stale and taken over', async () => {
    const dir = join(tmp, 'held');
    await stoppedRun(dir, 10);
    const sleeper = spawn('sleep', ['60'], { stdio: 'ignore' });
    await sleep(50);
    const me = selfIdentity();
    const live = { pid: sleeper.pid, host: hostname(), boot: me.boot, 'process-start': processStart(sleeper.pid!) };
    expect(live['process-start']).not.toBeNull();
    placeLock(dir, live);
    expectOneLine(await cli('resume', dir), new RegExp(`is being written by process ${sleeper.pid} \\(resume, since .*\\) on this machine; wait for it to end or stop it first`));
    // --force never takes a folder from a live process on this machine
    expectOneLine(await cli('resume', dir, '--force'), /is being written by process/);
    expectOneLine(await cli('run', caseFile, '--out', dir, '--force'), /output folder .* is being written by process \d+ \(resume, since .*\) on this machine/);
    // the same pid with another start time is another process (the pid was reused): stale
    placeLock(dir, { ...live, 'process-start': String(Number(live['process-start']) + 1) });
    const reused = start(['resume', dir, '--quiet']);
    const e = await reused.ended;
    expect(e.code, e.err).toBe(0);
    expectSameFiles(dir, reference, 'resumed over a reused pid');
    sleeper.kill('SIGKILL');
  }, 60_000);

  it('a lock of a dead process or of an earlier boot is stale; a lock of another host is honoured unless resume --force', async () => {
    const dir = join(tmp, 'stale');
    await stoppedRun(dir, 10);
    const dead = spawn(process.execPath, ['-e', '0']);
    await new Promise((r) => dead.on('exit', r));
    const me = selfIdentity();
    const takeOver = (): void => {
      const lock = FolderLock.acquire(dir, { purpose: 'test' });
      expect(json(join(dir, lockFile)).pid).toBe(process.pid);
      lock.release();
      expect(existsSync(join(dir, lockFile))).toBe(false);
    };
    placeLock(dir, { pid: dead.pid, host: hostname(), boot: me.boot, 'process-start': processStart(process.pid) });
    takeOver();
    // this very pid and start time, but recorded before a reboot: another process
    placeLock(dir, { pid: process.pid, host: hostname(), boot: 'an-earlier-boot', 'process-start': me['process-start'] });
    takeOver();
    placeLock(dir, { pid: 1, host: 'elsewhere.example', boot: 'x', 'process-start': '1' });
    expectOneLine(await cli('resume', dir), /is being written by process 1 \(resume, since .*\) on host elsewhere\.example, which cannot be checked from here; if that process is gone, pass --force/);
    const forced = await cli('resume', dir, '--force', '--quiet');
    expect(forced.code, forced.err).toBe(0);
    expectSameFiles(dir, reference, 'resumed with --force over a lock of another host');
  }, 60_000);

  it('settle, refine and their --force refuse a folder a live writer holds, touching nothing', async () => {
    const sleeper = spawn('sleep', ['60'], { stdio: 'ignore' });
    try {
      await sleep(50);
      const live = { pid: sleeper.pid, host: hostname(), boot: selfIdentity().boot, 'process-start': processStart(sleeper.pid!) };
      const snapshot = (dir: string): Record<string, string> => {
        const out: Record<string, string> = {};
        const walk = (rel: string): void => {
          for (const e of readdirSync(join(dir, rel), { withFileTypes: true })) {
            const r = rel ? `${rel}/${e.name}` : e.name;
            if (e.isDirectory()) walk(r);
            else out[r] = readFileSync(join(dir, r), 'base64');
          }
        };
        walk('');
        return out;
      };
      const pulse = join(tmp, 'pulse.yaml');
      writeFileSync(
        pulse,
        'name: pulse\nmodel: gray-scott\nboundary: neumann\ngrid: {intervals: [40], length: [0.3]}\nparameters: {F: 0.04, k: 0.064}\n' +
          'initial:\n  u: 1 - 0.5*exp(-(x-0.15)^2/0.0025)\n  v: 0.25*exp(-(x-0.15)^2/0.0025)\ntime: {end: 5}\n',
      );
      const slab = resolve('test/fixtures/run/bratu-1d.yaml');
      // an empty folder but for the lock; a finished integration; a finished study — each held
      const fresh = join(tmp, 'held-fresh');
      mkdirSync(fresh);
      const settled = join(tmp, 'held-settled');
      expect((await cli('settle', pulse, '--out', settled, '--quiet')).code).toBeLessThanOrEqual(1);
      const study = join(tmp, 'held-study');
      const made = await cli('refine', slab, '--grids', '8,16,32', '--out', study, '--quiet');
      expect(made.code, made.err).toBe(0);
      for (const [dir, args] of [
        [fresh, ['settle', pulse, '--out', fresh]],
        [fresh, ['refine', slab, '--grids', '8,16,32', '--out', fresh]],
        [settled, ['settle', pulse, '--out', settled, '--force']],
        [settled, ['resume', settled]],
        [study, ['refine', slab, '--grids', '8,16,32', '--out', study, '--force']],
      ] as const) {
        placeLock(dir, live);
        const before = snapshot(dir);
        expectOneLine(await cli(...args), new RegExp(`is being written by process ${sleeper.pid} \\(resume, since .*\\) on this machine`));
        expect(snapshot(dir), args.join(' ')).toEqual(before);
      }
    } finally {
      sleeper.kill('SIGKILL');
    }
  }, 120_000);

  it('processes racing for one stale lock: exactly one takes it', async () => {
    const dir = join(tmp, 'race');
    mkdirSync(dir);
    placeLock(dir, { pid: 999_999_999, host: hostname(), boot: selfIdentity().boot, 'process-start': '1' });
    const lockModule = resolve('dist/src/run/lock.js');
    // the winner holds the lock until every racer has tried (a folder of marks), however slowly they start
    const marks = join(tmp, 'race-marks');
    mkdirSync(marks);
    const script = `const fs = require('node:fs');
    const mark = () => fs.writeFileSync(${JSON.stringify(marks)} + '/' + process.pid, '');
    import(${JSON.stringify(lockModule)}).then(async ({ FolderLock }) => {
      let lock;
      try { lock = FolderLock.acquire(${JSON.stringify(dir)}, { purpose: 'race' }); console.log('won'); }
      catch (e) { console.log('lost: ' + e.message); }
      mark();
      if (!lock) return;
      for (let i = 0; i < 600 && fs.readdirSync(${JSON.stringify(marks)}).length < 6; i++) await new Promise((r) => setTimeout(r, 50));
      lock.release();
    });`;
    const racers = Array.from({ length: 6 }, () => {
      const c = spawn(process.execPath, ['-e', script], { stdio: ['ignore', 'pipe', 'inherit'] });
      let out = '';
      c.stdout!.on('data', (d: Buffer) => (out += d.toString()));
      return new Promise<string>((done) => c.on('exit', () => done(out.trim())));
    });
    const said = await Promise.all(racers);
    expect(said.filter((s) => s === 'won'), said.join('\n')).toHaveLength(1);
    for (const s of said.filter((x) => x !== 'won')) expect(s).toMatch(/^lost: .*is being written by process \d+ \(race, since/);
    expect(existsSync(join(dir, lockFile))).toBe(false);
  }, 60_000);
});
