/**
 * The `run` and `models` commands end to end: the real engine on a small 1D Bratu case, the
 * files it writes, exit codes, one-line errors, no run directory on bad input, and one spawned
 * run of the built binary.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { models } from '../../discretisations/index.js';
import { readCsv, readNpy } from '../../src/run/writers.js';
import { cli, json } from './processes.js';
import { robinSlabFold } from '../exact/bratu-robin.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-cli-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));
const fixture = resolve('test/fixtures/run/bratu-1d.yaml');


describe('branchline run (in process, real engine)', () => {
  const out = join(tmp, 'slab');
  let result: { code: number; out: string; err: string };
  beforeAll(async () => {
    result = await cli('run', fixture, '--out', out);
  });

  it('exits 0 and prints a short summary by branch', () => {
    expect(result.code, result.err).toBe(0);
    expect(result.out).toMatch(/^Case slab-1d: Bratu–Gelfand problem/);
    expect(result.out).toMatch(/\nBranch 1 \(from the start, lambda increasing\): \d+ points, fold at lambda = 3\.51\d+ \(max = 1\.1\d+\), ended: max went above 6 \(last point: max = [\d.]+\)\n/);
    expect(result.out).toMatch(/\nCaution: .*licensed/);
    expect(result.out.split('\n').length).toBeLessThan(12);
    expect(result.err).toMatch(/branchline: fold on branch 1 at lambda = 3\.51/);
  });

  it('writes run.json with status finished, h and the unknown count', () => {
    const run = json(join(out, 'run.json'));
    expect(run.status).toBe('finished');
    expect(run.problem.axes[0].h).toBe(1 / 32);
    expect(run.problem.unknowns).toBe(31); // Dirichlet ends eliminated: 32 intervals, 31 unknowns
    expect(run.branches[0]['stop-reason']).toBe('monitor-bound');
  });

  it('writes one CSV row per accepted point with the documented columns', () => {
    const run = json(join(out, 'run.json'));
    const csv = readCsv(join(out, 'branches/1.csv'));
    expect(csv.columns).toEqual(['point', 'arclength', 'lambda', 'max', 'min', 'l2-norm', 'centre', 'newton-iterations', 'residual', 'step-length']);
    expect(csv.rows.length).toBe(run.branches[0].points);
    expect(csv.rows.length).toBe(run.counts.points);
    expect(csv.rows[0][2]).toBe(0.2); // the start value
    // the branch passes the fold: lambda rises, then falls while max keeps rising
    const lambda = csv.rows.map((r) => r[2]);
    const top = lambda.indexOf(Math.max(...lambda));
    expect(top).toBeGreaterThan(0);
    expect(top).toBeLessThan(lambda.length - 1);
    expect(csv.rows[csv.rows.length - 1][3]).toBeGreaterThan(6);
  });

  it('records the fold in points.json with its solution file', () => {
    const points = json(join(out, 'points.json'));
    const fold = points.points.find((p: any) => p.kind === 'fold');
    expect(fold).toMatchObject({ branch: 1, parameter: 'lambda', located: true, turn: 'maximum' });
    // 1D Bratu fold λ* = 3.513830719125 (exact, Bratu 1914); on 32 intervals the discrete fold
    // lies within O(h²) of it (the engine's own tests check the order on finer grids)
    expect(Math.abs(fold.value - 3.513830719125)).toBeLessThan(0.01);
    const npy = readNpy(join(out, fold.solution));
    expect(npy.shape).toEqual([1, 33]);
    expect(npy.data[0]).toBe(0);
    expect(npy.data[32]).toBe(0);
    expect(Math.max(...npy.data)).toBe(fold.monitors.max);
    const end = points.points.find((p: any) => p.kind === 'end');
    expect(end.reason).toBe('monitor-bound');
  });

  it('refuses to overwrite the run without --force (exit 2), replaces it with --force', async () => {
    const again = await cli('run', fixture, '--out', out);
    expect(again.code).toBe(2);
    expect(again.err).toMatch(/^branchline: output folder .* is not empty \(it holds an earlier run\); choose another with --out, or pass --force/);
    const forced = await cli('run', fixture, '--out', out, '--force', '--quiet');
    expect(forced.code).toBe(0);
    expect(forced.err).toBe('');
  });
});

describe('branchline run: failures and bad input', () => {
  it('exits 1 with status failed when the start point does not converge', async () => {
    // no steady state exists beyond the fold (λ* ≈ 3.51 for 1D Bratu): Newton cannot converge at λ = 3.9
    const file = join(tmp, 'beyond.yaml');
    writeFileSync(file, 'name: beyond\nmodel: bratu\ngrid: {intervals: [16]}\nparameters: {lambda: 3.9}\ncontinuation: {parameter: lambda, bounds: [0, 4]}\n');
    const out = join(tmp, 'beyond');
    const r = await cli('run', file, '--out', out);
    expect(r.code).toBe(1);
    const run = json(join(out, 'run.json'));
    expect(run.status).toBe('failed');
    expect(run.failure).toMatch(/did not converge/);
    expect(r.out).toMatch(/Run failed after .*: .*did not converge/);
  });

  const bad: [string, string, RegExp][] = [
    ['wrong type', 'model: bratu\ngrid: {intervals: [16]}\ncontinuation: {parameter: lambda, bounds: [0, 4], max-points: many}\n', /: continuation\.max-points: 'many' is not accepted/],
    ['unknown model', 'model: bratoo\ngrid: {intervals: [16]}\ncontinuation: {parameter: lambda, bounds: [0, 4]}\n', /: model: 'bratoo' is not a known model \(accepted: bratu/],
    ['unknown parameter', 'model: bratu\ngrid: {intervals: [16]}\nparameters: {mu: 1}\ncontinuation: {parameter: lambda, bounds: [0, 4]}\n', /: parameters\.mu: unknown parameter for model 'bratu' \(accepted: lambda\)/],
    ['negative grid', 'model: bratu\ngrid: {intervals: [-16]}\ncontinuation: {parameter: lambda, bounds: [0, 4]}\n', /: grid\.intervals\[0\]: -16 is not accepted/],
    ['bounds reversed', 'model: bratu\ngrid: {intervals: [16]}\ncontinuation: {parameter: lambda, bounds: [4, 0]}\n', /: continuation\.bounds: \[4, 0\] is reversed/],
    [
      'bad expression',
      'model: reaction-diffusion\nfields: [u]\nparameters: {mu: 1}\nreaction: {u: "mu*exp(u"}\ndiffusion: {u: 1}\nboundary: dirichlet\ngrid: {intervals: [8]}\ncontinuation: {parameter: mu, bounds: [0, 2]}\n',
      /: reaction\.u: reaction for field 'u': syntax error/,
    ],
    ['broken YAML', 'model: bratu\ngrid: {intervals: [16]\n', /: not valid YAML/],
  ];
  for (const [what, text, pattern] of bad) {
    it(`${what}: one line on stderr, exit 2, no run directory`, async () => {
      const file = join(tmp, `${what.replace(/ /g, '-')}.yaml`);
      writeFileSync(file, text);
      const out = join(tmp, `out-${what.replace(/ /g, '-')}`);
      const r = await cli('run', file, '--out', out);
      expect(r.code).toBe(2);
      expect(r.out).toBe('');
      expect(r.err.endsWith('\n')).toBe(true);
      expect(r.err.trimEnd().split('\n')).toHaveLength(1);
      expect(r.err).toMatch(new RegExp(`^branchline: ${file.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}: `));
      expect(r.err).toMatch(pattern);
      expect(r.err).not.toMatch(/\bat .*\.(ts|js):\d+/); // no stack trace
      expect(existsSync(out)).toBe(false);
    });
  }

  it('a missing case file and a missing argument exit 2', async () => {
    const r = await cli('run', join(tmp, 'absent.yaml'));
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/absent\.yaml: no such file\n$/);
    const none = await cli('run');
    expect(none.code).toBe(2);
    expect(none.err).toMatch(/missing required argument/);
  });
});

describe('branchline --version', () => {
  it("prints the package's version", async () => {
    const r = await cli('--version');
    expect(r.code).toBe(0);
    expect(r.out).toBe(`${JSON.parse(readFileSync('package.json', 'utf8')).version}\n`);
  });
});

describe('branchline models', () => {
  it('lists every registered model with its parameters and defaults', async () => {
    const r = await cli('models');
    expect(r.code).toBe(0);
    for (const [id, entry] of Object.entries(models)) {
      expect(r.out).toMatch(new RegExp(`^${id}  \\(`, 'm'));
      for (const p of entry.parameters) expect(r.out).toContain(`${p.name} = ${p.default}`);
    }
    expect(r.out).toContain('key boundary: dirichlet | robin (default dirichlet)');
  });
});

describe('the built binary', () => {
  it('runs a case from the command line (node bin/branchline.js run)', () => {
    // dist/ is compiled once by the global setup (test/setup/build.ts)
    expect(existsSync('dist/src/cli/main.js')).toBe(true);
    const out = join(tmp, 'spawned');
    const r = spawnSync(process.execPath, ['bin/branchline.js', 'run', fixture, '--out', out], { encoding: 'utf8' });
    expect(r.status, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/Branch 1 \(from the start, lambda increasing\)/);
    expect(readdirSync(out).sort()).toEqual(['branches', 'diagram.svg', 'plots', 'points.csv', 'points.json', 'run.json', 'solutions']);
    expect(json(join(out, 'run.json')).status).toBe('finished');
    const bad = spawnSync(process.execPath, ['bin/branchline.js', 'run', join(tmp, 'absent.yaml')], { encoding: 'utf8' });
    expect(bad.status).toBe(2);
    expect(bad.stderr).toMatch(/^branchline: .*absent\.yaml: no such file\n$/);
    // the version the binary reports in run.json is the package's
    expect(execFileSync(process.execPath, ['-e', 'process.stdout.write(require("./package.json").version)'], { encoding: 'utf8' })).toBe(
      json(join(out, 'run.json')).software.version,
    );
  });
});

describe('the bundled demo case (cases/catalytic-slab.yaml)', () => {
  it('runs and finds the ignition fold of the slab with convective faces at the exact value', async () => {
    const out = join(tmp, 'catalytic-slab');
    const r = await cli('run', resolve('cases/catalytic-slab.yaml'), '--out', out, '--quiet');
    expect(r.code, r.err).toBe(0);
    const fold = json(join(out, 'points.json')).points.find((p: any) => p.kind === 'fold');
    // the exact fold of the slab with convective faces at Bi = 5 (Bratu 1914, worked for Robin faces: test/exact/bratu-robin.ts)
    const exact = robinSlabFold(5);
    expect(exact).toBeCloseTo(1.8883, 4);
    // 200 intervals, second-order stencil and faces: within O(h²) = O(2.5e-5)
    expect(Math.abs(fold.value - exact)).toBeLessThan(1e-4);
    expect(r.out).toMatch(/fold at lambda = 1\.888/);
    expect(r.out).toMatch(/\nCaution: /);
  });
});

describe('stability columns from the real engine', () => {
  it('fills stable, unstable-count and the leading eigenvalue; the 1D Bratu branch loses stability at the fold', async () => {
    const file = join(tmp, 'stability.yaml');
    writeFileSync(
      file,
      'name: stability\nmodel: bratu\ngrid: {intervals: [24]}\nparameters: {lambda: 0.2}\n' +
        'continuation: {parameter: lambda, bounds: [0, 4], stop-when: [{monitor: max, above: 3}]}\nstability: {eigenvalues: 2}\n',
    );
    const out = join(tmp, 'stability');
    const r = await cli('run', file, '--out', out, '--quiet');
    expect(r.code, r.err).toBe(0);
    const text = readFileSync(join(out, 'branches/1.csv'), 'utf8').split('\n');
    const header = text[0].split(',');
    expect(header.slice(-10)).toEqual(['stable', 'unstable-count', 'leading-real', 'leading-imag', 'search-complete', 'eigenvalue-1-real', 'eigenvalue-1-imag', 'eigenvalue-2-real', 'eigenvalue-2-imag', 'unexplained-change']);
    const rows = text.slice(1, -1).map((l) => l.split(','));
    const col = (name: string): string[] => rows.map((row) => row[header.indexOf(name)]);
    const lambda = col('lambda').map(Number);
    const top = lambda.indexOf(Math.max(...lambda));
    // the lower branch of the Bratu problem is stable, the upper one has one unstable eigenvalue
    // (standard result for the ignition problem, from memory)
    expect(col('stable').slice(0, top)).toEqual(new Array(top).fill('true'));
    expect(col('stable').slice(top + 1)).toEqual(new Array(rows.length - top - 1).fill('false'));
    expect(col('unstable-count').slice(top + 1).every((c) => c === '1')).toBe(true);
    expect(Number(col('leading-real')[0])).toBeLessThan(0);
    expect(Number(col('leading-real')[rows.length - 1])).toBeGreaterThan(0);
    // both eigenvalues per point, rightmost first; a 1D Dirichlet diffusion operator has real ones
    expect(col('search-complete').every((c) => c === 'true')).toBe(true);
    for (const row of rows) {
      expect(Number(row[header.indexOf('eigenvalue-1-real')])).toBe(Number(row[header.indexOf('leading-real')]));
      expect(Number(row[header.indexOf('eigenvalue-2-real')])).toBeLessThan(Number(row[header.indexOf('eigenvalue-1-real')]));
      expect(Number(row[header.indexOf('eigenvalue-2-imag')])).toBe(0);
    }
  });
});
