/**
 * Output folders that cannot be written are refused before any run starts (exit 2, one line
 * naming the cause), on real file systems: a read-only mount (refused for every user, root
 * included), a folder the user may not write (tested as the unprivileged user `nobody`: the mode
 * bits do not stop root), a symbolic link to nothing, a file in the way — for `run` (one case and
 * a batch), `resume` and `refine`.
 *
 * Mounting needs root with CAP_SYS_ADMIN and running as another user needs root: where this
 * process lacks them, those tests are skipped and say so.
 */
import { spawnSync } from 'node:child_process';
import { chmodSync, existsSync, mkdirSync, mkdtempSync, readdirSync, rmSync, symlinkSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ensureBuilt } from './built.js';
import { cli, json, start } from './processes.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-folders-'));
chmodSync(tmp, 0o755);
const caseFile = join(tmp, 'slab.yaml');
writeFileSync(caseFile, 'name: slab\nmodel: bratu\ngrid: {intervals: [16]}\nparameters: {lambda: 0.2}\ncontinuation: {parameter: lambda, bounds: [0, 4], max-points: 30}\n');

const mounted: string[] = [];
function mount(dir: string, ...options: string[]): boolean {
  mkdirSync(dir, { recursive: true });
  const ok = spawnSync('mount', ['-t', 'tmpfs', '-o', ['size=1m', ...options].join(','), 'tmpfs', dir], { stdio: 'ignore' }).status === 0;
  if (ok) mounted.push(dir);
  return ok;
}
const remountReadOnly = (dir: string): boolean => spawnSync('mount', ['-o', 'remount,ro', dir], { stdio: 'ignore' }).status === 0;
const canMount = ((): boolean => {
  const probe = join(tmp, 'probe');
  if (!mount(probe)) return false;
  spawnSync('umount', [probe]);
  mounted.pop();
  return true;
})();
const isRoot = process.getuid?.() === 0;

afterAll(() => {
  for (const m of mounted) spawnSync('umount', ['-l', m]);
  rmSync(tmp, { recursive: true, force: true });
});

beforeAll(() => ensureBuilt(), 60_000);

const expectRefused = (r: { code: number | null; out: string; err: string }, pattern: RegExp): void => {
  expect(r.code, r.err).toBe(2);
  expect(r.out).toBe('');
  expect(r.err.trimEnd().split('\n')).toHaveLength(1);
  expect(r.err).toMatch(pattern);
};

describe.runIf(canMount)('a read-only file system (a tmpfs remounted read-only)', () => {
  it('run, a batch, resume and refine are refused up front naming it, for root too', async () => {
    const ro = join(tmp, 'ro');
    expect(mount(ro)).toBe(true);
    // a stopped run to resume later, written while the file system could still be written
    const stopped = join(ro, 'stopped');
    expect((await cli('run', caseFile, '--out', stopped, '--quiet')).code).toBe(0);
    const run = json(join(stopped, 'run.json'));
    writeFileSync(join(stopped, 'run.json'), JSON.stringify({ ...run, status: 'stopped' }));
    mkdirSync(join(ro, 'existing'));
    expect(remountReadOnly(ro)).toBe(true);

    expectRefused(await cli('run', caseFile, '--out', join(ro, 'new')), new RegExp(`output folder ${ro}/new cannot be created: ${ro} is on a read-only file system$`, 'm'));
    expectRefused(await cli('run', caseFile, '--out', join(ro, 'existing')), /output folder .*\/existing cannot be written: .*\/existing is on a read-only file system/);
    const other = join(tmp, 'other.yaml');
    writeFileSync(other, 'name: other\nmodel: allen-cahn\ngrid: {intervals: [16]}\ncontinuation: {parameter: lambda, bounds: [0, 20]}\n');
    const batch = await cli('run', caseFile, other, '--out', join(ro, 'batch'));
    expect(batch.code).toBe(2);
    expect(batch.err.trimEnd().split('\n')).toEqual([
      `branchline: output folder ${ro}/batch/slab cannot be created: ${ro} is on a read-only file system`,
      `branchline: output folder ${ro}/batch/other cannot be created: ${ro} is on a read-only file system`,
      'branchline: nothing was run: 2 of 2 cases cannot run',
    ]);
    expectRefused(await cli('resume', stopped), /run folder .*\/stopped cannot be written: .*\/stopped is on a read-only file system/);
    expectRefused(await cli('refine', caseFile, '--grids', '16,32,64', '--out', join(ro, 'study')), /study folder .*\/study cannot be created: .* is on a read-only file system/);
  });
});

describe.runIf(isRoot)('a folder the user may not write (as the user nobody)', () => {
  it('is refused up front naming the permission, the owner and the mode', async () => {
    const locked = join(tmp, 'not-mine');
    mkdirSync(locked, { mode: 0o755 });
    chmodSync(locked, 0o755);
    const r = await start(['run', caseFile, '--out', join(locked, 'run')], { uid: 65534, gid: 65534 }).ended;
    expectRefused(r, /output folder .*\/not-mine\/run cannot be created: no permission to write in .*\/not-mine \(owned by user 0, mode 755; this process runs as user 65534\)/);
    expect(readdirSync(locked)).toEqual([]);
    // root is not stopped by the mode bits: the same command runs
    expect((await cli('run', caseFile, '--out', join(locked, 'run'), '--quiet')).code).toBe(0);
  }, 60_000);
});

describe('symbolic links to nothing and files in the way', () => {
  it('are refused up front naming the link and its target, or the file', async () => {
    const link = join(tmp, 'dangling');
    symlinkSync(join(tmp, 'gone', 'away'), link);
    expectRefused(await cli('run', caseFile, '--out', link), new RegExp(`output folder ${link} cannot be created: ${link} is a symbolic link to ${tmp}/gone/away, which does not exist`));
    expectRefused(await cli('run', caseFile, '--out', join(link, 'inside')), /is a symbolic link to .*gone\/away, which does not exist/);
    expectRefused(await cli('refine', caseFile, '--grids', '16,32', '--out', link), /study folder .* is a symbolic link to .*, which does not exist/);
    const file = join(tmp, 'a-file');
    writeFileSync(file, 'x');
    expectRefused(await cli('run', caseFile, '--out', join(file, 'run')), new RegExp(`output folder ${file}/run cannot be created: ${file} is a file, not a folder`));
    expectRefused(await cli('run', caseFile, '--out', file), /output folder .*a-file exists and is a file, not a folder/);
    expect(existsSync(join(tmp, 'gone'))).toBe(false);
  });
});
