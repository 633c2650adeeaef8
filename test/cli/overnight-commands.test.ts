/**
 * The rest of the overnight-runs command line: batches (several cases, worker processes, one
 * failing numerically), --json summaries, `resume` refusals, `check` on the bundled cases and on
 * a deliberately wrong model, `new` starter cases that `run` accepts, fuzzed case files that are
 * refused with one line and leave nothing `resume` would accept, and the progress display.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { hostname, tmpdir } from 'node:os';
import { basename, join, resolve } from 'node:path';
import fc from 'fast-check';
import { stringify } from 'yaml';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { models } from '../../discretisations/index.js';
import { prepareCase } from '../../src/run/case.js';
import { checkpointFile, previousCheckpointFile } from '../../src/run/checkpoint.js';
import { progressView } from '../../src/run/progress.js';
import { runCase } from '../../src/run/run-case.js';
import { Checkpointer } from '../../src/run/checkpoint.js';
import { fakeEngine } from '../run/fake-engine.js';
import { ensureBuilt } from './built.js';
import { bin, cli, json, writerIn } from './processes.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-overnight-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));
const slab = resolve('test/fixtures/run/bratu-1d.yaml');

const write = writerIn(tmp);
const noStackTrace = /\bat .*\.(ts|js|mjs):\d+|\n\s+at /;

// no steady state exists beyond the fold (λ* ≈ 3.51 for 1D Bratu, Bratu 1914): Newton cannot converge at λ = 3.9
const beyondText = 'name: beyond\nmodel: bratu\ngrid: {intervals: [16]}\nparameters: {lambda: 3.9}\ncontinuation: {parameter: lambda, bounds: [0, 4]}\n';
const pitchforkText =
  'name: pitchforks\nmodel: allen-cahn\ngrid: {intervals: [32]}\nparameters: {lambda: 1}\n' +
  'continuation: {parameter: lambda, bounds: [0, 25], step: {initial: 0.5, max: 1}, max-points: 40, branch-switching: {depth: 1}}\n';

beforeAll(() => ensureBuilt(), 60_000);

describe('batches', () => {
  it('three cases with --jobs 2, one failing numerically: the other two finish, exit 1, the summary says which and why', () => {
    const beyond = write('beyond.yaml', beyondText);
    const pitch = write('pitchforks.yaml', pitchforkText);
    const out = join(tmp, 'batch');
    const r = spawnSync(process.execPath, [bin, 'run', slab, beyond, pitch, '--out', out, '--jobs', '2', '--json'], { encoding: 'utf8' });
    expect(r.status, r.stderr).toBe(1);
    const summary = JSON.parse(r.stdout);
    expect(summary.status).toBe('failed');
    expect(summary.cases.map((c: any) => [c.name, c.status])).toEqual([
      ['slab-1d', 'finished'],
      ['beyond', 'failed'],
      ['pitchforks', 'finished'],
    ]);
    const failed = summary.cases[1];
    expect(failed.reason).toMatch(/^the start point did not converge at lambda = 3\.9/);
    expect(failed.directory).toBe(join(out, 'beyond'));
    expect(json(join(out, 'beyond', 'run.json'))).toMatchObject({ status: 'failed', failure: failed.reason });
    // the others finished with their files and special points
    expect(json(join(out, 'slab-1d', 'run.json')).status).toBe('finished');
    expect(summary.cases[0]['special-points'].some((p: any) => p.kind === 'fold' && Math.abs(p.value - 3.512) < 0.01)).toBe(true);
    expect(summary.cases[2]['special-points'].filter((p: any) => p.kind === 'branch-point').length).toBeGreaterThan(0);
    expect(summary.cases[2].branches.length).toBeGreaterThan(1);
    expect(readdirSync(out).sort()).toEqual(['beyond', 'pitchforks', 'slab-1d']);
    // log lines name their case; no stack trace anywhere
    expect(r.stderr).toMatch(/^branchline: beyond: warning: run failed: the start point did not converge/m);
    expect(r.stderr).not.toMatch(noStackTrace);
  }, 60_000);

  it('one after another in this process: each summary, then which failed and why', async () => {
    const out = join(tmp, 'sequential');
    const r = await cli('run', slab, write('beyond2.yaml', beyondText), '--out', out, '--quiet');
    expect(r.code).toBe(1);
    expect(r.out).toMatch(/^Case slab-1d: /);
    expect(r.out).toMatch(/\nCase beyond: .*\n.*\nRun failed after .*: the start point did not converge/);
    expect(r.out).toMatch(/\n2 cases: 1 finished, 1 failed\.\n {2}beyond failed: the start point did not converge at lambda = 3\.9/);
    expect(r.err).toMatch(/^branchline: beyond: warning: run failed/m);
  });

  it('checks every case and output folder before running any: bad input exits 2 and nothing is written', async () => {
    const out = join(tmp, 'refused');
    const bad = write('bad-grid.yaml', 'model: bratu\ngrid: {intervals: [0]}\ncontinuation: {parameter: lambda, bounds: [0, 4]}\n');
    const junk = write('junk.yaml', 'model: [\n');
    const r = await cli('run', slab, bad, junk, '--out', out);
    expect(r.code).toBe(2);
    expect(r.out).toBe('');
    const lines = r.err.trimEnd().split('\n');
    expect(lines).toHaveLength(3);
    expect(lines[0]).toMatch(/bad-grid\.yaml: grid\.intervals\[0\]: 0 is not accepted/);
    expect(lines[1]).toMatch(/junk\.yaml: not valid YAML/);
    expect(lines[2]).toBe('branchline: nothing was run: 2 of 3 cases cannot run');
    expect(existsSync(out)).toBe(false);
    // two cases writing to the same folder, and --jobs out of range
    const twin = await cli('run', slab, slab, '--out', join(tmp, 'twins'));
    expect(twin.code).toBe(2);
    expect(twin.err).toMatch(/writes to the same output folder as .*bratu-1d\.yaml .*give the cases different names/);
    const jobs = await cli('run', slab, '--jobs', 'many');
    expect(jobs.code).toBe(2);
    expect(jobs.err).toBe("branchline: --jobs: 'many' is not accepted (accepted: a whole number from 1 to 64)\n");
  });

  it('--json for a single case: name, folder, status and special points', async () => {
    const out = join(tmp, 'single-json');
    const r = await cli('run', slab, '--out', out, '--json', '--quiet');
    expect(r.code).toBe(0);
    const s = JSON.parse(r.out);
    expect(s.status).toBe('finished');
    expect(s.cases).toHaveLength(1);
    expect(s.cases[0]).toMatchObject({ name: 'slab-1d', directory: out, status: 'finished', 'case-file': slab });
    expect(s.cases[0]['special-points'].map((p: any) => p.kind)).toEqual(['fold', 'end']);
    // an ignition model: the caution travels with the machine-readable summary as with the text one
    expect(s.cases[0].caution).toMatch(/not a substitute for design codes.*local codes and licensed practice govern/);
  });
});

describe('resume refuses what it cannot continue (exit 2, one line)', () => {
  const expectRefusal = (r: { code: number; out: string; err: string }, pattern: RegExp): void => {
    expect(r.code).toBe(2);
    expect(r.out).toBe('');
    expect(r.err.trimEnd().split('\n')).toHaveLength(1);
    expect(r.err).toMatch(pattern);
    expect(r.err).not.toMatch(noStackTrace);
  };

  it('a missing folder, a file, a folder without a run', async () => {
    expectRefusal(await cli('resume', join(tmp, 'absent')), /absent: no such folder\n$/);
    expectRefusal(await cli('resume', slab), /bratu-1d\.yaml: is a file, not a run folder/);
    mkdirSync(join(tmp, 'empty'));
    expectRefusal(await cli('resume', join(tmp, 'empty')), /empty: holds no branchline run/);
  });

  it('a finished run', async () => {
    const out = join(tmp, 'finished');
    expect((await cli('run', slab, '--out', out, '--quiet')).code).toBe(0);
    expectRefusal(await cli('resume', out), /finished: the run finished at .*; there is nothing to resume/);
  });

  it('a run without a usable checkpoint: missing, or every copy damaged', async () => {
    const out = join(tmp, 'no-checkpoint');
    expect((await cli('run', slab, '--out', out, '--quiet')).code).toBe(0);
    const run = json(join(out, 'run.json'));
    writeFileSync(join(out, 'run.json'), JSON.stringify({ ...run, status: 'stopped', checkpoint: { file: checkpointFile, sequence: 3, points: 20 } }));
    expectRefusal(await cli('resume', out), /cannot resume: run\.json records a checkpoint, but neither checkpoint\.bin nor checkpoint\.previous\.bin is there \(removed\?\)/);
    writeFileSync(join(out, checkpointFile), 'BLCHKPT1 cut short');
    writeFileSync(join(out, previousCheckpointFile), Buffer.alloc(100, 7));
    expectRefusal(await cli('resume', out), /cannot resume: no usable checkpoint: checkpoint\.bin is truncated \(18 bytes\); checkpoint\.previous\.bin is not a branchline checkpoint/);
  });

  it('a branch file cut short by hand (checked before anything is touched)', async () => {
    const dir = join(tmp, 'cut');
    const stopper = new AbortController();
    const checkpointer = new Checkpointer({ everyPoints: 2, everySeconds: 60 });
    await runCase(await prepareCase(slab), { outDir: dir, signal: stopper.signal, checkpoint: checkpointer.hook, progress: (p) => p.points >= 12 && stopper.abort() });
    const before = readFileSync(join(dir, 'points.json'), 'utf8');
    writeFileSync(join(dir, 'branches/1.csv'), 'point,arclength\n');
    expectRefusal(await cli('resume', dir), /cut: cannot resume: branches\/1\.csv has 16 bytes, fewer than the \d+ the checkpoint counts/);
    expect(readFileSync(join(dir, 'points.json'), 'utf8')).toBe(before);
    expect(json(join(dir, 'run.json')).status).toBe('stopped');
  });

  it('run.json naming a live pid is not a live writer: the lock decides (test/cli/locking.test.ts refuses a real live writer)', async () => {
    const dir = join(tmp, 'live');
    const stopper = new AbortController();
    // a run stopped after a few points leaves a checkpoint; then run.json names a live process
    // (this test's parent) as its writer — without that process holding the folder's lock
    const prepared = await prepareCase(slab);
    const checkpointer = new Checkpointer({ everyPoints: 2, everySeconds: 60 });
    await runCase(prepared, { outDir: dir, signal: stopper.signal, checkpoint: checkpointer.hook, progress: (p) => p.points >= 12 && stopper.abort() });
    const run = json(join(dir, 'run.json'));
    expect(run.status).toBe('stopped');
    writeFileSync(join(dir, 'run.json'), JSON.stringify({ ...run, status: 'running', process: { pid: process.ppid, host: hostname() } }));
    const resumed = await cli('resume', dir, '--quiet');
    expect(resumed.code, resumed.err).toBe(0);
    expect(json(join(dir, 'run.json')).status).toBe('finished');
  });
});

describe('check', () => {
  const bundled = readdirSync(resolve('cases')).filter((f) => /\.(ya?ml|json)$/.test(f));
  // a copy of cases/ beside its own runs/: a case that starts from an earlier run
  // (`start: {run: ../runs/NAME}`) is checked after the bundled case NAME has written that run
  const tree = join(tmp, 'bundled');
  const produced = new Set<string>();
  async function prerequisites(f: string): Promise<void> {
    const text = readFileSync(join(tree, 'cases', f), 'utf8');
    const start = /^start:\s*\{\s*run:\s*([^,}\s]+)/m.exec(text)?.[1];
    if (!start || produced.has(start)) return;
    const name = basename(start);
    const source = bundled.find((c) => new RegExp(`^name:\\s*${name}\\s*$`, 'm').test(readFileSync(join(tree, 'cases', c), 'utf8')));
    if (!source) throw new Error(`${f} starts from ${start}, which no bundled case writes`);
    await prerequisites(source);
    const command = /^time:/m.test(readFileSync(join(tree, 'cases', source), 'utf8')) ? 'settle' : 'run';
    const r = await cli(command, join(tree, 'cases', source), '--out', resolve(join(tree, 'cases'), start), '--quiet');
    expect(r.code, r.err).toBe(0);
    produced.add(start);
  }
  beforeAll(() => {
    mkdirSync(join(tree, 'cases'), { recursive: true });
    for (const f of bundled) writeFileSync(join(tree, 'cases', f), readFileSync(resolve('cases', f)));
  });
  it.each(bundled)('reports agreement on the bundled case %s', async (f) => {
    await prerequisites(f);
    const r = await cli('check', join(tree, 'cases', f));
    expect(r.code, r.out + r.err).toBe(0);
    expect(r.out).toMatch(/^Jacobian: agrees — largest relative error/m);
    expect(r.out).toMatch(/The Jacobian and the parameter derivatives agree with finite differences\.\n$/);
  });

  it('points at the wrong entry of a deliberately wrong code model (exit 1)', async () => {
    // test/fixtures/code-model.mjs with `wrong: true`: row 4's coupling to column 5 has the wrong sign
    const file = write('wrong-model.yaml', `name: wrong\nmodel: ${resolve('test/fixtures/code-model.mjs')}\nwrong: true\ngrid: {intervals: [20]}\ncontinuation: {parameter: lambda, bounds: [0, 30]}\n`);
    const r = await cli('check', file);
    expect(r.code).toBe(1);
    expect(r.out).toMatch(/^Jacobian: disagrees — .*; 1 entry differs$/m);
    expect(r.out).toMatch(/^ {4}row 4, column 5: analytic -400, finite difference 400, relative error 2\.0e\+0$/m);
    expect(r.out).toMatch(/^derivative in lambda \(the continuation parameter\): agrees/m);
    const right = await cli('check', write('right-model.yaml', readFileSync(file, 'utf8').replace('wrong: true\n', '')));
    expect(right.code).toBe(0);
  });

  it('a bad case file exits 2; a bad tolerance exits 2', async () => {
    expect((await cli('check', write('bad.yaml', 'model: bratoo\n'))).code).toBe(2);
    const t = await cli('check', slab, '--tolerance', '2');
    expect(t.code).toBe(2);
    expect(t.err).toMatch(/--tolerance: '2' is not accepted/);
  });
});

describe('new', () => {
  it.each(Object.keys(models))('prints a commented starter case for %s that the case reader accepts', async (id) => {
    const r = await cli('new', id);
    expect(r.code).toBe(0);
    expect(r.out).toMatch(new RegExp(`^# A starter case for the model '${id}'`));
    expect(r.out).toMatch(/\n {2}parameter: /);
    const file = write(`starter-${id}.yaml`, r.out);
    const prepared = await prepareCase(file);
    expect(prepared.case.model).toBe(id);
    expect(prepared.case.name).toBe(`${id}-study`);
    // and its derivatives check out
    expect((await cli('check', file)).code).toBe(0);
  });

  it('the bratu starter runs to the end and finds the ignition fold', async () => {
    const file = write('starter.yaml', (await cli('new', 'bratu')).out);
    const r = await cli('run', file, '--out', join(tmp, 'starter-run'), '--quiet');
    expect(r.code, r.err).toBe(0);
    // 1D Bratu fold λ* = 3.513830719125 (exact, Bratu 1914); 100 intervals: within O(h²)
    expect(r.out).toMatch(/fold at lambda = 3\.51\d+/);
  });

  it('2D and 3D starters; an unknown model or dimension exits 2', async () => {
    const two = await cli('new', 'bratu', '--dimensions', '2');
    expect(two.out).toMatch(/intervals: \[64, 64\]/);
    expect((await prepareCase(write('starter-2d.yaml', two.out))).case.grid.intervals).toEqual([64, 64]);
    const none = await cli('new', 'bratoo');
    expect(none.code).toBe(2);
    expect(none.err).toMatch(/'bratoo' is not a known model \(accepted: bratu, /);
    const dim = await cli('new', 'elastica', '--dimensions', '2');
    expect(dim.code).toBe(2);
    expect(dim.err).toMatch(/model 'elastica' supports 1D, not 2D/);
  });
});

describe('fuzzed case files', () => {
  const base = (): Record<string, any> => ({
    name: 'fuzz',
    model: 'bratu',
    boundary: 'dirichlet',
    grid: { intervals: [16], length: [1] },
    parameters: { lambda: 0.5 },
    continuation: { parameter: 'lambda', bounds: [0, 4], direction: 'increase', step: { initial: 0.1, min: 1e-6, max: 0.5 }, 'max-points': 50, 'stop-when': [{ monitor: 'max', above: 5 }], 'branch-switching': { depth: 1 } },
    stability: { eigenvalues: 2 },
    output: { solutions: 'special' },
    checkpoint: { 'every-points': 10, 'every-seconds': 30 },
  });
  const paths: (string | number)[][] = [
    ['name'], ['model'], ['boundary'], ['grid'], ['grid', 'intervals'], ['grid', 'intervals', 0], ['grid', 'length'], ['parameters'], ['parameters', 'lambda'],
    ['continuation'], ['continuation', 'parameter'], ['continuation', 'bounds'], ['continuation', 'bounds', 0], ['continuation', 'direction'], ['continuation', 'step'],
    ['continuation', 'step', 'min'], ['continuation', 'max-points'], ['continuation', 'stop-when'], ['continuation', 'stop-when', 0, 'monitor'],
    ['continuation', 'branch-switching', 'depth'], ['stability', 'eigenvalues'], ['output', 'solutions'], ['checkpoint', 'every-points'], ['colour'],
  ];
  const wrong = fc.oneof(
    fc.constant(undefined), // missing key
    fc.string({ maxLength: 12 }), // wrong type or unknown name
    fc.constantFrom('bratoo', 'sideways', 'lambada', 'everything', '', '-1', 'nan'),
    fc.constantFrom(NaN, Infinity, -Infinity, 1e308, -1e308, 5e-324, 0, -1, 2 ** 53, 1e9, 123456789), // extreme numbers
    fc.double(),
    fc.integer(),
    fc.boolean(),
    fc.constant(null),
    fc.array(fc.oneof(fc.integer(), fc.string({ maxLength: 4 })), { maxLength: 4 }),
    fc.dictionary(fc.string({ maxLength: 5 }), fc.integer(), { maxKeys: 3 }),
  );
  const fieldLine = /^branchline: \S+\.yaml: ([a-z][\w-]*(\[\d+\]|\.[\w:-]+)*): .+\n$/i;

  /** Refused with exit 2, one line naming a field, nothing left that `resume` accepts. */
  async function refused(file: string, out: string): Promise<string> {
    const r = await cli('run', file, '--out', out, '--quiet');
    expect(r.code, r.err).toBe(2);
    expect(r.out).toBe('');
    expect(r.err.split('\n')).toHaveLength(2);
    expect(r.err).not.toMatch(noStackTrace);
    expect(existsSync(out)).toBe(false);
    const again = await cli('resume', out);
    expect(again.code).toBe(2);
    return r.err;
  }

  it('wrong types, missing keys, extreme numbers and unknown names: exit 2, one line naming the field, no run folder', async () => {
    let n = 0;
    let refusals = 0;
    await fc.assert(
      fc.asyncProperty(fc.constantFrom(...paths), wrong, async (path, value) => {
        const doc = base();
        let o: any = doc;
        for (const k of path.slice(0, -1)) o = o[k];
        if (value === undefined) delete o[path[path.length - 1]];
        else o[path[path.length - 1]] = value;
        const file = join(tmp, `fuzz-${++n}.yaml`);
        let text: string;
        try {
          text = stringify(doc);
        } catch {
          return true;
        }
        writeFileSync(file, text);
        // a mutation that happens to give a valid case would run: leave those out
        try {
          await prepareCase(file);
          return true;
        } catch {
          /* refused, as expected */
        }
        const err = await refused(file, join(tmp, `fuzz-out-${n}`));
        expect(err).toMatch(fieldLine);
        refusals++;
        return true;
      }),
      { numRuns: 150 },
    );
    expect(refusals).toBeGreaterThan(100);
  }, 60_000);

  it('broken YAML and binary junk: exit 2, one line, no run folder', async () => {
    let n = 0;
    await fc.assert(
      fc.asyncProperty(
        fc.oneof(
          fc.uint8Array({ minLength: 1, maxLength: 300 }).map((b) => Buffer.from(b)),
          fc.string({ unit: 'binary', maxLength: 200 }).map((s) => Buffer.from(s, 'utf8')),
          fc.constantFrom('model: bratu\ngrid: {intervals: [16]\n', 'a: b: c', '[1, 2', '{model: bratu', '- - -\n  x', 'model: &a [*a]', '\t\tmodel: bratu').map((s) => Buffer.from(s)),
        ),
        async (bytes) => {
          const file = join(tmp, `junk-${++n}.yaml`);
          writeFileSync(file, bytes);
          const err = await refused(file, join(tmp, `junk-out-${n}`));
          expect(err.startsWith(`branchline: ${file}: `)).toBe(true);
          return true;
        },
      ),
      { numRuns: 120 },
    );
  }, 60_000);

  it('the real binary on junk: exit 2, one line, no stack trace', () => {
    for (const [name, bytes] of [
      ['random.yaml', Buffer.from(Array.from({ length: 256 }, (_, i) => (i * 151 + 7) % 256))],
      ['huge-grid.yaml', Buffer.from('model: bratu\ngrid: {intervals: [100000, 100000]}\ncontinuation: {parameter: lambda, bounds: [0, 4]}\n')],
    ] as const) {
      const file = write(name, bytes as unknown as string);
      const r = spawnSync(process.execPath, [bin, 'run', file, '--out', join(tmp, `bin-${basename(name)}`)], { encoding: 'utf8' });
      expect(r.status, r.stderr).toBe(2);
      expect(r.stderr.trimEnd().split('\n')).toHaveLength(1);
      expect(r.stderr).not.toMatch(noStackTrace);
      if (name === 'huge-grid.yaml') expect(r.stderr).toMatch(/grid\.intervals: grid 100000x100000: the sparse LU would need about [\d.]+ [GT]iB/);
    }
  }, 30_000);
});

describe('the progress display', () => {
  const info = (index: number, points: number) => ({ branch: 2, index, parameter: 1.25 + index, step: 0.125, points, maxPoints: 100 });

  it('elsewhere than a terminal: a plain line per case at the interval, log lines as they come, names in batches', () => {
    let clock = 0;
    let text = '';
    const v = progressView({ tty: false, quiet: false, write: (s) => (text += s), showNames: true, intervalSeconds: 10, now: () => clock });
    v.start('slab', 'lambda', 100);
    clock = 2000;
    v.update('slab', info(4, 20));
    expect(text).toBe(''); // not yet: the interval has not passed
    clock = 10_000;
    v.update('slab', info(9, 40));
    expect(text).toBe('branchline: slab: branch 2, point 10 of at most 100, lambda = 10.25, step 0.125, 2.1 points/s, 40 points in all, point limit in 43 s at most\n');
    v.log('slab', 'info', 'fold on branch 2');
    v.log('slab', 'warning', 'something odd');
    expect(text.split('\n').slice(1, 3)).toEqual(['branchline: slab: fold on branch 2', 'branchline: slab: warning: something odd']);
    v.end('slab');
    v.close();
  });

  it('--quiet: warnings only', () => {
    let text = '';
    const v = progressView({ tty: false, quiet: true, write: (s) => (text += s), showNames: false, intervalSeconds: 0 });
    v.start('a', 'lambda', 10);
    v.update('a', info(1, 2));
    v.log(undefined, 'info', 'branch 1 started');
    v.log(undefined, 'warning', 'careful');
    v.close();
    expect(text).toBe('branchline: warning: careful\n');
  });

  it('on a terminal: a bar with the point, branch, parameter, step and rate', async () => {
    let drawn = '';
    const stream = Object.assign(new (await import('node:stream')).Writable({ write: (c, _e, done) => ((drawn += c.toString()), done()) }), { isTTY: true, columns: 200 });
    let clock = 0;
    const v = progressView({ tty: true, quiet: false, write: () => {}, stream, showNames: false, now: () => clock });
    v.start('slab', 'lambda', 100);
    clock = 1000;
    v.update('slab', info(0, 1));
    clock = 5000;
    v.update('slab', info(41, 42));
    v.log(undefined, 'info', 'fold on branch 2');
    // the bars are redrawn on cli-progress's own timer (5 frames a second)
    await new Promise((r) => setTimeout(r, 400));
    v.close();
    expect(drawn).toMatch(/slab .* branch 2, point 42\/100 \| lambda = 42\.25 \| step 0\.125 \| 8\.4 points\/s \| limit in 7 s/);
    expect(drawn).toMatch(/branchline: fold on branch 2/);
  });
});

describe('checkpoints during a run (scripted engine)', () => {
  it('are written at the first point and then at sync points; a finished run removes them', async () => {
    const prepared = await prepareCase(slab);
    const written: number[] = [];
    const out = join(tmp, 'scripted');
    const checkpointer = new Checkpointer({ everyPoints: 5, everySeconds: 3600 });
    await runCase(prepared, {
      outDir: out,
      engine: fakeEngine(),
      checkpoint: (c) => {
        const w = checkpointer.hook(c);
        if (w) {
          written.push(w.points);
          expect(existsSync(join(out, checkpointFile))).toBe(true);
          expect(json(join(out, 'run.json')).status).toBe('running');
        }
        return w;
      },
    });
    // sync points: the first point, then whenever the count passes a multiple of 5
    expect(written).toEqual([1, 10]);
    expect(existsSync(join(out, checkpointFile))).toBe(false);
    expect(existsSync(join(out, previousCheckpointFile))).toBe(false);
  });
});
