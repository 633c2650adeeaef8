/**
 * A search for steady states (find-states) interrupted at any point resumes with `branchline
 * resume DIR` and ends with the files of the same search never interrupted — every CSV, .npy and
 * SVG byte for byte, every run.json (the search's and each trace's) equal but for the time fields
 * the README lists under "What may differ" (started, ended, timings, resumed): stopped on request
 * after its first state, stopped in the middle of a trace, SIGTERM in a trace and then two
 * signals at once during the resume (exit 130), killed (SIGKILL, a real process) right after its
 * first checkpoint and again in the middle of a trace, and killed during its first solve (it
 * starts over). The oracle is the uninterrupted search (a resume must not change any result);
 * its states are checked against independent residuals in test/deflation/find-states.test.ts.
 *
 * Refused in one line with exit code 2, nothing written: a checkpoint whose state was edited (its
 * checksum made good again), one whose case was edited, one whose search lost a solve, a trace
 * under way whose checkpoint names another case, a checkpoint copied from a search of another
 * case, a folder forged to name a code model (never loaded); a finished search says there is
 * nothing to resume.
 */
import { cpSync, existsSync, lstatSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { decodeCheckpoint, encodeCheckpoint } from '../../src/run/checkpoint.js';
import { prepareFindCase } from '../../src/run/find-states-case.js';
import { findStates } from '../../src/run/find-states.js';
import { ensureBuilt } from './built.js';
import { cli, json, sleep, start } from './processes.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-find-resume-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

// five states at λ = 50 (Chafee & Infante 1974), each traced both ways with checkpoints every 3 points
const caseText = `name: strip
model: allen-cahn
grid: {intervals: [40]}
parameters: {lambda: 50}
search:
  guesses: [{u: sin(pi*x)}, {u: sin(2*pi*x)}, {u: sin(3*pi*x)}]
  trace: true
continuation: {parameter: lambda, bounds: [35, 65], step: {initial: 0.5, max: 2}, max-points: 30, branch-switching: {depth: 0}}
stability: {eigenvalues: 3}
checkpoint: {every-points: 3, every-seconds: 600}
`;
const write = (name: string, text: string): string => {
  writeFileSync(join(tmp, name), text);
  return join(tmp, name);
};
const caseFile = join(tmp, 'strip.yaml');
const reference = join(tmp, 'reference');

/** Every file below `dir` (relative paths), the folders' locks left out. */
function filesBelow(dir: string, rel = ''): string[] {
  const out: string[] = [];
  for (const n of readdirSync(join(dir, rel)).sort()) {
    const r = rel ? `${rel}/${n}` : n;
    if (lstatSync(join(dir, r)).isDirectory()) out.push(...filesBelow(dir, r));
    else if (n !== 'writer.lock') out.push(r);
  }
  return out;
}

/** run.json without the fields that may differ (README "What may differ"), the folder's path made the reference's. */
function comparableRecord(file: string, dir: string): Record<string, unknown> {
  const doc = JSON.parse(readFileSync(file, 'utf8').split(dir).join(reference)) as Record<string, unknown>;
  for (const k of ['started', 'ended', 'timings', 'resumed']) delete doc[k];
  return doc;
}

/** The folder holds exactly the reference's files: byte for byte, run.json files but for their times. */
function expectSameFiles(dir: string, what: string): void {
  const files = filesBelow(reference);
  expect(filesBelow(dir), what).toEqual(files);
  expect(files).toContain('traces/state-5-decrease/branches/1.csv');
  for (const f of files) {
    if (f.endsWith('run.json')) expect(comparableRecord(join(dir, f), dir), `${what}: ${f}`).toEqual(comparableRecord(join(reference, f), reference));
    else expect(readFileSync(join(dir, f)).equals(readFileSync(join(reference, f))), `${what}: ${f} differs from the uninterrupted search's`).toBe(true);
  }
  const run = json(join(dir, 'run.json'));
  expect(run.status).toBe('finished');
  expect(run.resumed.length).toBeGreaterThan(0);
}

/** Every file of a folder with its bytes (to show that a refusal wrote nothing). */
function contents(dir: string): Map<string, Buffer> {
  return new Map(filesBelow(dir).map((f) => [f, readFileSync(join(dir, f))]));
}

/** Resolves when `path` exists (polled). */
async function until(path: string, timeoutMs = 60_000, everyMs = 5): Promise<void> {
  const t0 = Date.now();
  while (!existsSync(path)) {
    if (Date.now() - t0 > timeoutMs) throw new Error(`${path} did not appear`);
    await sleep(everyMs);
  }
}

/** A search in this process, stopped (as by Ctrl-C) when `when` says so (polled between solves and steps). */
async function stoppedSearch(dir: string, when: (message: string) => boolean, poll?: () => boolean, file = caseFile): Promise<void> {
  const prepared = await prepareFindCase(file);
  const stop = new AbortController();
  const timer = poll ? setInterval(() => poll() && stop.abort(), 2) : undefined;
  try {
    const r = await findStates(prepared, { outDir: dir, signal: stop.signal, log: (_l, m) => when(m) && stop.abort() });
    expect(r.status).toBe('stopped');
  } finally {
    if (timer) clearInterval(timer);
  }
  expect(json(join(dir, 'run.json')).status).toBe('stopped');
}

beforeAll(async () => {
  writeFileSync(caseFile, caseText);
  const r = await cli('find-states', caseFile, '--out', reference, '--quiet');
  if (r.code !== 0) throw new Error(`the uninterrupted search failed: ${r.err}`);
}, 300_000);

describe('a search stopped on request resumes to the files of an uninterrupted one', () => {
  it('stopped after its first state', async () => {
    const dir = join(tmp, 'after-first');
    await stoppedSearch(dir, (m) => /^state 1 found/.test(m));
    expect(json(join(dir, 'run.json')).states.length).toBe(1);
    expect(existsSync(join(dir, 'checkpoint.bin'))).toBe(true);
    const r = await cli('resume', dir);
    expect(r.code, r.err).toBe(0);
    expect(r.err).toMatch(/resuming the search strip \(was stopped\) from checkpoint\.bin written .*: 1 solves, 1 states/);
    expectSameFiles(dir, 'stopped after the first state');
  }, 300_000);

  it('stopped in the middle of a trace (the trace goes on from its own checkpoint)', async () => {
    const dir = join(tmp, 'mid-trace');
    const traceCheckpoint = join(dir, 'traces/state-2-increase/checkpoint.bin');
    await stoppedSearch(dir, () => false, () => existsSync(traceCheckpoint));
    const trace = json(join(dir, 'traces/state-2-increase/run.json'));
    expect(trace.status).toBe('stopped');
    expect(trace.counts.points).toBeGreaterThan(0);
    expect(existsSync(traceCheckpoint)).toBe(true);
    const r = await cli('resume', dir);
    expect(r.code, r.err).toBe(0);
    expect(r.err).toMatch(/the search done; the trace of state 2 \(increase\) goes on from its checkpoint/);
    expectSameFiles(dir, 'stopped in a trace');
  }, 300_000);
});

describe('a search killed (SIGKILL) resumes to the files of an uninterrupted one', () => {
  it('killed after its first checkpoint, then killed again in the middle of a trace', async () => {
    ensureBuilt();
    const dir = join(tmp, 'killed');
    const first = start(['find-states', caseFile, '--out', dir, '--quiet']);
    await until(join(dir, 'checkpoint.bin'));
    first.child.kill('SIGKILL');
    expect((await first.ended).signal).toBe('SIGKILL');
    expect(json(join(dir, 'run.json')).status).toBe('running');
    const second = start(['resume', dir, '--quiet']);
    await until(join(dir, 'traces/state-1-decrease/checkpoint.bin'));
    second.child.kill('SIGKILL');
    expect((await second.ended).signal).toBe('SIGKILL');
    const last = start(['resume', dir]);
    const e = await last.ended;
    expect(e.code, e.err).toBe(0);
    expectSameFiles(dir, 'killed twice');
    expect(json(join(dir, 'run.json')).resumed.length).toBe(2);
  }, 300_000);
});

describe('stop signals (Ctrl-C, SIGTERM as Slurm sends before preempting)', () => {
  it('SIGTERM in a trace stops (exit 1, stopped, how to go on); SIGINT twice leaves at once (exit 130, stopped, no lock); resume ends with the same files', async () => {
    ensureBuilt();
    const dir = join(tmp, 'signals');
    const first = start(['find-states', caseFile, '--out', dir, '--quiet']);
    await until(join(dir, 'traces/state-1-increase/checkpoint.bin'));
    first.child.kill('SIGTERM');
    const e1 = await first.ended;
    expect(e1.code, e1.err).toBe(1);
    expect(e1.err).toMatch(/SIGTERM: finishing the current step, writing a checkpoint and stopping/);
    expect(e1.out).toMatch(/To continue: branchline resume /);
    expect(json(join(dir, 'run.json')).status).toBe('stopped');
    expect(json(join(dir, 'traces/state-1-increase/run.json')).status).toBe('stopped');
    // a resume, left at once on two signals during a trace
    const second = start(['resume', dir, '--quiet']);
    await until(join(dir, 'traces/state-2-increase/checkpoint.bin'));
    second.child.kill('SIGSTOP');
    second.child.kill('SIGINT');
    second.child.kill('SIGTERM');
    second.child.kill('SIGCONT');
    const e2 = await second.ended;
    if (e2.code === 130) {
      expect(e2.err).toMatch(/leaving at once/);
      const run = json(join(dir, 'run.json'));
      expect(run.status).toBe('stopped');
      expect(run.note).toMatch(/left at once on a second/);
    } else expect(e2.code, e2.err).toBe(1); // the first stop was done before the second signal came
    for (const f of filesBelow(dir)) if (f.endsWith('run.json')) expect(json(join(dir, f)).status, f).not.toBe('running');
    expect(existsSync(join(dir, 'writer.lock'))).toBe(false);
    expect(existsSync(join(dir, 'traces/state-2-increase/writer.lock'))).toBe(false);
    const last = await cli('resume', dir, '--quiet');
    expect(last.code, last.err).toBe(0);
    expectSameFiles(dir, 'stopped by signals');
  }, 300_000);
});

describe('a search killed during its first solve', () => {
  it('starts over from the case its run.json records and ends with the files of an uninterrupted search', async () => {
    ensureBuilt();
    // kill -9 as soon as run.json exists: the first solve and its checkpoint come later; should a
    // trial still see a checkpoint, it is repeated
    let dir = '';
    for (let k = 0; k < 5 && (dir === '' || existsSync(join(dir, 'checkpoint.bin'))); k++) {
      dir = join(tmp, `early-${k}`);
      const p = start(['find-states', caseFile, '--out', dir, '--quiet']);
      await until(join(dir, 'run.json'), 60_000, 1);
      p.child.kill('SIGKILL');
      expect((await p.ended).signal).toBe('SIGKILL');
    }
    expect(existsSync(join(dir, 'checkpoint.bin'))).toBe(false);
    const r = await cli('resume', dir);
    expect(r.code, r.err).toBe(0);
    expect(r.err).toMatch(/starting the search strip over from the case recorded in run\.json \(was running; it ended before its first checkpoint\)/);
    expectSameFiles(dir, 'started over');
  }, 300_000);
});

describe('a resume refuses in one line (exit 2) and writes nothing', () => {
  // a search stopped in the middle of a trace, copied and forged below
  const original = join(tmp, 'to-forge');
  beforeAll(async () => {
    await stoppedSearch(original, () => false, () => existsSync(join(original, 'traces/state-1-decrease/checkpoint.bin')));
  }, 120_000);
  const forged = (name: string, edit: (doc: ReturnType<typeof decodeCheckpoint>) => void): string => {
    const dir = join(tmp, name);
    cpSync(original, dir, { recursive: true });
    const doc = decodeCheckpoint(readFileSync(join(dir, 'checkpoint.bin')));
    edit(doc);
    // a valid checksum: only the content is forged
    writeFileSync(join(dir, 'checkpoint.bin'), encodeCheckpoint(doc));
    return dir;
  };
  const refused = async (dir: string, message: RegExp): Promise<void> => {
    const before = contents(dir);
    const r = await cli('resume', dir);
    expect(r.code).toBe(2);
    expect(r.err).toMatch(message);
    expect(r.err.trim().split('\n').length).toBe(1);
    expect(contents(dir)).toEqual(before);
    expect(existsSync(join(dir, 'writer.lock'))).toBe(false);
  };

  it('a checkpoint whose state was edited', async () => {
    const dir = forged('forged-state', (doc) => {
      (doc.engine as any).search.states[0].u[10] += 1e-3;
    });
    await refused(dir, /cannot resume: solutions\/state-1\.npy is not state 1 of checkpoint\.bin \(was either edited\?\)/);
  });

  it('a checkpoint whose case was edited, and one whose search lost a solve', async () => {
    await refused(
      forged('forged-case', (doc) => {
        (doc.case as any).search['max-solves'] = 7;
      }),
      /cannot resume: the case in checkpoint\.bin is not the case run\.json records/,
    );
    await refused(
      forged('forged-solves', (doc) => {
        (doc.engine as any).search.solves.pop();
      }),
      /cannot resume: the search in checkpoint\.bin has state \d+ .*|cannot resume: checkpoint\.bin does not count the solves/,
    );
  });

  it('a trace under way whose checkpoint names another case', async () => {
    const dir = forged('forged-trace', () => {});
    const file = join(dir, 'traces/state-1-decrease/checkpoint.bin');
    const doc = decodeCheckpoint(readFileSync(file));
    (doc.case as any).continuation.bounds = [0, 100];
    writeFileSync(file, encodeCheckpoint(doc));
    await refused(dir, /cannot resume: the case in traces\/state-1-decrease\/checkpoint\.bin is not the case its run\.json records/);
  });

  it('a checkpoint copied from a search of another case', async () => {
    const dir = join(tmp, 'copied');
    cpSync(original, dir, { recursive: true });
    const other = join(tmp, 'other');
    await stoppedSearch(other, (m) => /^state 2 found/.test(m), undefined, write('other.yaml', caseText.replace('lambda: 50', 'lambda: 52')));
    cpSync(join(other, 'checkpoint.bin'), join(dir, 'checkpoint.bin'));
    await refused(dir, /cannot resume: the case in checkpoint\.bin is not the case run\.json records/);
  }, 120_000);

  it('a folder forged to name a code model (checkpoint and run.json agreeing) never loads it', async () => {
    const marker = join(tmp, 'evil-was-imported');
    const evil = write('evil.mjs', `import { appendFileSync } from 'node:fs';\nappendFileSync(${JSON.stringify(marker)}, 'imported\\n');\nexport default function () { throw new Error('evil'); }\n`);
    const dir = forged('forged-model', (doc) => {
      (doc.case as any).model = evil;
    });
    const run = json(join(dir, 'run.json'));
    writeFileSync(join(dir, 'run.json'), JSON.stringify({ ...run, case: { ...run.case, model: evil } }));
    await refused(dir, /cannot resume: the run uses the code model .*evil\.mjs, and a run folder never loads code by itself/);
    expect(existsSync(marker)).toBe(false);
  });

  it('a finished search: there is nothing to resume', async () => {
    const before = contents(reference);
    const r = await cli('resume', reference);
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/the run finished at .*; there is nothing to resume/);
    expect(r.err.trim().split('\n').length).toBe(1);
    expect(contents(reference)).toEqual(before);
  });
});
