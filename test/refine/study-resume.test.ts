/**
 * A refinement study killed with SIGKILL at any moment is resumable (real processes, the built
 * binary): refine.json exists from the start, grid runs write checkpoints, `resume DIR` finishes
 * the unfinished grids from their checkpoints and redoes the analysis — the same grid files and
 * the same extrapolated value as an uninterrupted study; `refine --force` recognises the
 * half-written study and replaces only its files; a plain `refine` refuses it.
 */
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ensureBuilt } from '../cli/built.js';
import { cli, json, sleep, start, twoSignalsAtOnce } from '../cli/processes.js';
import { expectSameFiles } from '../cli/same-files.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-study-kill-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));
const caseFile = join(tmp, 'slab-study.yaml');
const reference = join(tmp, 'reference');
const grids = ['grid-24', 'grid-48', 'grid-96'];

beforeAll(async () => {
  ensureBuilt();
  writeFileSync(
    caseFile,
    `name: slab-study
model: bratu
grid: {intervals: [24]}
parameters: {lambda: 0.2}
continuation: {parameter: lambda, bounds: [0, 5], step: {initial: 0.2, max: 0.5}, stop-when: [{monitor: max, above: 2}]}
checkpoint: {every-points: 2, every-seconds: 60}
`,
  );
  const r = await cli('refine', caseFile, '--grids', '24,48,96', '--out', reference, '--quiet');
  if (r.code !== 0) throw new Error(`the uninterrupted study failed: ${r.err}`);
}, 60_000);

/** Resolves as soon as `path` exists (polled every 2 ms; nothing is created meanwhile). */
async function appears(path: string): Promise<void> {
  while (!existsSync(path)) await sleep(2);
}

/** The same grid files and the same located and extrapolated values as the uninterrupted study. */
function expectSameStudy(dir: string, what: string): void {
  const a = json(join(dir, 'refine.json'));
  const b = json(join(reference, 'refine.json'));
  expect(a.status, what).toBe('finished');
  expect(a.runs.map((r: any) => [r.directory, r.status]), what).toEqual(b.runs.map((r: any) => [r.directory, r.status]));
  a.runs.forEach((r: any, i: number) => expect(Math.abs(r.value - b.runs[i].value), `${what}: ${r.directory}`).toBeLessThanOrEqual(1e-10 * Math.abs(b.runs[i].value)));
  expect(Math.abs(a.extrapolated - b.extrapolated), what).toBeLessThanOrEqual(1e-9);
  expect(readFileSync(join(dir, 'refine.csv'), 'utf8').split('\n')[0]).toBe(readFileSync(join(reference, 'refine.csv'), 'utf8').split('\n')[0]);
  for (const g of grids) expectSameFiles(join(dir, g), join(reference, g), `${what}: ${g}`);
  expect(existsSync(join(dir, 'writer.lock')), what).toBe(false);
}

describe('a study killed with kill -9', () => {
  it('right after it started, and in the middle of its second grid: resume finishes it with the uninterrupted results', async () => {
    const trial = async (name: string, killWhen: (dir: string) => Promise<void>): Promise<void> => {
      const dir = join(tmp, name);
      const p = start(['refine', caseFile, '--grids', '24,48,96', '--out', dir, '--quiet']);
      await killWhen(dir);
      p.child.kill('SIGKILL');
      expect((await p.ended).signal, name).toBe('SIGKILL');
      // refine.json is there from the start, naming the plan; the study is not finished
      const doc = json(join(dir, 'refine.json'));
      expect(doc.status, name).toBe('running');
      expect(doc.plan.grids, name).toEqual([24, 48, 96]);
      // a plain refine refuses the folder (it holds a study); resume takes it over
      const again = await cli('refine', caseFile, '--grids', '24,48,96', '--out', dir);
      expect(again.code, name).toBe(2);
      expect(again.err).toMatch(/is not empty \(it holds an earlier refinement study\)/);
      const r = start(['resume', dir]);
      const e = await r.ended;
      expect(e.code, `${name}: ${e.err} ${e.out}`).toBe(0);
      expect(e.out).toMatch(/Extrapolated: lambda = /);
      expectSameStudy(dir, name);
    };
    await Promise.all([
      trial('killed-at-start', (dir) => appears(join(dir, 'refine.json'))),
      // the second grid's run has written a checkpoint: it resumes from it
      trial('killed-in-grid-48', (dir) => appears(join(dir, 'grid-48', 'checkpoint.bin'))),
    ]);
  }, 120_000);

  it('with --jobs 2: the workers stop when their parent is gone; resume finishes the study', async () => {
    const dir = join(tmp, 'killed-jobs');
    const p = start(['refine', caseFile, '--grids', '24,48,96', '--out', dir, '--jobs', '2', '--quiet']);
    await appears(join(dir, 'grid-48', 'checkpoint.bin'));
    p.child.kill('SIGKILL');
    await p.ended;
    // the orphaned workers notice their parent is gone, checkpoint and stop: wait for their locks to go
    for (let i = 0; i < 400 && grids.some((g) => existsSync(join(dir, g, 'writer.lock'))); i++) await new Promise((r) => setTimeout(r, 50));
    const e = await start(['resume', dir, '--quiet']).ended;
    expect(e.code, e.err).toBe(0);
    expectSameStudy(dir, 'killed with --jobs 2');
  }, 120_000);

  it('a double Ctrl-C leaves at once (exit 130) with refine.json and the grid run stopped, no lock left; resume finishes it', async () => {
    // repeated until the second signal lands before the first stop is done (else: exit 1, stopped)
    let dir = '';
    let leftAtOnce = false;
    for (let k = 0; k < 5 && !leftAtOnce; k++) {
      dir = join(tmp, `double-${k}`);
      const p = start(['refine', caseFile, '--grids', '24,48,96', '--out', dir]);
      await appears(join(dir, 'grid-48', 'checkpoint.bin'));
      twoSignalsAtOnce(p.child);
      const e = await p.ended;
      expect(json(join(dir, 'grid-48', 'run.json')).status).toBe('stopped');
      for (const f of ['writer.lock', 'grid-48/writer.lock']) expect(existsSync(join(dir, f)), f).toBe(false);
      if (e.code === 130) {
        leftAtOnce = true;
        expect(json(join(dir, 'refine.json'))).toMatchObject({ status: 'stopped', note: expect.stringMatching(/left at once on a second SIG(INT|TERM)/) });
      } else {
        expect(e.code, e.err).toBe(1);
        expect(json(join(dir, 'refine.json')).status).toBe('stopped');
      }
    }
    expect(leftAtOnce).toBe(true);
    const r = await start(['resume', dir, '--quiet']).ended;
    expect(r.code, r.err).toBe(0);
    expectSameStudy(dir, 'after a double Ctrl-C');
  }, 120_000);

  it('refine --force recognises the half-written study and replaces only its files', async () => {
    const dir = join(tmp, 'forced');
    const p = start(['refine', caseFile, '--grids', '24,48,96', '--out', dir, '--quiet']);
    await appears(join(dir, 'grid-48', 'checkpoint.bin'));
    p.child.kill('SIGKILL');
    await p.ended;
    writeFileSync(join(dir, 'notes.txt'), 'mine');
    writeFileSync(join(dir, 'grid-24', 'my-plot.png'), 'mine too');
    const r = await cli('refine', caseFile, '--grids', '24,48,96', '--out', dir, '--force');
    expect(r.code, r.err).toBe(0);
    expect(r.err).toMatch(/replaced the earlier study; kept 2 files it did not write: grid-24\/my-plot\.png, notes\.txt/);
    expect(readFileSync(join(dir, 'notes.txt'), 'utf8')).toBe('mine');
    expect(readFileSync(join(dir, 'grid-24', 'my-plot.png'), 'utf8')).toBe('mine too');
    expectSameStudy(dir, 'replaced with --force');
  }, 120_000);
});
