/**
 * Resume from any instant, with real processes and real signals: a run killed with SIGKILL
 * before its first checkpoint starts over from the case its run.json records and ends with the
 * same files as an uninterrupted run; a double Ctrl-C (SIGINT twice) leaves at once with exit
 * code 130 but leaves run.json `stopped` (never `running` for a process that is gone) and no lock,
 * in one process, during a resume (whose lock the command takes before reading the run) and in a
 * batch of worker processes; the run resumes to the same files.
 */
import { existsSync, mkdirSync, mkdtempSync, rmSync, watch, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { lockFile } from '../../src/run/lock.js';
import { ensureBuilt } from './built.js';
import { cli, json, sleep, smallSwitching, start, switchingCase, twoSignalsAtOnce } from './processes.js';
import { expectSameFiles } from './same-files.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-interrupted-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));
const caseFile = join(tmp, 'early.yaml');
const reference = join(tmp, 'reference');

beforeAll(async () => {
  ensureBuilt();
  writeFileSync(caseFile, switchingCase('early', undefined, smallSwitching));
  const r = await cli('run', caseFile, '--out', reference, '--quiet');
  if (r.code !== 0) throw new Error(`the uninterrupted run failed: ${r.err}`);
}, 60_000);

/** Resolves when a file named `name` appears in `dir` (inotify: at once). */
function appears(dir: string, name: string): Promise<void> {
  return new Promise((done) => {
    const w = watch(dir, (_e, f) => {
      if (f === name) {
        w.close();
        done();
      }
    });
  });
}

describe('a run killed before its first checkpoint', () => {
  it('resume starts it over from its recorded case and ends with the files of an uninterrupted run', async () => {
    // kill -9 as soon as run.json exists: the first point and its checkpoint come later (tens of
    // milliseconds at least); should a trial still see a checkpoint, it is repeated
    let dir = '';
    for (let k = 0; k < 3 && (dir === '' || existsSync(join(dir, 'checkpoint.bin'))); k++) {
      dir = join(tmp, `early-kill-${k}`);
      mkdirSync(dir);
      const p = start(['run', caseFile, '--out', dir, '--force', '--quiet']);
      await appears(dir, 'run.json');
      p.child.kill('SIGKILL');
      expect((await p.ended).signal).toBe('SIGKILL');
    }
    expect(existsSync(join(dir, 'checkpoint.bin'))).toBe(false);
    const before = json(join(dir, 'run.json'));
    expect(before.status).toBe('running');
    expect(existsSync(join(dir, lockFile))).toBe(true); // the dead writer's lock: stale
    const r = start(['resume', dir]);
    const e = await r.ended;
    expect(e.code, e.err).toBe(0);
    expect(e.err).toMatch(/starting early over from the case recorded in run\.json \(was running; it ended before its first checkpoint\)/);
    expectSameFiles(dir, reference, 'started over');
    const after = json(join(dir, 'run.json'));
    expect(after.started).toBe(before.started);
    expect(after.resumed).toHaveLength(1);
  }, 60_000);
});

describe('a double Ctrl-C', () => {
  it('leaves at once (exit 130) with run.json stopped, noting why, and no lock; resume finishes with the same files', async () => {
    // when the second signal comes only after the first stop is done, there is nothing left to
    // leave (exit 1, stopped): that is right too, and the trial is repeated until one leaves at once
    let dir = '';
    let leftAtOnce = false;
    for (let k = 0; k < 5 && !leftAtOnce; k++) {
      dir = join(tmp, `double-${k}`);
      mkdirSync(dir);
      const p = start(['run', caseFile, '--out', dir, '--force']);
      await appears(dir, 'checkpoint.previous.bin');
      twoSignalsAtOnce(p.child);
      const e = await p.ended;
      const run = json(join(dir, 'run.json'));
      expect(run.status).toBe('stopped');
      expect(run.process).toBeUndefined();
      expect(existsSync(join(dir, lockFile))).toBe(false);
      if (e.code === 130 && run.note !== undefined) {
        leftAtOnce = true;
        expect(e.err).toMatch(/second SIG(INT|TERM): leaving at once/);
        expect(run.note).toMatch(/left at once on a second SIG(INT|TERM)/);
      } else if (e.code === 130) {
        // the second signal came after the first stop had finished the run but before the process
        // ended (see the resume test below): no note, and the clean stop's record is whole
        expect(run.checkpoint, e.err).toBeTruthy();
      } else {
        expect(e.code, e.err).toBe(1);
      }
    }
    expect(leftAtOnce).toBe(true);
    const r = start(['resume', dir, '--quiet']);
    const re = await r.ended;
    expect(re.code, re.err).toBe(0);
    expectSameFiles(dir, reference, 'after a double Ctrl-C');
  }, 120_000);

  it('during a resume too: run.json stopped and the lock the resume command took released', async () => {
    let dir = '';
    let leftAtOnce = false;
    for (let k = 0; k < 5 && !leftAtOnce; k++) {
      dir = join(tmp, `double-resume-${k}`);
      mkdirSync(dir);
      const p = start(['run', caseFile, '--out', dir, '--force', '--quiet']);
      await appears(dir, 'checkpoint.previous.bin');
      p.child.kill('SIGINT');
      expect((await p.ended).code).toBe(1);
      // the resume writes its first checkpoint (reading one raises no event), then two signals
      const written = appears(dir, 'checkpoint.bin');
      const r = start(['resume', dir]);
      await written;
      twoSignalsAtOnce(r.child);
      const e = await r.ended;
      const run = json(join(dir, 'run.json'));
      expect(run.status, e.err).toBe('stopped');
      expect(existsSync(join(dir, lockFile)), e.err).toBe(false);
      if (e.code === 130 && run.note !== undefined) {
        leftAtOnce = true;
        expect(run.note).toMatch(/left at once on a second SIG(INT|TERM)/);
      } else if (e.code === 130) {
        // the second signal came after the first stop had finished the run (its run.json written
        // stopped, its hook gone) but before the process ended: nothing was left at once, so no
        // note; the clean stop's record must then be whole (a checkpoint to resume from)
        expect(run.checkpoint, e.err).toBeTruthy();
      } else {
        expect(e.code, e.err).toBe(1);
      }
    }
    expect(leftAtOnce).toBe(true);
    const again = await start(['resume', dir, '--quiet']).ended;
    expect(again.code, again.err).toBe(0);
    expectSameFiles(dir, reference, 'after a double Ctrl-C during a resume');
  }, 120_000);

  it('in a batch of worker processes: every run says stopped, none running, no lock left', async () => {
    const other = join(tmp, 'other.yaml');
    writeFileSync(other, switchingCase('other', undefined, smallSwitching));
    const out = join(tmp, 'batch');
    mkdirSync(out);
    const p = start(['run', caseFile, other, '--out', out, '--jobs', '2', '--quiet']);
    while (!existsSync(join(out, 'early', 'checkpoint.bin')) || !existsSync(join(out, 'other', 'checkpoint.bin'))) await sleep(5);
    twoSignalsAtOnce(p.child);
    const e = await p.ended;
    expect(e.code, e.err).toBe(130);
    for (const name of ['early', 'other']) {
      const dir = join(out, name);
      const run = json(join(dir, 'run.json'));
      // the worker stopped cleanly on the first signal, or was ended by the second
      expect(['stopped', 'finished'], `${name}: ${run.status}`).toContain(run.status);
      expect(existsSync(join(dir, lockFile)), name).toBe(false);
      if (run.status === 'stopped') {
        const r = start(['resume', dir, '--quiet']);
        const re = await r.ended;
        expect(re.code, re.err).toBe(0);
      }
    }
    expectSameFiles(join(out, 'early'), reference, 'batch case after a double Ctrl-C');
  }, 90_000);
});
