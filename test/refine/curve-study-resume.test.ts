/**
 * A refinement study of a curve run, stopped after its first grid and resumed, analyses the same
 * point as the uninterrupted study. Without --branch a curve study takes the curve holding the
 * requested point (here the cusp, which lies on curve 2 of a fold curve followed both ways); the
 * resumed study must choose alike (its plan records that no branch was given), and with --branch
 * given it keeps that branch. The curve holding `KIND:N` is the first with N points of the kind. The resumed folder equals the uninterrupted one file for file, byte
 * for byte, but for the time fields the README names (`started`, `ended`, `timings`, `resumed` in
 * run.json, `seconds` in refine.json).
 */
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { main } from '../../src/cli/main.js';
import { prepareCase } from '../../src/run/case.js';
import { type StudyOptions, curveHoldingPoint, runStudy } from '../../src/refine/study.js';
import type { SpecialRecord } from '../../src/run/run-directory.js';
import { filesBelow, runRecordWithoutTimes } from '../cli/same-files.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-curve-study-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));
const json = (file: string): Record<string, any> => JSON.parse(readFileSync(file, 'utf8'));

// u_t = u_xx + p1 + p2 u − u³ on a no-flux line: the fold curve of its uniform states is
// 27 p1² = 4 p2³ with the cusp at the origin (the cubic normal form, from memory). Followed both
// ways from the first fold at p2 = 1: curve 1 goes up in p2 (no cusp), curve 2 down through it.
const cusp = {
  name: 'cusp',
  model: 'reaction-diffusion',
  fields: ['u'],
  parameters: { p1: -0.5, p2: 1 },
  reaction: { u: 'p1 + p2*u - u^3' },
  diffusion: { u: 1 },
  boundary: 'neumann',
  initial: { u: -1.2 },
  grid: { intervals: [8] },
  continuation: { follow: 'fold', parameter: 'p2', free: 'p1', bounds: [-0.5, 2], direction: 'both', step: { initial: 0.05, max: 0.1 } },
};
const grids = [8, 16, 32];

async function cli(...args: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = '';
  let err = '';
  const code = await main(['node', 'branchline', ...args], { out: (s) => (out += s), err: (s) => (err += s) });
  return { code, out, err };
}

/** The case file (JSON is YAML), as `refine CASE` reads it. */
const caseFile = join(tmp, 'cusp.yaml');
writeFileSync(caseFile, JSON.stringify(cusp, null, 1));

/** A study of the cusp, stopped (as Ctrl-C does: its signal) as soon as its first grid has finished. */
async function stoppedAfterFirstGrid(dir: string, options: Partial<StudyOptions>): Promise<void> {
  const prepared = await prepareCase(caseFile);
  const stop = new AbortController();
  const r = await runStudy(prepared, {
    grids,
    outDir: dir,
    ...options,
    signal: stop.signal,
    log: (_level, message) => {
      if (/^grid 8: finished/.test(message)) stop.abort();
    },
  });
  expect(r.status).toBe('stopped');
  expect(r.runs.map((x) => x.status)).toEqual(['finished', 'stopped', 'stopped']);
}

/** A study file without the time fields the README lists as free to differ. */
function withoutTimes(dir: string, file: string): unknown {
  if (file.endsWith('run.json')) return runRecordWithoutTimes(join(dir, file));
  if (file === 'refine.json') {
    const r = json(join(dir, file));
    for (const run of r.runs) delete run.seconds;
    return r;
  }
  return readFileSync(join(dir, file), 'utf8');
}

function expectSameStudy(dir: string, reference: string): void {
  expect(filesBelow(dir)).toEqual(filesBelow(reference));
  for (const f of filesBelow(reference)) {
    if (f.endsWith('.npy')) expect(readFileSync(join(dir, f)).equals(readFileSync(join(reference, f))), f).toBe(true);
    else expect(withoutTimes(dir, f), f).toEqual(withoutTimes(reference, f));
  }
}

describe('a curve study stopped after its first grid and resumed', () => {
  it('without --branch: the resumed study analyses the cusp on curve 2, as the uninterrupted one does', async () => {
    const reference = join(tmp, 'reference');
    const a = await cli('refine', caseFile, '--grids', grids.join(','), '--point', 'cusp', '--out', reference, '--quiet');
    expect(a.code, a.err).toBe(0);
    expect(a.out).toMatch(/Refinement of p2 at cusp 1 on branch 2 \(case cusp\), 3 grids/);
    const ref = json(join(reference, 'refine.json'));
    expect(ref).toMatchObject({ status: 'finished', branch: 2, point: 'cusp 1 on branch 2' });
    expect(ref.plan['branch-given']).toBe(false);
    // the cusp of 27 p1² = 4 p2³ at the origin, on every grid (uniform states do not depend on h)
    for (const r of ref.runs) expect(Math.abs(r.value)).toBeLessThan(1e-8);

    const dir = join(tmp, 'stopped');
    await stoppedAfterFirstGrid(dir, { point: { kind: 'cusp', index: 1 } });
    expect(json(join(dir, 'refine.json')).plan).toMatchObject({ branch: 1, 'branch-given': false });
    const r = await cli('resume', dir, '--quiet');
    expect(r.code, r.err).toBe(0);
    expect(r.out).toMatch(/Refinement of p2 at cusp 1 on branch 2 \(case cusp\), 3 grids/);
    expectSameStudy(dir, reference);
  }, 60_000);

  it('with --branch 1 given: the resumed study keeps curve 1 (which has no cusp) and says so', async () => {
    const dir = join(tmp, 'stopped-branch-1');
    await stoppedAfterFirstGrid(dir, { point: { kind: 'cusp', index: 1 }, branch: 1 });
    expect(json(join(dir, 'refine.json')).plan).toMatchObject({ branch: 1, 'branch-given': true });
    const r = await cli('resume', dir, '--quiet');
    expect(r.code).toBe(1);
    expect(r.out).toMatch(/Refinement of p2 at cusp 1 on branch 1 \(case cusp\)/);
    expect(r.out).toMatch(/Warning: grid 8: no cusp 1 on branch 1/);
    expect(json(join(dir, 'refine.json'))).toMatchObject({ status: 'failed', branch: 1 });
  }, 60_000);
});

describe('the curve that holds the point', () => {
  const rec = (kind: string, branch: number): SpecialRecord => ({ kind, branch, parameter: 'p2', value: 0, arclength: 0, monitors: {}, residual: 0 });
  it('is the lowest-numbered curve with at least N points of the kind, in the first grid that has one', () => {
    const grid = [rec('end', 1), rec('zero-hopf', 1), rec('zero-hopf', 2), rec('zero-hopf', 2), rec('end', 2)];
    expect(curveHoldingPoint([grid], { kind: 'zero-hopf', index: 1 })).toBe(1);
    expect(curveHoldingPoint([grid], { kind: 'zero-hopf', index: 2 })).toBe(2);
    expect(curveHoldingPoint([grid], { kind: 'zero-hopf', index: 3 })).toBeUndefined();
    expect(curveHoldingPoint([grid], { kind: 'cusp', index: 1 })).toBeUndefined();
    // a grid without the point does not decide; the first grid with it does
    expect(curveHoldingPoint([[rec('end', 1)], grid], { kind: 'zero-hopf', index: 2 })).toBe(2);
    expect(curveHoldingPoint([[rec('cusp', 3)], [rec('cusp', 2)]], { kind: 'cusp', index: 1 })).toBe(3);
  });
});
