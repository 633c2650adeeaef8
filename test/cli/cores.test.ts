/**
 * Two cores give the files of one core: a run with branch switching traced on one core, on two
 * (branches after the branch points traced side by side in helper threads), and on two but
 * killed (SIGKILL) while its branches were being traced and resumed, ends with the same files,
 * byte for byte, but for the documented time fields of run.json (README, "What may differ from a
 * local run"); a small refinement study run with its grids one after another and side by side
 * likewise (refine.json's `seconds` and the grid runs' times aside).
 */
import { existsSync, mkdtempSync, readFileSync, readdirSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, relative } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ensureBuilt } from './built.js';
import { cli, json, sleep, start, switchingCase } from './processes.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-cores-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

const caseFile = join(tmp, 'cores.yaml');
// branch switching to depth 2: the branches of branch 1's two branch points, and theirs
const size = { intervals: 48, maxPoints: 50 };

beforeAll(() => {
  ensureBuilt();
  writeFileSync(caseFile, switchingCase('cores', '{every-points: 3, every-seconds: 60}', size).replace('depth: 1', 'depth: 2'));
});

/** Every file below `dir`, relative, sorted. */
function files(dir: string): string[] {
  const out: string[] = [];
  const walk = (d: string): void => {
    for (const e of readdirSync(d, { withFileTypes: true })) {
      const p = join(d, e.name);
      if (e.isDirectory()) walk(p);
      else out.push(relative(dir, p));
    }
  };
  walk(dir);
  return out.sort();
}

/**
 * A run.json or refine.json without what may differ (README: "What may differ from a local
 * run"): its times, and refine.json's record of how many grids ran side by side (`plan.jobs`).
 */
function withoutTimes(text: string): unknown {
  const doc = JSON.parse(text, (key, value) => (['started', 'ended', 'timings', 'seconds', 'resumed'].includes(key) ? undefined : value));
  if (doc.plan) delete doc.plan.jobs;
  return doc;
}

/** `dir` holds the same files as `reference`, byte for byte but for the time fields of its JSON records. */
function expectSameBytes(dir: string, reference: string, what: string): void {
  const names = files(reference);
  expect(files(dir), what).toEqual(names);
  for (const f of names) {
    const a = readFileSync(join(dir, f));
    const b = readFileSync(join(reference, f));
    if (/(^|\/)(run|refine)\.json$/.test(f)) expect(withoutTimes(a.toString()), `${what}: ${f}`).toEqual(withoutTimes(b.toString()));
    else expect(a.equals(b), `${what}: ${f} differs`).toBe(true);
  }
}

describe('a run with branch switching', () => {
  const one = join(tmp, 'one-core');
  const two = join(tmp, 'two-cores');

  it('gives the same files on one core and on two', async () => {
    const r1 = await cli('run', caseFile, '--out', one, '--cores', '1', '--quiet');
    expect(r1.code, r1.err).toBe(0);
    const r2 = await cli('run', caseFile, '--out', two, '--cores', '2');
    expect(r2.code, r2.err).toBe(0);
    // the helper threads were there and none failed (a failed one's branch is traced in the
    // run's own thread, with a warning: the files would still agree)
    expect(r2.err).toMatch(/2 cores: \d+ branch(es)? traced in helper threads, \d+ out of turn in this one/);
    expect(r2.err).not.toMatch(/helper thread (failed|ended)/);
    // the case exercises what two cores share out: branches of branches, several per branch point
    const run = json(join(one, 'run.json'));
    expect(readdirSync(join(one, 'branches')).length).toBeGreaterThanOrEqual(5);
    expect(run.status).toBe('finished');
    expectSameBytes(two, one, 'two cores');
  }, 120_000);

  it('killed on two cores while its branches are traced, and resumed, gives the same files', async () => {
    // SIGKILL once a branch after a branch point is being written (helpers at work); a trial whose
    // run finished first is repeated
    let dir = '';
    let killed = false;
    for (let k = 0; k < 4 && !killed; k++) {
      dir = join(tmp, `killed-${k}`);
      const p = start(['run', caseFile, '--out', dir, '--cores', '2', '--quiet']);
      let done = false;
      void p.ended.then(() => (done = true));
      while (!done && !existsSync(join(dir, 'branches', '3.csv'))) await sleep(5);
      if (!done) {
        p.child.kill('SIGKILL');
        killed = (await p.ended).signal === 'SIGKILL' && existsSync(join(dir, 'checkpoint.bin')) && json(join(dir, 'run.json')).status === 'running';
      }
    }
    expect(killed, 'a run killed half-way').toBe(true);
    const r = start(['resume', dir, '--cores', '2', '--quiet']);
    const e = await r.ended;
    expect(e.code, e.err).toBe(0);
    expect(json(join(dir, 'run.json')).resumed).toHaveLength(1);
    expectSameBytes(dir, one, 'killed and resumed');
  }, 120_000);
});

describe('a refinement study', () => {
  it('gives the same files with its grids one after another and side by side', async () => {
    const a = join(tmp, 'refine-one');
    const b = join(tmp, 'refine-two');
    const ra = await cli('refine', caseFile, '--grids', '16,32,64', '--point', 'branch-point', '--out', a, '--cores', '1', '--quiet');
    expect(ra.code, ra.err).toBe(0);
    const rb = await cli('refine', caseFile, '--grids', '16,32,64', '--point', 'branch-point', '--out', b, '--cores', '2', '--quiet');
    expect(rb.code, rb.err).toBe(0);
    expect(json(join(a, 'refine.json')).status).toBe('finished');
    expect(statSync(join(b, 'refine.csv')).size).toBeGreaterThan(0);
    expectSameBytes(b, a, 'grids side by side');
  }, 180_000);
});
