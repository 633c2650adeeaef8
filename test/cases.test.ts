/**
 * The bundled cases (cases/*.yaml): every file is a valid case with a comment header in words
 * (and the caution where results bear on ignition or buckling); a smoke subset runs to
 * `finished` here, the two 2D cases on coarser grids, and their headers' claims are checked
 * against the runs. `npm run cases` runs all of them at full size.
 */
import { mkdtempSync, readFileSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { parseCaseText, prepareCaseObject } from '../src/run/case.js';
import { runCase } from '../src/run/run-case.js';
import { prepareSettleCaseObject } from '../src/run/settle-case.js';
import { settleCase } from '../src/run/settle.js';
import { parseXml, findAll } from './plot/xml-check.js';
import { readCsv, readNpy } from '../src/run/writers.js';
import { ignitionLimit } from './continuation/curves/helpers.js';
import { denseJacobian } from './discretisations/helpers.js';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-cases-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));
const folder = resolve('cases');
const files = readdirSync(folder).filter((f) => f.endsWith('.yaml')).sort();
const json = (file: string): Record<string, any> => JSON.parse(readFileSync(file, 'utf8'));

/** A bundled case's document; `start.run` of another bundled case's run is redirected to `runs[name]`. */
function bundled(name: string, runs: Record<string, string> = {}): { file: string; doc: Record<string, any> } {
  const file = join(folder, `${name}.yaml`);
  const doc = parseCaseText(readFileSync(file, 'utf8'), file) as Record<string, any>;
  const from = /^\.\.\/runs\/(.+)$/.exec(doc.start?.run ?? '')?.[1];
  if (from !== undefined && runs[from]) doc.start = { ...doc.start, run: runs[from] };
  return { file, doc };
}

/** The bundled cases that start from another one's run (`start: {run: ../runs/<name>}`): name → that case. */
function startsFrom(name: string): string | undefined {
  return /^\.\.\/runs\/(.+)$/.exec(bundled(name).doc.start?.run ?? '')?.[1];
}

/** Prepare a bundled case for its command: settle for a case with time: and no continuation:. */
async function prepareBundled(name: string, runs: Record<string, string> = {}) {
  const { file, doc } = bundled(name, runs);
  const opts = { label: file, file, baseDir: folder };
  return doc.continuation === undefined && doc.time !== undefined ? prepareSettleCaseObject(doc, opts) : prepareCaseObject(doc, opts);
}

/** Run a bundled case (optionally on another grid) and return its run folder and points. */
async function run(name: string, intervals?: number[], runs: Record<string, string> = {}) {
  const { file, doc } = bundled(name, runs);
  if (intervals) doc.grid = { ...doc.grid, intervals };
  const prepared = await prepareCaseObject(doc, { label: file, file, baseDir: folder });
  const out = join(tmp, name);
  const result = await runCase(prepared, { outDir: out });
  const points = json(join(out, 'points.json')).points as Record<string, any>[];
  // every branch point of a bundled case is classified (issue 11)
  expect(points.filter((p) => p.type === 'unknown').map((p) => `${p.kind} at ${p.value} on branch ${p.branch}: ${p.note}`)).toEqual([]);
  return { result, out, points, of: (kind: string, branch = 1) => points.filter((p) => p.kind === kind && p.branch === branch) };
}

/** The diagram parses and shows every branch and every labelled point kind. */
function checkDiagram(out: string, kinds: string[]) {
  const root = parseXml(readFileSync(join(out, 'diagram.svg'), 'utf8'));
  const run = json(join(out, 'run.json'));
  for (const b of run.branches) expect(findAll(root, 'path', { 'data-branch': String(b.id) }).length).toBeGreaterThan(0);
  for (const k of kinds) expect(findAll(root, 'g', { 'data-role': 'special-point', 'data-kind': k }).length).toBeGreaterThan(0);
  return root;
}

/**
 * Every solution a curve run of the bundled case `name` (on `intervals`) saved, read back and
 * re-evaluated at the point's two parameter values with the case's problem built afresh: the
 * model's residual at round-off, and the dense Jacobian singular (on a fold or branch-point
 * curve) — its eigenvalue nearest zero (ml-matrix) tiny against the Jacobian's scale.
 */
async function recheckCurveSolutions(name: string, intervals: number[] | undefined, r: Awaited<ReturnType<typeof run>>): Promise<number> {
  const { file, doc } = bundled(name);
  if (intervals) doc.grid = { ...doc.grid, intervals };
  const { problem, params } = await prepareCaseObject(doc, { label: file, file, baseDir: folder });
  const saved = r.points.filter((p) => p.solution);
  for (const p of saved) {
    const at = { ...params, [p.parameter]: p.value, [p['free-parameter']]: p.free };
    const { shape, data } = readNpy(join(r.out, p.solution));
    const u = problem.fromNodeArray(shape, data, at);
    const f = new Float64Array(u.length);
    problem.residual(u, at, f);
    const J = denseJacobian(problem, u, at);
    const scale = Math.max(...J.map((row) => Math.max(...row.map(Math.abs))));
    expect(Math.max(...f.map(Math.abs)) / scale, p.solution).toBeLessThan(1e-10);
    const e = new EigenvalueDecomposition(new Matrix(J));
    const nearest = Math.min(...e.realEigenvalues.map((re, i) => Math.hypot(re, e.imaginaryEigenvalues[i])));
    expect(nearest / scale, p.solution).toBeLessThan(1e-9);
  }
  return saved.length;
}

const discreteEigenvalue = (n: number, h: number) => (4 / h ** 2) * Math.sin((n * Math.PI * h) / 2) ** 2; // LeVeque, Finite Difference Methods for ODEs and PDEs, SIAM 2007, §2.10, from memory

/** Gauss–Legendre nodes and weights on [−1, 1] (Newton on the three-term recurrence). */
function gaussLegendre(n: number): { x: number[]; w: number[] } {
  const x: number[] = [];
  const w: number[] = [];
  const legendre = (z: number) => {
    let p1 = 1;
    let p2 = 0;
    for (let j = 1; j <= n; j++) [p1, p2] = [((2 * j - 1) * z * p1 - (j - 1) * p2) / j, p1];
    return { p: p1, dp: (n * (z * p1 - p2)) / (z * z - 1) };
  };
  for (let i = 1; i <= n; i++) {
    let z = Math.cos((Math.PI * (i - 0.25)) / (n + 0.5));
    for (let it = 0; it < 100; it++) {
      const { p, dp } = legendre(z);
      z -= p / dp;
      if (Math.abs(p / dp) < 1e-16) break;
    }
    const { dp } = legendre(z);
    x.push(z);
    w.push(2 / ((1 - z * z) * dp * dp));
  }
  return { x, w };
}

const gauss30 = gaussLegendre(30);
function integrate(f: (s: number) => number, a: number, b: number, pieces: number): number {
  let sum = 0;
  const h = (b - a) / pieces;
  for (let k = 0; k < pieces; k++) {
    const c = a + (k + 0.5) * h;
    for (let i = 0; i < gauss30.x.length; i++) sum += ((gauss30.w[i] * h) / 2) * f(c + (gauss30.x[i] * h) / 2);
  }
  return sum;
}

/** Da(m) of the pellet's one-field reduction (B = 12, γ = 20), T = m − s² removing the end singularity. */
function pelletDamkohler(m: number): number {
  const source = (T: number) => (12 - T) * Math.exp(T / (1 + T / 20));
  const inner = (s: number) => (s === 0 ? 2 / Math.sqrt(source(m)) : (2 * s) / Math.sqrt(integrate(source, m - s * s, m, 2)));
  return 2 * integrate(inner, 0, Math.sqrt(m), 8) ** 2;
}

/** Golden-section search for the extremum of Da(m) on [a, b]. */
function timeMapExtremum(a: number, b: number, kind: 'maximum' | 'minimum'): { m: number; da: number } {
  const g = (Math.sqrt(5) - 1) / 2;
  const better = (p: number, q: number) => (kind === 'maximum' ? p > q : p < q);
  for (let i = 0; i < 80; i++) {
    const c = b - g * (b - a);
    const d = a + g * (b - a);
    if (better(pelletDamkohler(c), pelletDamkohler(d))) b = d;
    else a = c;
  }
  const m = (a + b) / 2;
  return { m, da: pelletDamkohler(m) };
}

describe('the bundled case files', () => {
  it.each(files)('%s is a valid case with a header in words', async (f) => {
    const text = readFileSync(join(folder, f), 'utf8');
    const header = text.split('\n').filter((l) => l.startsWith('#'));
    expect(text.startsWith('# ')).toBe(true);
    expect(header.length).toBeGreaterThanOrEqual(5);
    expect(text).toMatch(/invented scenario, invented numbers/);
    const name = f.replace(/\.yaml$/, '');
    const before = startsFrom(name);
    if (before !== undefined) {
      // it starts from another bundled case's run: prepared in the smoke run below
      expect(files).toContain(`${before}.yaml`);
      return;
    }
    const prepared = await prepareBundled(name);
    if (prepared.caution && prepared.case.model !== 'reaction-diffusion') {
      // ignition, runaway and buckling models: the caution in the header too
      expect(header.map((l) => l.replace(/^#\s*/, '')).join(' ')).toMatch(/not a substitute for design codes, safety standards or a licensed engineer's judgement; local codes and licensed practice govern/);
    }
  });

  it('cover the scenarios the users bring: ignition 1D and 2D, a 2D pattern with stability, a pitchfork, strut buckling, a subcritical beam, an expression model', async () => {
    const models: Record<string, string> = {};
    for (const f of files) {
      const name = f.replace(/\.yaml$/, '');
      if (startsFrom(name) !== undefined) continue;
      const p = await prepareBundled(name);
      models[f] = `${p.case.model} ${p.case.grid.intervals.length}D${p.case.stability.eigenvalues > 0 ? ' stability' : ''}${'time' in p ? ' time' : ''}`;
    }
    expect(Object.values(models)).toEqual(
      expect.arrayContaining(['bratu 1D stability', 'bratu 2D stability', 'brusselator 2D stability', 'allen-cahn 1D stability', 'elastica 1D stability', 'beam-foundation 1D stability', 'reaction-diffusion 1D stability', 'gray-scott 2D stability time']),
    );
  });
});

describe('smoke runs of the bundled curve cases', () => {
  it('slab-ignition-limit (on 100 intervals here): the ignition limit against the Biot number, from Semenov’s limit to the cold-wall fold', async () => {
    const r = await run('slab-ignition-limit', [100]);
    expect(r.result.status).toBe('finished');
    const ends = r.points.filter((p) => p.kind === 'end');
    expect(ends.map((p) => p.value).sort((a, b) => a - b)).toEqual([0.01, 100]);
    for (const e of ends) expect(Math.abs(e.free / ignitionLimit(e.value) - 1)).toBeLessThan(2e-4); // the closed form (slab.test.ts)
    // Semenov 1928 (from memory): λ* → 2·Bi/e for a nearly isothermal slab
    const low = ends.find((p) => p.value === 0.01)!;
    expect(Math.abs(low.free / ((2 * 0.01) / Math.E) - 1)).toBeLessThan(0.01);
    const root = checkDiagram(r.out, ['end']);
    expect(findAll(root, 'g', { 'data-role': 'caution' })).toHaveLength(1);
    expect(await recheckCurveSolutions('slab-ignition-limit', [100], r)).toBeGreaterThanOrEqual(2);
  });

  it('rail-imperfection (on 100 intervals here): the limit load falls below the perfect rail’s buckling load like imperfection^(2/3)', async () => {
    const r = await run('rail-imperfection', [100]);
    expect(r.result.status).toBe('finished');
    const mu = discreteEigenvalue(1, 1 / 100);
    const Pc = mu + 100 / mu; // Timoshenko & Gere, with the grid's μ
    const rows = r.result.ledger.branches.flatMap((b) => readCsv(join(r.out, b.file)).rows);
    const small = rows.filter((row) => row[2] <= 1e-3).map((row) => [Math.log(row[2]), Math.log(Pc - row[3])]);
    for (const row of rows) expect(row[3]).toBeLessThan(Pc);
    const n = small.length;
    expect(n).toBeGreaterThan(10);
    const mx = small.reduce((a, p) => a + p[0], 0) / n;
    const my = small.reduce((a, p) => a + p[1], 0) / n;
    const slope = small.reduce((a, p) => a + (p[0] - mx) * (p[1] - my), 0) / small.reduce((a, p) => a + (p[0] - mx) ** 2, 0);
    // Koiter 1945: the two-thirds power law (up to higher-order terms at imperfection 1e-3)
    expect(Math.abs(slope - 2 / 3)).toBeLessThan(0.03);
    expect(await recheckCurveSolutions('rail-imperfection', [100], r)).toBeGreaterThanOrEqual(2);
  });

  it('turing-lines: the critical mode changes where the lines of neighbouring modes cross', async () => {
    const r = await run('turing-lines');
    expect(r.result.status).toBe('finished');
    const changes = r.points.filter((p) => p.kind === 'mode-change');
    expect(changes.length).toBeGreaterThanOrEqual(3);
    const h = 20 / 100;
    const q2 = (k: number) => (4 / h ** 2) * Math.sin((k * Math.PI * h) / 40) ** 2; // the grid's no-flux Laplacian eigenvalues
    for (const c of changes) {
      const [m1, m2] = [c.mode[0], c['new-mode'][0]].sort((a: number, b: number) => a - b);
      expect(m2).toBe(m1 + 1);
      // b_n(a) = b_m(a) where a² = Du Dv q_n² q_m² (the Turing lines of Prigogine & Lefever 1968 crossing)
      expect(Math.abs(c.value - Math.sqrt(8 * q2(m1) * q2(m2)))).toBeLessThan(1e-9);
    }
    checkDiagram(r.out, ['mode-change']);
    // the saved states (the uniform state at the mode changes and ends) are singular steady states
    expect(await recheckCurveSolutions('turing-lines', undefined, r)).toBeGreaterThanOrEqual(changes.length);
  });

  it('gel-oscillations (on 10 intervals here): the oscillation boundary, subcritical above the Bautin point and supercritical below, ending at the Bogdanov–Takens point', async () => {
    const r = await run('gel-oscillations', [10]);
    expect(r.result.status).toBe('finished');
    const rows = r.result.ledger.branches.flatMap((b) => readCsv(join(r.out, b.file)).rows);
    const columns = readCsv(join(r.out, r.result.ledger.branches[0].file)).columns;
    const [frequency, lyapunov] = ['frequency', 'first-lyapunov-coefficient'].map((c) => columns.indexOf(c));
    expect(frequency).toBeGreaterThan(0);
    expect(lyapunov).toBeGreaterThan(0);
    expect(rows.length).toBeGreaterThan(40);
    // Gray & Scott 1984: the uniform state's Hopf curve (F + k)² = F√k with ω² = (F + k)(k − F)
    for (const row of rows) {
      expect(Math.abs((row[2] + row[3]) ** 2 - row[3] * Math.sqrt(row[2]))).toBeLessThan(1e-9);
      expect(Math.abs(row[frequency] ** 2 - (row[2] + row[3]) * (row[2] - row[3]))).toBeLessThan(1e-9);
    }
    // Gray & Scott 1984: the Hopf curve meets the fold curve at k = F = 1/16
    const bt = r.points.find((p) => p.kind === 'bogdanov-takens')!;
    expect(Math.abs(bt.value - 1 / 16)).toBeLessThan(1e-9);
    expect(Math.abs(bt.free - 1 / 16)).toBeLessThan(1e-9);
    const bautin = r.points.find((p) => p.kind === 'bautin')!;
    // the header's claim: l₁ > 0 (subcritical) above the Bautin point, l₁ < 0 (supercritical) below (l₁ is not defined where ω = 0)
    for (const row of rows) {
      if (Math.abs(row[2] - bautin.value) > 1e-4 && row[frequency] > 0) expect(Math.sign(row[lyapunov])).toBe(row[2] > bautin.value ? 1 : -1);
    }
    const root = checkDiagram(r.out, ['bogdanov-takens', 'bautin', 'end']);
    // the curve that ends at the Bogdanov–Takens point has no end marker over it
    expect(findAll(root, 'g', { 'data-role': 'special-point', 'data-kind': 'end' })).toHaveLength(1);
  });
});

describe('smoke runs of the bundled cases', () => {
  it('alloy-strip: pitchforks from u = 0 at the grid’s Laplacian eigenvalues, both halves followed', async () => {
    const r = await run('alloy-strip');
    expect(r.result.status).toBe('finished');
    const bps = r.of('branch-point');
    expect(bps.map((p) => p.type)).toEqual(['pitchfork', 'pitchfork', 'pitchfork']);
    bps.forEach((p, i) => expect(Math.abs(p.value - discreteEigenvalue(i + 1, 0.01))).toBeLessThan(1e-6));
    expect(r.result.ledger.branches).toHaveLength(7);
    const root = checkDiagram(r.out, ['branch-point', 'end']);
    expect(readFileSync(join(r.out, 'diagram.svg'), 'utf8')).toContain('u at the centre');
    expect(findAll(root, 'g', { 'data-role': 'caution' })).toHaveLength(0);
  });

  it('ruler-buckling: buckling loads near n²π², with the caution on the plots', async () => {
    const r = await run('ruler-buckling');
    expect(r.result.status).toBe('finished');
    const bps = r.of('branch-point');
    // Euler: n²π² for the continuum; the grid's eigenvalues (4/h²) sin²(nπh/2)
    expect(Math.abs(bps[0].value - discreteEigenvalue(1, 0.01))).toBeLessThan(1e-6);
    expect(Math.abs(bps[1].value - discreteEigenvalue(2, 0.01))).toBeLessThan(1e-6);
    const root = checkDiagram(r.out, ['branch-point']);
    expect(findAll(root, 'g', { 'data-role': 'caution' })).toHaveLength(1);
    const profile = readFileSync(join(r.out, 'plots', 'branch-1-branch-point-1.svg'), 'utf8');
    expect(profile).toContain('data-role="caution"');
  });

  it('rail-buckling: buckles at P = EI μ + kf/μ and the buckled branches fall back to lower loads (subcritical)', async () => {
    const r = await run('rail-buckling');
    expect(r.result.status).toBe('finished');
    const bp = r.of('branch-point')[0];
    const mu = discreteEigenvalue(1, 1 / 200);
    // Timoshenko & Gere: P_n = EI μ_n + kf/μ_n (exact for the grid with the discrete μ_n)
    expect(Math.abs(bp.value - (mu + 100 / mu))).toBeLessThan(1e-6);
    for (const b of r.result.ledger.branches.filter((x) => x.id > 1)) expect(b.last!).toBeLessThan(bp.value - 5);
    checkDiagram(r.out, ['branch-point', 'end']);
  });

  it('catalyst-pellet: ignition and extinction folds where the exact reduction to one field puts them', async () => {
    const r = await run('catalyst-pellet');
    expect(r.result.status).toBe('finished');
    const folds = r.of('fold');
    expect(folds.map((f) => f.turn)).toEqual(['maximum', 'minimum']);
    // Independent value: with equal diffusivities and faces at c = 1, T = 0, B·c + T is harmonic with
    // constant boundary values, so c = 1 − T/B and T″ + Da (B − T) e^{T/(1+T/γ)} = 0. For that scalar
    // problem the first integral gives Da as a function of the centre temperature m (the time map: the
    // usual first-integral quadrature for autonomous two-point problems, common practice):
    // Da(m) = 2 (∫₀^m dT/√G(T))², G(T) = ∫_T^m (B − s) e^{s/(1+s/γ)} ds, computed here by quadrature;
    // the folds are its extremes. The grid's own error is O(h²) ≈ 1e-4 on 100 intervals.
    const ignition = timeMapExtremum(0.1, 6, 'maximum');
    const extinction = timeMapExtremum(3, 11.9, 'minimum');
    for (const [fold, exact] of [[folds[0], ignition], [folds[1], extinction]] as const) {
      expect(Math.abs(fold.value / exact.da - 1)).toBeLessThan(3e-4);
      expect(Math.abs(fold.monitors['max:T'] / exact.m - 1)).toBeLessThan(3e-4);
    }
    const root = checkDiagram(r.out, ['fold']);
    expect(findAll(root, 'path', { 'data-stability': 'unstable' }).length).toBeGreaterThan(0);
    expect(readFileSync(join(r.out, 'plots', 'branch-1-fold-1.svg'), 'utf8')).toMatch(/data-field="c"[\s\S]*data-field="T"/);
  });

  it('chip-pile (on 32 × 32 here): the fold near λ = 6.81', async () => {
    const r = await run('chip-pile', [32, 32]);
    expect(r.result.status).toBe('finished');
    const fold = r.of('fold');
    expect(fold).toHaveLength(1);
    // 6.8081244 for the continuum (widely reported, from memory); 32 intervals are within 2e-3
    expect(Math.abs(fold[0].value - 6.8081244)).toBeLessThan(2e-3);
    checkDiagram(r.out, ['fold']);
    expect(readFileSync(join(r.out, 'plots', 'branch-1-fold-1.svg'), 'utf8')).toContain('data-role="colour-bar"');
  });

  it('turing-spots (on 16 × 16 here): the checkerboard pattern sets in near b = 2.914 and is stable', async () => {
    const r = await run('turing-spots', [16, 16]);
    expect(r.result.status).toBe('finished');
    const bp = r.of('branch-point')[0];
    // continuum neutral curve b = (1 + Du k²)(a² + Dv k²)/(Dv k²) with k² = 2(π/L)² (Nicolis & Prigogine 1977, from memory)
    const k2 = 2 * (Math.PI / 5.3) ** 2;
    const bT = ((1 + k2) * (4 + 8 * k2)) / (8 * k2);
    expect(Math.abs(bp.value - bT)).toBeLessThan(0.01);
    expect(r.result.ledger.branches).toHaveLength(3);
    const csv = readFileSync(join(r.out, 'branches', '2.csv'), 'utf8').trim().split('\n');
    const stable = csv[0].split(',').indexOf('stable');
    expect(csv[csv.length - 1].split(',')[stable]).toBe('true');
    checkDiagram(r.out, ['branch-point']);
  });

  it('gel-spots: the drop grows into a stable pattern of four spots; traced in F, it keeps stable down to F ≈ 0.025, where a complex pair crosses (Hopf)', async () => {
    const prepared = (await prepareBundled('gel-spots')) as Awaited<ReturnType<typeof prepareSettleCaseObject>>;
    const grown = join(tmp, 'gel-spots');
    const r = await settleCase(prepared, { outDir: grown });
    expect(r.status).toBe('finished');
    expect(r.outcome?.kind).toBe('steady');
    expect(r.stability?.stable).toBe(true);
    // four spots: four separate regions where v stands well above the background
    const { shape, data } = readNpy(join(grown, 'solutions/final.npy'));
    const [, ny, nx] = shape;
    const v = data.subarray(nx * ny);
    const seen = new Uint8Array(nx * ny);
    let spots = 0;
    for (let start = 0; start < nx * ny; start++) {
      if (seen[start] || v[start] < 0.2) continue;
      spots++;
      const stack = [start];
      seen[start] = 1;
      while (stack.length) {
        const k = stack.pop()!;
        const i = k % nx;
        const j = Math.floor(k / nx);
        for (const [di, dj] of [[1, 0], [-1, 0], [0, 1], [0, -1]]) {
          const a = i + di;
          const b = j + dj;
          const q = b * nx + a;
          if (a >= 0 && a < nx && b >= 0 && b < ny && !seen[q] && v[q] >= 0.2) {
            seen[q] = 1;
            stack.push(q);
          }
        }
      }
    }
    expect(spots).toBe(4);
    expect(readFileSync(join(grown, 'monitors.svg'), 'utf8')).toContain('data-plot="time-series"');

    const t = await run('gel-spots-trace', undefined, { 'gel-spots': grown });
    expect(t.result.status).toBe('finished');
    const csv = readCsv(join(t.out, 'branches', '1.csv'));
    const col = (c: string) => csv.rows.map((row) => row[csv.columns.indexOf(c)]);
    const F = col('F');
    const unstable = col('unstable-count');
    expect(F[0]).toBe(0.04);
    expect(col('newton-iterations')[0]).toBe(0);
    // stable from the start down to the first change, which is a complex pair (two eigenvalues)
    const k = unstable.findIndex((n) => n > 0);
    expect(unstable.slice(0, k).every((n) => n === 0)).toBe(true);
    expect(unstable[k]).toBe(2);
    expect(Math.abs(col('leading-imag')[k])).toBeGreaterThan(0.01);
    expect(F[k - 1]).toBeGreaterThan(0.024);
    expect(F[k]).toBeLessThan(0.026);
    // the run names a Hopf point in that neighbourhood: the first one inside the step where the
    // count first leaves 0 (the header: F ≈ 0.0252)
    const hopfs = t.of('hopf').map((h) => h.value as number).sort((a, b) => b - a);
    expect(hopfs[0]).toBeLessThan(F[k - 1]);
    expect(hopfs[0]).toBeGreaterThan(F[k]);
    // every step whose count changes (all by complex pairs here: no fold, no branch point on the
    // branch) holds a located Hopf point, and none is reported elsewhere (a pair crossing beyond
    // the four listed values included)
    expect(t.of('fold')).toEqual([]);
    expect(t.of('branch-point')).toEqual([]);
    const changing = F.slice(1).map((f, i) => [F[i], f]).filter((_, i) => unstable[i + 1] !== unstable[i]);
    expect(changing.length).toBeGreaterThan(1);
    expect(hopfs.length).toBe(changing.length);
    changing.forEach(([hi, lo], i) => expect(hopfs[i] < hi && hopfs[i] > lo, `Hopf point ${i + 1} at F = ${hopfs[i]}, step ${hi} → ${lo}`).toBe(true));
    // each destabilising, and the count only grows: every pair crossed stays unstable to F = 0.02
    expect(t.of('hopf').every((h) => h.crossing === 'destabilising')).toBe(true);
    expect(unstable.every((n, i) => i === 0 || n >= unstable[i - 1])).toBe(true);
    // (a settle and a trace that locates three Hopf points at the eigen solver's location
    // tolerance: about 40 s of CPU, more than the default limit on a loaded machine)
  }, 300_000);
});
