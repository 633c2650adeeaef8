/**
 * `branchline find-states` end to end: the folder of a search (run.json, states.csv, solves.csv,
 * the states as .npy, a picture of each), every saved state re-checked with a residual written
 * out here and its stability compared with the dense eigenvalues of a Jacobian written out here
 * (ml-matrix, a reference library); the traces of every state and the one diagram; a
 * disconnected branch that only the search reaches; one-line refusals of bad search sections.
 */
import { existsSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../src/cli/main.js';
import { parseCaseText } from '../../src/run/case.js';
import { readNpy } from '../../src/run/writers.js';
import { findAll, parseXml } from '../plot/xml-check.js';
import { laplacianEigenvalue, rms } from './helpers.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-find-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));
const json = (file: string): Record<string, any> => JSON.parse(readFileSync(file, 'utf8'));

async function cli(...args: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = '';
  let err = '';
  const code = await main(['node', 'branchline', ...args], { out: (s) => (out += s), err: (s) => (err += s) });
  return { code, out, err };
}

let counter = 0;
function caseFile(doc: unknown): string {
  const file = join(tmp, `case-${++counter}.json`);
  writeFileSync(file, JSON.stringify(doc));
  return file;
}

/** Rows of a CSV (no quoted cells) as maps of column to number, or to text where not a number (empty cells NaN). */
function rows(file: string): Record<string, any>[] {
  const [head, ...lines] = readFileSync(file, 'utf8').trim().split('\n');
  const columns = head.split(',');
  return lines.map((l) => Object.fromEntries(l.split(',').map((c, i) => [columns[i], c === '' ? NaN : Number.isNaN(Number(c)) ? c : Number(c)])));
}

/**
 * u″ + λ(u − u³) + s = 0 with u = 0 at both ends, the three-point formula written out: the
 * largest residual at the interior nodes, and the dense Jacobian of the interior unknowns.
 */
function allenCahn(u: Float64Array, lambda: number, s = 0): { residual: number; jacobian: Matrix } {
  const N = u.length - 1;
  const h = 1 / N;
  let residual = 0;
  const J = Matrix.zeros(N - 1, N - 1);
  for (let i = 1; i < N; i++) {
    residual = Math.max(residual, Math.abs((u[i - 1] - 2 * u[i] + u[i + 1]) / (h * h) + lambda * (u[i] - u[i] ** 3) + s));
    J.set(i - 1, i - 1, -2 / (h * h) + lambda * (1 - 3 * u[i] ** 2));
    if (i > 1) J.set(i - 1, i - 2, 1 / (h * h));
    if (i < N - 1) J.set(i - 1, i, 1 / (h * h));
  }
  return { residual, jacobian: J };
}

describe('find-states on the bundled Allen–Cahn strip (Chafee & Infante 1974: 2k + 1 states)', () => {
  const out = join(tmp, 'strip');
  let result: { code: number; out: string; err: string };
  const file = resolve('cases/alloy-strip-states.yaml');
  const doc = parseCaseText(readFileSync(file, 'utf8'), file) as Record<string, any>;
  const lambda = doc.parameters.lambda as number;
  beforeAll(async () => {
    // the bundled case with shorter traces (the search itself unchanged)
    result = await cli('find-states', caseFile({ ...doc, continuation: { ...doc.continuation, bounds: [0, 60], 'max-points': 40, step: { initial: 1, max: 4 } } }), '--out', out, '--quiet');
  }, 300_000);

  it('finds all five states once each, every one steady by a residual written out here', () => {
    expect(result.code, result.err).toBe(0);
    // (2π)² < 50 < (3π)² with the grid's own eigenvalues (k = 2): 2k + 1 = 5 states
    expect(laplacianEigenvalue(2, 100)).toBeLessThan(lambda);
    expect(laplacianEigenvalue(3, 100)).toBeGreaterThan(lambda);
    expect(result.out).toMatch(/^5 steady states found in \d+ solves/m);
    const states = rows(join(out, 'states.csv'));
    expect(states.map((s) => s.state)).toEqual([1, 2, 3, 4, 5]);
    const arrays = states.map((s) => readNpy(join(out, `solutions/state-${s.state}.npy`)));
    for (const a of arrays) {
      expect(a.shape).toEqual([1, 101]);
      expect(a.data[0]).toBe(0);
      expect(a.data[100]).toBe(0);
      expect(allenCahn(a.data, lambda).residual).toBeLessThan(1e-7);
    }
    for (let i = 0; i < arrays.length; i++) for (let j = i + 1; j < arrays.length; j++) expect(rms(arrays[i].data, arrays[j].data)).toBeGreaterThan(0.05);
  });

  it('reports each state’s stability as the dense eigenvalues of its Jacobian say, at every state', () => {
    const states = rows(join(out, 'states.csv'));
    for (const s of states) {
      const u = readNpy(join(out, `solutions/state-${s.state}.npy`)).data;
      const eig = new EigenvalueDecomposition(allenCahn(u, lambda).jacobian).realEigenvalues;
      expect(s['unstable-count']).toBe(eig.filter((e) => e > 0).length);
      expect(s.stable).toBe(eig.every((e) => e < 0) ? 1 : 0);
      const rightmost = Math.max(...eig);
      expect(Math.abs(s['leading-real'] - rightmost)).toBeLessThan(1e-7 * Math.max(1, Math.abs(rightmost)));
    }
    // the Morse indices: k on u = 0, 0 on ±u₁, 1 on ±u₂ (Chafee & Infante 1974, from memory)
    expect(states.map((s) => s['unstable-count']).sort()).toEqual([0, 0, 1, 1, 2]);
  });

  it('says how many solves ended at each state, and every solve in solves.csv', () => {
    const states = rows(join(out, 'states.csv'));
    const solves = rows(join(out, 'solves.csv'));
    expect(readFileSync(join(out, 'solves.csv'), 'utf8').split('\n')[0]).toBe('solve,guess,deflated,outcome,state,newton-iterations,residual,failure');
    expect(solves.map((r) => r.solve)).toEqual(solves.map((_, i) => i + 1));
    expect(solves.filter((r) => r.outcome === 'new').length).toBe(5);
    // how many solves ended at each: every solve that ended at a state counted once
    for (const s of states) expect(s.solves).toBe(solves.filter((r) => r.state === s.state).length);
    for (const s of states) {
      const r = solves[s['found-by-solve'] - 1];
      expect(r.outcome).toBe('new');
      expect(r.state).toBe(s.state);
      expect(r.guess).toBe(s.guess);
    }
    const run = json(join(out, 'run.json'));
    expect(run.kind).toBe('find-states');
    expect(run.status).toBe('finished');
    expect(run.end.reason).toBe('exhausted');
    expect(run.method).toContain('power p = 1.5, shift σ = 1');
    expect(run.states.length).toBe(5);
    expect(run.counts.solves).toBe(solves.length);
    for (let k = 1; k <= 5; k++) parseXml(readFileSync(join(out, `plots/state-${k}.svg`), 'utf8'));
  });

  it('traces every state both ways from the state itself, all branches in one diagram', () => {
    const run = json(join(out, 'run.json'));
    expect(run.traces.length).toBe(10);
    const states = rows(join(out, 'states.csv'));
    for (const t of run.traces) {
      const dir = join(out, t.directory);
      expect(json(join(dir, 'run.json')).status).toBe('finished');
      const first = rows(join(dir, 'branches/1.csv'))[0];
      expect(first.lambda).toBe(lambda);
      expect(Math.abs(first['l2-norm'] - states[t.state - 1]['l2-norm'])).toBeLessThan(1e-9);
    }
    const root = parseXml(readFileSync(join(out, 'diagram.svg'), 'utf8'));
    const drawn = new Set(findAll(root, 'path').map((p) => p.attrs['data-branch']).filter((b) => b !== undefined));
    for (let k = 1; k <= 5; k++) for (const d of ['increase', 'decrease']) expect(drawn).toContain(`${k}:${d}:1`);
  });

  it('redraws the same pictures with branchline plot; resuming the finished search is refused in one line', async () => {
    const before = readFileSync(join(out, 'diagram.svg'), 'utf8');
    const r = await cli('plot', out);
    expect(r.code, r.err).toBe(0);
    expect(r.out).toContain('diagram.svg, plots/ (5 files)');
    expect(readFileSync(join(out, 'diagram.svg'), 'utf8')).toBe(before);
    const again = await cli('resume', out);
    expect(again.code).toBe(2);
    expect(again.err).toMatch(/the run finished at .*; there is nothing to resume/);
    expect(existsSync(join(out, 'checkpoint.bin'))).toBe(false);
    expect(again.err.trim().split('\n').length).toBe(1);
  });
});

describe('a branch no continuation from the primary branch reaches: found by the search, traced, drawn', () => {
  // u″ + λ(u − u³) + s = 0: the source s breaks u → −u, so the pitchfork at the first eigenvalue
  // splits (imperfect bifurcation, the usual unfolding): the positive states stay connected to
  // λ = 0, the negative ones and the middle ones form a branch of their own, born at a fold
  const out = join(tmp, 'tilted');
  let result: { code: number; out: string; err: string };
  beforeAll(async () => {
    const file = caseFile({
      name: 'tilted-strip',
      model: 'reaction-diffusion',
      fields: ['u'],
      parameters: { lambda: 30, s: 1 },
      reaction: { u: 'lambda*(u - u^3) + s' },
      diffusion: { u: 1 },
      boundary: { u: 'dirichlet' },
      grid: { intervals: [40] },
      search: { guesses: [{ u: 'sin(pi*x)' }, { u: '-sin(pi*x)' }], trace: true },
      continuation: { parameter: 'lambda', bounds: [0, 40], step: { initial: 0.5, max: 4 }, 'max-points': 120, 'branch-switching': { depth: 0 } },
      stability: { eigenvalues: 3 },
    });
    result = await cli('find-states', file, '--out', out, '--quiet');
  }, 300_000);

  it('finds three states; the negative one lies on a branch that turns at a fold and never reaches λ = 0', () => {
    expect(result.code, result.err).toBe(0);
    const states = rows(join(out, 'states.csv'));
    expect(states.length).toBe(3);
    for (const s of states) expect(allenCahn(readNpy(join(out, `solutions/state-${s.state}.npy`)).data, 30, 1).residual).toBeLessThan(1e-7);
    const run = json(join(out, 'run.json'));
    const lowest = (k: number): number =>
      Math.min(...run.traces.filter((t: any) => t.state === k).flatMap((t: any) => rows(join(out, t.directory, 'branches/1.csv')).map((r) => r.lambda)));
    const positive = states.find((s) => s.min === 0 && s.max > 0.5)!;
    const negative = states.find((s) => s.max === 0 && s.min < -0.5)!;
    // the positive state's branch goes down to λ = 0 (where the only state is the one the source makes)
    expect(lowest(positive.state)).toBe(0);
    // the negative state's branch turns back at a fold well above λ = 0 ...
    const foldAt = lowest(negative.state);
    expect(foldAt).toBeGreaterThan(laplacianEigenvalue(1, 40));
    expect(foldAt).toBeLessThan(30);
    const folds = run.traces.filter((t: any) => t.state === negative.state).reduce((a: number, t: any) => a + t.folds, 0);
    expect(folds).toBeGreaterThan(0);
    // ... and both are in the one diagram
    const root = parseXml(readFileSync(join(out, 'diagram.svg'), 'utf8'));
    const drawn = new Set(findAll(root, 'path').map((p) => p.attrs['data-branch']));
    expect(drawn).toContain(`${positive.state}:decrease:1`);
    expect(drawn).toContain(`${negative.state}:decrease:1`);
  });
});

describe('find-states over an earlier search', () => {
  it('refuses without --force; with it, removes every file the search wrote (its traces too) and keeps the user’s', async () => {
    const doc = { name: 'again', model: 'allen-cahn', grid: { intervals: [20] }, parameters: { lambda: 50 }, search: { guesses: [{ u: 'sin(pi*x)' }], trace: true }, continuation: { parameter: 'lambda', bounds: [40, 60], 'max-points': 5 } };
    const out = join(tmp, 'again');
    expect((await cli('find-states', caseFile(doc), '--out', out, '--quiet')).code).toBe(0);
    expect(existsSync(join(out, 'traces/state-1-increase/run.json'))).toBe(true);
    writeFileSync(join(out, 'my-notes.txt'), 'mine');
    const refused = await cli('find-states', caseFile(doc), '--out', out, '--quiet');
    expect(refused.code).toBe(2);
    expect(refused.err).toMatch(/is not empty \(it holds an earlier run\)/);
    const again = await cli('find-states', caseFile({ ...doc, search: { guesses: [{ u: 'sin(pi*x)' }] } }), '--out', out, '--force', '--quiet');
    expect(again.code, again.err).toBe(0);
    expect(existsSync(join(out, 'traces'))).toBe(false);
    expect(readFileSync(join(out, 'my-notes.txt'), 'utf8')).toBe('mine');
    expect(json(join(out, 'run.json')).states.length).toBe(rows(join(out, 'states.csv')).length);
  });
});

describe('find-states refuses bad search sections in one line, writing nothing', () => {
  const base = { name: 'bad', model: 'allen-cahn', grid: { intervals: [20] }, parameters: { lambda: 50 } };
  it.each([
    [{ search: { guesses: [{ w: 1 }] } }, /search\.guesses\[0\]\.w/],
    [{ search: { guesses: [] } }, /search\.guesses: .*not accepted/],
    [{ search: { power: 2 } }, /search: unknown key 'power'/],
    [{ search: { deflation: { power: 0.5 } } }, /search\.deflation\.power: 0\.5 is not accepted/],
    [{ search: { trace: true } }, /search\.trace: true needs a continuation: section/],
    [{ search: { guesses: ['nothing.npy'] } }, /search\.guesses\[0\]: .*nothing\.npy: no such file/],
  ])('%j', async (extra, message) => {
    const dir = join(tmp, `bad-${++counter}`);
    const r = await cli('find-states', caseFile({ ...base, ...extra }), '--out', dir);
    expect(r.code).toBe(2);
    expect(r.err).toMatch(message);
    expect(r.err.trim().split('\n').length).toBe(1);
    expect(existsSync(dir) ? readdirSync(dir) : []).toEqual([]);
  });
});

describe('a search stopped on request keeps what it found', () => {
  it('ends the current solve, writes the states found so far and says stopped', async () => {
    const { prepareFindCaseObject } = await import('../../src/run/find-states-case.js');
    const { findStates } = await import('../../src/run/find-states.js');
    const doc = { name: 'stopped', model: 'allen-cahn', grid: { intervals: [40] }, parameters: { lambda: 50 }, search: { guesses: [{ u: 'sin(pi*x)' }] } };
    const prepared = await prepareFindCaseObject(doc, { label: 'stopped', baseDir: tmp });
    const stop = new AbortController();
    const out = join(tmp, 'stopped');
    const result = await findStates(prepared, { outDir: out, signal: stop.signal, log: (_level, message) => /^state 2 found/.test(message) && stop.abort() });
    expect(result.status).toBe('stopped');
    expect(result.states.length).toBe(2);
    const run = json(join(out, 'run.json'));
    expect(run.status).toBe('stopped');
    expect(run.states.length).toBe(2);
    expect(rows(join(out, 'states.csv')).map((s) => s.state)).toEqual([1, 2]);
    expect(rows(join(out, 'solves.csv')).length).toBe(2);
    for (const k of [1, 2]) expect(allenCahn(readNpy(join(out, `solutions/state-${k}.npy`)).data, 50).residual).toBeLessThan(1e-7);
  });
});
