/**
 * The pictures of real runs: diagram.svg (every branch, stability styles, special points marked
 * and named in words, the caution for safety models) and plots/*.svg at the special points
 * (line plots in 1D, heat maps with colour bars in 2D); the `plot` command redraws them.
 */
import { existsSync, mkdirSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../src/cli/main.js';
import { prepareCaseObject } from '../../src/run/case.js';
import { runCase } from '../../src/run/run-case.js';
import { drawRunPlots, monitorWords } from '../../src/run/plots.js';
import { findAll, parseXml, pathPoints, textContent, type XmlElement } from '../plot/xml-check.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-plots-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));
const json = (file: string): Record<string, any> => JSON.parse(readFileSync(file, 'utf8'));
const svgOf = (file: string): XmlElement => parseXml(readFileSync(file, 'utf8'));
const prepare = (doc: Record<string, unknown>) => prepareCaseObject(doc, { label: 'case', baseDir: tmp });

async function cli(...args: string[]) {
  let out = '';
  let err = '';
  const code = await main(['node', 'branchline', ...args], { out: (s) => (out += s), err: (s) => (err += s) });
  return { code, out, err };
}

// symmetric pitchforks with both halves followed, with stability (no caution: not a safety model)
const pitchforks = {
  name: 'pitchforks',
  model: 'allen-cahn',
  grid: { intervals: [32] },
  parameters: { lambda: 1 },
  continuation: { parameter: 'lambda', bounds: [0, 45], step: { initial: 0.5, max: 2 }, 'branch-switching': { depth: 1 } },
  stability: { eigenvalues: 3 },
  plot: { monitor: 'centre' },
};
const acDir = join(tmp, 'pitchforks');

beforeAll(async () => {
  const r = await runCase(await prepare(pitchforks), { outDir: acDir });
  expect(r.status).toBe('finished');
});

describe('diagram.svg of a run with branch switching and stability', () => {
  it('is well-formed SVG with every branch, stable parts solid and unstable parts dashed', () => {
    const root = svgOf(join(acDir, 'diagram.svg'));
    expect(root.name).toBe('svg');
    expect(root.attrs['data-plot']).toBe('diagram');
    const run = json(join(acDir, 'run.json'));
    expect(run.branches).toHaveLength(5);
    for (const b of run.branches) expect(findAll(root, 'path', { 'data-branch': String(b.id) }).length).toBeGreaterThan(0);
    const stable = findAll(root, 'path', { 'data-stability': 'stable' });
    const unstable = findAll(root, 'path', { 'data-stability': 'unstable' });
    expect(stable.length).toBeGreaterThan(0);
    expect(unstable.length).toBeGreaterThan(0);
    expect(stable.every((p) => p.attrs['stroke-dasharray'] === undefined)).toBe(true);
    expect(unstable.every((p) => p.attrs['stroke-dasharray'] !== undefined)).toBe(true);
    // u = 0 is stable before the first branch point and unstable after it
    const trivial = findAll(root, 'path', { 'data-branch': '1' });
    expect(trivial.map((p) => p.attrs['data-stability'])).toEqual(['unstable', 'stable']);
  });

  it('marks the special points and names them in words with their parameter values', () => {
    const root = svgOf(join(acDir, 'diagram.svg'));
    const points = json(join(acDir, 'points.json')).points;
    const bps = points.filter((p: any) => p.kind === 'branch-point');
    expect(bps).toHaveLength(2);
    const marks = findAll(root, 'g', { 'data-role': 'special-point', 'data-kind': 'branch-point' });
    expect(marks.map((m) => Number(m.attrs['data-parameter']))).toEqual(bps.map((p: any) => p.value));
    const labels = findAll(root, 'text', { 'data-role': 'label' }).map(textContent);
    expect(labels).toHaveLength(2);
    for (const [i, l] of labels.entries()) expect(l).toBe(`branch pointlambda = ${Number(bps[i].value.toPrecision(5))}`);
    // ends: bare markers, named once in the legend
    const ends = findAll(root, 'g', { 'data-role': 'special-point', 'data-kind': 'end' });
    expect(ends).toHaveLength(5);
    expect(ends.every((e) => findAll(e, 'text').length === 0)).toBe(true);
    expect(findAll(root, 'g', { 'data-legend': 'special-point', 'data-kind': 'end' })).toHaveLength(1);
    // no upper-case codes anywhere
    expect(readFileSync(join(acDir, 'diagram.svg'), 'utf8')).not.toMatch(/>\s*(BP|LP|HB|EP)\s*</);
  });

  it('names the monitor in words and says which branches lie along others (mirror images)', () => {
    const root = svgOf(join(acDir, 'diagram.svg'));
    expect(textContent(findAll(root, 'text', { 'data-role': 'y-title' })[0])).toBe('u at the centre of the domain');
    const legend = findAll(root, 'g', { 'data-legend': 'branch' }).map(textContent);
    // the n = 2 states are odd about the centre: u(1/2) = 0 along the trivial branch
    expect(legend).toEqual(['branch 1', 'branch 2', 'branch 3', 'branch 4 (lies along branch 1)', 'branch 5 (lies along branch 1)']);
    expect(findAll(root, 'g', { 'data-role': 'caution' })).toHaveLength(0);
  });

  it('draws a line plot of the solution at every special point, one curve with a value per node', () => {
    const files = readdirSync(join(acDir, 'plots')).sort();
    const solutions = readdirSync(join(acDir, 'solutions')).map((f) => f.replace(/\.npy$/, '.svg')).sort();
    expect(files).toEqual(solutions);
    const root = svgOf(join(acDir, 'plots', 'branch-2-end-1.svg'));
    expect(root.attrs['data-plot']).toBe('line');
    const curve = findAll(root, 'path', { 'data-field': 'u' });
    expect(curve).toHaveLength(1);
    expect(pathPoints(curve[0].attrs.d)).toHaveLength(33);
    expect(textContent(findAll(root, 'g', { 'data-role': 'header' })[0])).toMatch(/^u at the end of branch 2lambda = 45, u at the centre of the domain = -?0\.9\d*; case pitchforks$/);
  });
});

describe('other runs', () => {
  it('2D: heat maps with a colour bar, the ignition caution in every footer, a fold named on the diagram', async () => {
    const out = join(tmp, 'square');
    await runCase(
      await prepare({
        name: 'square',
        model: 'bratu',
        grid: { intervals: [12, 12] },
        parameters: { lambda: 1 },
        continuation: { parameter: 'lambda', bounds: [0, 10], step: { initial: 1, max: 1.5 }, 'stop-when': [{ monitor: 'max', above: 3 }] },
      }),
      { outDir: out },
    );
    const diagram = svgOf(join(out, 'diagram.svg'));
    expect(findAll(diagram, 'g', { 'data-role': 'special-point', 'data-kind': 'fold' })).toHaveLength(1);
    expect(findAll(diagram, 'text', { 'data-role': 'label' }).map(textContent)[0]).toMatch(/^foldlambda = 6\.7\d+$/);
    // no stability computed: the dotted style
    expect(findAll(diagram, 'path', { 'data-stability': 'unknown' }).length).toBeGreaterThan(0);
    expect(textContent(findAll(diagram, 'g', { 'data-role': 'caution' })[0])).toMatch(/licensed engineer's judgement/);
    const heat = svgOf(join(out, 'plots', 'branch-1-fold-1.svg'));
    expect(heat.attrs['data-plot']).toBe('heat-map');
    expect(findAll(heat, 'g', { 'data-role': 'colour-bar', 'data-field': 'u' })).toHaveLength(1);
    expect(findAll(heat, 'g', { 'data-role': 'cells', 'data-nx': '13', 'data-ny': '13' })).toHaveLength(1);
    expect(findAll(heat, 'g', { 'data-role': 'caution' })).toHaveLength(1);
  });

  it('two fields in 1D: one curve each with a legend', async () => {
    const out = join(tmp, 'two-fields');
    await runCase(
      await prepare({
        name: 'two-fields',
        model: 'gray-scott',
        boundary: 'neumann',
        grid: { intervals: [20], length: [1] },
        parameters: { F: 0.04, k: 0.06 },
        continuation: { parameter: 'F', bounds: [0.03, 0.05], 'max-points': 3, step: { initial: 0.002 } },
      }),
      { outDir: out },
    );
    const root = svgOf(join(out, 'plots', 'branch-1-end-1.svg'));
    expect(findAll(root, 'path', { 'data-field': 'u' })).toHaveLength(1);
    expect(findAll(root, 'path', { 'data-field': 'v' })).toHaveLength(1);
    expect(findAll(root, 'g', { 'data-legend': 'field' })).toHaveLength(2);
    // the default monitor of a multi-field model: max of the first field
    expect(textContent(findAll(svgOf(join(out, 'diagram.svg')), 'text', { 'data-role': 'y-title' })[0])).toBe('max u');
    expect(json(join(out, 'run.json')).case.plot).toEqual({ monitor: 'max:u' });
  });
});

describe('the plot command and drawRunPlots', () => {
  it('redraws with another monitor, removes plots of points the run no longer has and keeps the user’s files', async () => {
    mkdirSync(join(acDir, 'plots'), { recursive: true });
    writeFileSync(join(acDir, 'plots', 'branch-9-fold-1.svg'), '<svg/>');
    writeFileSync(join(acDir, 'plots', 'my-notes.svg'), '<svg/>');
    const r = await cli('plot', acDir, '--monitor', 'l2-norm');
    expect(r.code, r.err).toBe(0);
    expect(r.out).toMatch(/^Drew 8 pictures in .*pitchforks \(diagram: l2-norm against the continuation parameter\): diagram\.svg, plots\/ \(7 files\)\n$/);
    const root = svgOf(join(acDir, 'diagram.svg'));
    expect(textContent(findAll(root, 'text', { 'data-role': 'y-title' })[0])).toBe('L2 norm of u, √(∫u²)');
    expect(existsSync(join(acDir, 'plots', 'branch-9-fold-1.svg'))).toBe(false);
    expect(existsSync(join(acDir, 'plots', 'my-notes.svg'))).toBe(true);
    // u and −u have the same norm: the mirror halves lie along each other
    expect(findAll(root, 'g', { 'data-legend': 'branch' }).map(textContent)).toContain('branch 3 (lies along branch 2)');
  });

  it('refuses an unknown monitor and a folder without a run, in one line with exit code 2', async () => {
    const r = await cli('plot', acDir, '--monitor', 'temperature');
    expect(r.code).toBe(2);
    expect(r.err).toBe("branchline: monitor 'temperature' is not a column of this run (accepted: max, min, l2-norm, centre)\n");
    const empty = join(tmp, 'empty');
    mkdirSync(empty);
    const e = await cli('plot', empty);
    expect(e.code).toBe(2);
    expect(e.err).toMatch(/^branchline: cannot draw: .*empty holds no run \(run\.json is missing\)\n$/);
  });

  it('draws at most the given number of solution plots, special points before branch ends', () => {
    const r = drawRunPlots(acDir, { maxSolutionPlots: 2 });
    expect(r.files).toEqual(['diagram.svg', 'plots/branch-1-branch-point-1.svg', 'plots/branch-1-branch-point-2.svg']);
    expect(r.notes[0]).toMatch(/^drew 2 of 7 solution plots/);
    expect(readdirSync(join(acDir, 'plots')).sort()).toEqual(['branch-1-branch-point-1.svg', 'branch-1-branch-point-2.svg', 'my-notes.svg']);
  });

  it('the case key plot.monitor is checked against the problem’s monitors', async () => {
    await expect(prepare({ ...pitchforks, plot: { monitor: 'max:u' } })).rejects.toThrow(/^case: plot\.monitor: 'max:u' is not a monitor of this problem \(accepted: max, min, l2-norm, centre\)$/);
    await expect(prepare({ ...pitchforks, plot: { colour: 'red' } })).rejects.toThrow(/plot: unknown key 'colour' \(accepted: monitor\)/);
  });

  it('monitor names in words', () => {
    expect(monitorWords('max', ['u'])).toBe('max u');
    expect(monitorWords('min:v', ['u', 'v'])).toBe('min v');
    expect(monitorWords('l2-norm:T', ['c', 'T'])).toBe('L2 norm of T, √(∫T²)');
    expect(monitorWords('max', ['u', 'v'])).toBe('max');
    expect(monitorWords('end-rotation', ['theta'])).toBe('end-rotation');
  });

  it('a run that failed at its start point still gets a diagram (without branches)', async () => {
    const out = join(tmp, 'failed');
    const r = await runCase(
      await prepare({ name: 'failed', model: 'bratu', grid: { intervals: [16] }, parameters: { lambda: 4 }, continuation: { parameter: 'lambda', bounds: [0, 5] } }),
      { outDir: out },
    );
    expect(r.status).toBe('failed');
    const root = svgOf(join(out, 'diagram.svg'));
    expect(textContent(findAll(root, 'g', { 'data-role': 'header' })[0])).toMatch(/\(run failed\)/);
  });
});
