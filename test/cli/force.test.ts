/**
 * `run --force` replaces only what an earlier run wrote (run.json `files`), on the real file
 * system with the real engine: the user's files — beside the run, inside branches/, solutions/
 * and plots/ — stay and are named; a folder whose run.json lists no files, or lists a file a run
 * does not write, is not a run to delete; `resume` never removes a user's file either. `settle
 * --force` follows the same rule, over a continuation run and over an earlier integration, and
 * so does the resume of an integration (a user's file in snapshots/ stays, its stale files go).
 */
import { existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { prepareCase } from '../../src/run/case.js';
import { Checkpointer } from '../../src/run/checkpoint.js';
import { runCase } from '../../src/run/run-case.js';
import { settleCase } from '../../src/run/settle.js';
import { prepareSettleCase } from '../../src/run/settle-case.js';
import { cli, json } from './processes.js';
import { filesBelow } from './same-files.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-force-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));
const slab = resolve('test/fixtures/run/bratu-1d.yaml');

const write = (file: string, text: string): void => {
  mkdirSync(join(file, '..'), { recursive: true });
  writeFileSync(file, text);
};

/** Every file below `dir`, relative, sorted. */
const tree = filesBelow;

// branch switching: the earlier run has branches/2.csv, 3.csv … that the slab run never writes
const pitchforks = join(tmp, 'pitchforks.yaml');
writeFileSync(
  pitchforks,
  'name: pitchforks\nmodel: allen-cahn\ngrid: {intervals: [32]}\nparameters: {lambda: 1}\n' +
    'continuation: {parameter: lambda, bounds: [0, 25], step: {initial: 0.5, max: 1}, max-points: 40, branch-switching: {depth: 1}}\n',
);

const userFiles: Record<string, string> = {
  'notes.txt': 'what I changed',
  'plots/my-figure.png': 'PNG',
  'branches/my-analysis.csv': 'a,b\n1,2\n',
  'solutions/my-state.npy': 'not ours',
  'plots/branch-1-fold-1-annotated.svg': '<svg/>',
  '.hidden.tmp': 'mine too',
};

describe('run --force', () => {
  it('removes exactly the files the earlier run listed, keeps the user’s files and names them', async () => {
    const dir = join(tmp, 'replaced');
    expect((await cli('run', pitchforks, '--out', dir, '--quiet')).code).toBe(0);
    const earlier = json(join(dir, 'run.json'));
    expect(earlier.files).toEqual(expect.arrayContaining(['run.json', 'points.json', 'branches/1.csv', 'branches/2.csv']));
    // every file of the run is in its manifest (plots derive from solutions)
    for (const f of tree(dir)) {
      const listed = earlier.files.includes(f) || (f.startsWith('plots/') && earlier.files.includes(`solutions/${f.slice(6, -4)}.npy`));
      expect(listed, `${f} is not in run.json files`).toBe(true);
    }
    for (const [f, text] of Object.entries(userFiles)) write(join(dir, f), text);
    const refused = await cli('run', slab, '--out', dir);
    expect(refused.code).toBe(2);
    expect(refused.err).toMatch(/is not empty \(it holds an earlier run\)/);

    const r = await cli('run', slab, '--out', dir, '--force');
    expect(r.code, r.err).toBe(0);
    expect(r.err).toMatch(/replaced the earlier run; kept 6 files it did not write: \.hidden\.tmp, branches\/my-analysis\.csv, notes\.txt, plots\/branch-1-fold-1-annotated\.svg, plots\/my-figure\.png, solutions\/my-state\.npy\n/);
    for (const [f, text] of Object.entries(userFiles)) expect(readFileSync(join(dir, f), 'utf8'), f).toBe(text);
    // nothing of the earlier run is left: only the new run's files and the user's
    const now = json(join(dir, 'run.json'));
    expect(now.case.name).toBe('slab-1d');
    const ours = tree(dir).filter((f) => !(f in userFiles));
    expect(ours).toEqual(expect.arrayContaining(['branches/1.csv', 'diagram.svg', 'points.json', 'run.json']));
    expect(ours.filter((f) => f.startsWith('branches/'))).toEqual(['branches/1.csv']);
    for (const f of ours) expect(now.files.includes(f) || f.startsWith('plots/'), f).toBe(true);
  });

  it('refuses a folder whose run.json lists no files, or lists a file a run does not write, and touches nothing', async () => {
    const bare = join(tmp, 'bare');
    write(join(bare, 'run.json'), JSON.stringify({ format: 'branchline run', 'format-version': 1, status: 'finished' }));
    write(join(bare, 'thesis.tex'), 'mine');
    const r = await cli('run', slab, '--out', bare, '--force');
    expect(r.code).toBe(2);
    expect(r.err.trimEnd().split('\n')).toHaveLength(1);
    expect(r.err).toMatch(/holds a run\.json, but its run\.json lists no files \(not written by this version of branchline, or not a run\); --force removes only the files a run lists as its own/);
    expect(tree(bare)).toEqual(['run.json', 'thesis.tex']);

    const forged = join(tmp, 'forged');
    write(join(forged, 'run.json'), JSON.stringify({ format: 'branchline run', 'format-version': 1, status: 'finished', files: ['run.json', 'thesis.tex'] }));
    write(join(forged, 'thesis.tex'), 'mine');
    const f = await cli('run', slab, '--out', forged, '--force');
    expect(f.code).toBe(2);
    expect(f.err).toMatch(/its run\.json lists "thesis\.tex", which is not a file a run writes/);
    write(join(forged, 'run.json'), JSON.stringify({ format: 'branchline run', 'format-version': 1, status: 'finished', files: ['../outside.txt'] }));
    expect((await cli('run', slab, '--out', forged, '--force')).err).toMatch(/lists "\.\.\/outside\.txt", which is not a file a run writes/);
    expect(tree(forged)).toEqual(['run.json', 'thesis.tex']);
  });
});

describe('settle --force', () => {
  // a pulse of the autocatalyst in a no-flux strip (Gray–Scott, 1D): settles within a few hundred steps
  const pulse = (end: number): string => {
    const file = join(tmp, `pulse-${end}.yaml`);
    writeFileSync(
      file,
      `name: pulse\nmodel: gray-scott\nboundary: neumann\ngrid: {intervals: [60], length: [0.3]}\nparameters: {F: 0.04, k: 0.064}\n` +
        `initial:\n  u: 1 - 0.5*exp(-(x-0.15)^2/0.0025)\n  v: 0.25*exp(-(x-0.15)^2/0.0025)\ntime: {end: ${end}}\n`,
    );
    return file;
  };
  const files = { ...userFiles, 'snapshots/my-snapshot.npy': 'mine' };
  const snapshotsOnDisk = (dir: string): string[] => tree(dir).filter((f) => f.startsWith('snapshots/') && !(f in files));

  it('replaces a continuation run and then an earlier integration by their run.json files only, keeping the user’s files and naming them', async () => {
    const dir = join(tmp, 'settled');
    expect((await cli('run', pitchforks, '--out', dir, '--quiet')).code).toBe(0);
    for (const [f, text] of Object.entries(files)) write(join(dir, f), text);
    const refused = await cli('settle', pulse(50000), '--out', dir);
    expect(refused.code).toBe(2);
    expect(refused.err).toMatch(/is not empty \(it holds an earlier run\)/);

    const r = await cli('settle', pulse(50000), '--out', dir, '--force');
    expect(r.code, r.err).toBe(0);
    expect(r.err).toMatch(/replaced the earlier run; kept 7 files it did not write: \.hidden\.tmp, branches\/my-analysis\.csv, notes\.txt, plots\/branch-1-fold-1-annotated\.svg, plots\/my-figure\.png, snapshots\/my-snapshot\.npy and 1 more\n/);
    for (const [f, text] of Object.entries(files)) expect(readFileSync(join(dir, f), 'utf8'), f).toBe(text);
    // the continuation's files are gone: no branch file but the user's, no points.json
    expect(tree(dir).filter((f) => f.startsWith('branches/'))).toEqual(['branches/my-analysis.csv']);
    expect(existsSync(join(dir, 'points.json'))).toBe(false);
    const first = json(join(dir, 'run.json'));
    expect(first.kind).toBe('settle');
    expect(first.files).toEqual(expect.arrayContaining(['run.json', 'monitors.csv', 'solutions/final.npy']));
    const earlierSnapshots = snapshotsOnDisk(dir);
    expect(earlierSnapshots.length).toBeGreaterThan(1);

    // a shorter integration over it (snapshots at other times): the earlier snapshots go, the user's stay
    // (exit 1: still changing at t = 2, which is what this integration is for)
    const again = await cli('settle', pulse(2), '--out', dir, '--force');
    expect(again.code, again.err).toBe(1);
    expect(again.err).toMatch(/still changing at the time limit t = 2/);
    expect(again.err).toMatch(/replaced the earlier run; kept 7 files it did not write/);
    for (const [f, text] of Object.entries(files)) expect(readFileSync(join(dir, f), 'utf8'), f).toBe(text);
    const now = json(join(dir, 'run.json'));
    const recorded = (now.snapshots as { file: string }[]).map((x) => x.file).sort();
    expect(snapshotsOnDisk(dir)).toEqual(recorded);
    // (the earlier integration's snapshots at other times were there and are gone)
    expect(earlierSnapshots.filter((f) => !recorded.includes(f)).length).toBeGreaterThan(0);
  });

  it('resume removes only the integration’s own files written after its checkpoint, never the user’s (snapshots/ included)', async () => {
    const dir = join(tmp, 'settle-resumed');
    const stopper = new AbortController();
    const r = await settleCase(await prepareSettleCase(pulse(50000)), { outDir: dir, signal: stopper.signal, progress: (p) => p.step >= 60 && stopper.abort() });
    expect(r.status).toBe('stopped');
    const listed = (json(join(dir, 'run.json')).snapshots as { file: string }[]).map((x) => x.file);
    for (const [f, text] of Object.entries(files)) write(join(dir, f), text);
    // what the integration itself may have left after its checkpoint: a later snapshot, temporary files
    const stale = ['snapshots/time-99999.npy', '.monitors.csv.1.1.tmp', 'snapshots/.time-99999.npy.1.2.tmp'];
    for (const f of stale) write(join(dir, f), 'stale');
    const resumed = await cli('resume', dir, '--quiet');
    expect(resumed.code, resumed.err).toBe(0);
    for (const [f, text] of Object.entries(files)) expect(readFileSync(join(dir, f), 'utf8'), f).toBe(text);
    for (const f of stale) expect(existsSync(join(dir, f)), f).toBe(false);
    // the snapshots on disk are exactly those the finished integration records (the stopped run's among them)
    const recorded = (json(join(dir, 'run.json')).snapshots as { file: string }[]).map((x) => x.file).sort();
    expect(recorded).toEqual(expect.arrayContaining(listed));
    expect(snapshotsOnDisk(dir)).toEqual(recorded);
    expect(existsSync(join(dir, 'writer.lock'))).toBe(false);

    // and --force over it keeps them too
    const again = await cli('settle', pulse(2), '--out', dir, '--force');
    expect(again.code, again.err).toBe(1);
    expect(again.err).toMatch(/replaced the earlier run; kept 7 files it did not write/);
    for (const [f, text] of Object.entries(files)) expect(readFileSync(join(dir, f), 'utf8'), f).toBe(text);
  });
});

describe('resume', () => {
  it('removes only the run’s own files written after the checkpoint, never the user’s', async () => {
    const dir = join(tmp, 'resumed');
    const stopper = new AbortController();
    const r = await runCase(await prepareCase(pitchforks), {
      outDir: dir,
      signal: stopper.signal,
      checkpoint: new Checkpointer({ everyPoints: 2, everySeconds: 60 }).hook,
      progress: (p) => p.points >= 30 && stopper.abort(),
    });
    expect(r.status).toBe('stopped');
    for (const [f, text] of Object.entries(userFiles)) write(join(dir, f), text);
    const resumed = await cli('resume', dir, '--quiet');
    expect(resumed.code, resumed.err).toBe(0);
    for (const [f, text] of Object.entries(userFiles)) expect(readFileSync(join(dir, f), 'utf8'), f).toBe(text);
    expect(existsSync(join(dir, 'writer.lock'))).toBe(false);
  });
});
