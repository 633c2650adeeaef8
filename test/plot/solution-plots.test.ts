import { describe, expect, it } from 'vitest';
import {
  blockAverage,
  heatMapSvg,
  linePlotSvg,
  oklabLightness,
  RAMP,
  refinementSvg,
} from '../../src/plot/index.js';
import { analyseRefinement } from '../../src/refine/index.js';
import { bratuFoldProfile, foldRefinement, spotHeatMap, twoFieldProfile } from './sample-data.js';
import { findAll, parseXml, pathPoints, textContent } from './xml-check.js';

describe('line plots of 1D solutions', () => {
  it('one curve per field, titled, with axis labels and the caution', () => {
    const input = bratuFoldProfile();
    const root = parseXml(linePlotSvg(input));
    expect(input.title).toBe('fold at lambda = 3.5138'); // 1D Bratu fold λ* = 3.513830719 (Bratu 1914 closed form)
    expect(textContent(findAll(root, 'g', { 'data-role': 'header' })[0])).toContain('fold at lambda = 3.5138');
    const curves = findAll(root, 'path', { 'data-field': 'u' });
    expect(curves).toHaveLength(1);
    expect(pathPoints(curves[0].attrs.d)).toHaveLength(input.x.length);
    expect(textContent(findAll(root, 'text', { 'data-role': 'x-title' })[0])).toBe('x');
    expect(textContent(findAll(root, 'text', { 'data-role': 'y-title' })[0])).toBe('u');
    expect(findAll(root, 'g', { 'data-role': 'legend' })).toHaveLength(0);
    expect(findAll(root, 'g', { 'data-role': 'caution' })).toHaveLength(1);
  });

  it('the curve maps the data faithfully: the maximum at x = 1/2 is the highest point', () => {
    const input = bratuFoldProfile(101);
    const root = parseXml(linePlotSvg(input));
    const pts = pathPoints(findAll(root, 'path', { 'data-field': 'u' })[0].attrs.d);
    const top = pts.reduce((best, p, i) => (p[1] < pts[best][1] ? i : best), 0);
    expect(top).toBe(50);
    // Boundary values u(0) = u(1) = 0 sit at the same height.
    expect(pts[0][1]).toBeCloseTo(pts[100][1], 1);
  });

  it('several fields: distinct colours and a legend', () => {
    const root = parseXml(linePlotSvg(twoFieldProfile()));
    const u = findAll(root, 'path', { 'data-field': 'u' }).filter((e) => e.attrs['stroke-width'] === '2.2');
    const v = findAll(root, 'path', { 'data-field': 'v' }).filter((e) => e.attrs['stroke-width'] === '2.2');
    expect(u).toHaveLength(1);
    expect(v).toHaveLength(1);
    expect(u[0].attrs.stroke).not.toBe(v[0].attrs.stroke);
    expect(textContent(findAll(root, 'g', { 'data-role': 'legend' })[0])).toBe('uv');
  });

  it('rejects fields whose length differs from x', () => {
    expect(() => linePlotSvg({ title: 't', x: [0, 1, 2], fields: [{ name: 'u', values: [1, 2] }] })).toThrow(
      /field 'u' has 2 values but x has 3/,
    );
  });
});

describe('colour ramp', () => {
  it('is perceptually ordered: OKLab lightness rises strictly along the ramp', () => {
    const L = RAMP.map((hex) =>
      oklabLightness(parseInt(hex.slice(1, 3), 16) / 255, parseInt(hex.slice(3, 5), 16) / 255, parseInt(hex.slice(5, 7), 16) / 255),
    );
    for (let i = 8; i < L.length; i += 8) expect(L[i]).toBeGreaterThan(L[i - 8]);
    expect(L[0]).toBeLessThan(0.3);
    expect(L[L.length - 1]).toBeGreaterThan(0.9);
    // Steps in lightness are close to even (within a factor 2 of the mean) — no flat stretches.
    const steps = [];
    for (let i = 16; i < L.length; i += 16) steps.push(L[i] - L[i - 16]);
    const mean = steps.reduce((a, b) => a + b, 0) / steps.length;
    for (const s of steps) {
      expect(s).toBeGreaterThan(mean / 2);
      expect(s).toBeLessThan(mean * 2);
    }
  });
});

describe('heat maps of 2D fields', () => {
  it('block averages, worked by hand on a 5 × 3 field reduced to at most 2 tiles per axis', () => {
    // Rows (y slow): [0 1 2 3 4], [10 11 12 13 14], [20 21 22 23 24].
    const values = [0, 1, 2, 3, 4, 10, 11, 12, 13, 14, 20, 21, 22, 23, 24];
    const b = blockAverage(values, 5, 3, 2);
    // x blocks: nodes [0, 3) and [3, 5) (round(5/2) = 3); y blocks: [0, 2) and [2, 3).
    expect([...b.xb]).toEqual([0, 3, 5]);
    expect([...b.yb]).toEqual([0, 2, 3]);
    // Block (0,0): mean of 0 1 2 10 11 12 = 6; (1,0): 3 4 13 14 → 8.5; (0,1): 20 21 22 → 21; (1,1): 23 24 → 23.5.
    expect([...b.values]).toEqual([6, 8.5, 21, 23.5]);
  });

  it('one panel and colour bar per field; the hottest node gets the top colour of the ramp', () => {
    const n = 9;
    const values = new Float64Array(n * n);
    values[4 * n + 6] = 5; // node (i = 6, j = 4)
    const svg = heatMapSvg({ title: 'one hot node', nx: n, ny: n, fields: [{ name: 'T', values }, { name: 'S', values }] });
    const root = parseXml(svg);
    expect(findAll(root, 'g', { 'data-role': 'panel' })).toHaveLength(2);
    expect(findAll(root, 'g', { 'data-role': 'colour-bar' })).toHaveLength(2);
    const cells = findAll(root, 'g', { 'data-role': 'cells', 'data-field': 'T' })[0];
    expect(cells.attrs['data-cells-x']).toBe('9');
    const hot = cells.children.filter((p) => p.attrs.fill === RAMP[RAMP.length - 1]);
    expect(hot).toHaveLength(1);
    // Tile of node (6, 4): x from 6, y = ny − (j + 1) = 4 in tile units (y up).
    expect(hot[0].attrs.d).toBe('M6 4h1v1h-1z');
    const cold = cells.children.find((p) => p.attrs.fill === RAMP[0]);
    expect(cold?.attrs.d.split('z').filter((s) => s).length).toBeGreaterThan(0);
  });

  it('large grids are block-averaged to at most 200 × 200 tiles and the subtitle says so', () => {
    const input = spotHeatMap(401, 301);
    const svg = heatMapSvg({ ...input, fields: input.fields.slice(0, 1) });
    const root = parseXml(svg);
    const cells = findAll(root, 'g', { 'data-role': 'cells' })[0];
    expect(cells.attrs['data-cells-x']).toBe('200');
    expect(cells.attrs['data-cells-y']).toBe('200');
    expect(textContent(findAll(root, 'g', { 'data-role': 'header' })[0])).toContain('block averages of the 401 × 301 nodes');
    expect(svg.length).toBeLessThan(400_000);
  });

  it('moderate grids are drawn tile for tile, with no downsampling note', () => {
    const root = parseXml(heatMapSvg(spotHeatMap(65)));
    const cells = findAll(root, 'g', { 'data-role': 'cells' });
    expect(cells.map((c) => c.attrs['data-cells-x'])).toEqual(['65', '65']);
    expect(textContent(findAll(root, 'g', { 'data-role': 'header' })[0])).not.toContain('block averages');
    // Colour-bar ticks lie within the field's range.
    const bar = findAll(root, 'g', { 'data-role': 'colour-bar', 'data-field': 'v' })[0];
    const labels = findAll(bar, 'text').map((t) => Number(textContent(t).replace('\u2212', '-')));
    for (const v of labels) {
      expect(v).toBeGreaterThanOrEqual(Number(bar.attrs['data-min']) - 1e-12);
      expect(v).toBeLessThanOrEqual(Number(bar.attrs['data-max']) + 1e-12);
    }
  });

  it('constant fields and missing values do not break it', () => {
    const values = [1, 1, 1, Number.NaN];
    const root = parseXml(heatMapSvg({ title: 'flat', nx: 2, ny: 2, fields: [{ name: 'u', values }] }));
    expect(textContent(root)).toContain('constant field');
  });

  it('rejects inconsistent sizes', () => {
    expect(() => heatMapSvg({ title: 't', nx: 3, ny: 2, fields: [{ name: 'u', values: [1, 2, 3] }] })).toThrow(
      /field 'u' has 3 values; expected nx·ny = 3·2 = 6/,
    );
  });
});

describe('refinement plots', () => {
  it('two panels; the extrapolated value as a reference line at its height', () => {
    const input = foldRefinement();
    const root = parseXml(refinementSvg(input));
    expect(findAll(root, 'g', { 'data-role': 'panel' })).toHaveLength(2);
    const ref = findAll(root, 'path', { 'data-role': 'extrapolated' })[0];
    expect(Number(ref.attrs['data-value'])).toBe(input.extrapolated);
    expect(textContent(root)).toContain('extrapolated 3.513832');
    // Value points: one per grid, and the one on the finest grid is closest to the line.
    const dots = findAll(root, 'circle').filter((c) => c.attrs['data-value'] !== undefined);
    expect(dots).toHaveLength(4);
    const refY = pathPoints(ref.attrs.d)[0][1];
    const finest = dots.reduce((a, b) => (Number(a.attrs['data-h']) < Number(b.attrs['data-h']) ? a : b));
    for (const d of dots) expect(Math.abs(Number(d.attrs.cy) - refY)).toBeGreaterThanOrEqual(Math.abs(Number(finest.attrs.cy) - refY) - 1e-9);
  });

  it('on a pure power law the error points lie on the fitted line of slope p', () => {
    const hs = [0.2, 0.1, 0.05, 0.025];
    const samples = hs.map((h) => ({ h, value: 2 + 3 * h ** 2 }));
    const r = analyseRefinement(samples);
    const root = parseXml(
      refinementSvg({ title: 'power law', valueName: 'v', points: samples, extrapolated: r.extrapolated, errorEstimate: r.errorEstimate, order: r.order }),
    );
    const fit = findAll(root, 'path', { 'data-role': 'fitted-slope' })[0];
    expect(Number(fit.attrs['data-order'])).toBeCloseTo(2, 9);
    const [[x0, y0], [x1, y1]] = pathPoints(fit.attrs.d);
    const errDots = findAll(root, 'circle').filter((c) => c.attrs['data-error'] !== undefined);
    expect(errDots).toHaveLength(4);
    for (const d of errDots) {
      const cx = Number(d.attrs.cx);
      const cy = Number(d.attrs.cy);
      const onLine = y0 + ((cx - x0) * (y1 - y0)) / (x1 - x0);
      expect(Math.abs(cy - onLine)).toBeLessThan(0.05); // pixels (coordinates carry two decimals)
    }
    expect(textContent(root)).toContain('slope 2 (order)');
  });

  it('without an extrapolated value the right panel shows the changes between grids', () => {
    const root = parseXml(
      refinementSvg({
        title: 'two grids',
        valueName: 'v',
        points: [
          { h: 0.1, value: 1 },
          { h: 0.05, value: 1.2 },
        ],
        extrapolated: null,
        order: null,
      }),
    );
    expect(textContent(root)).toContain('change between grids');
    expect(findAll(root, 'path', { 'data-role': 'extrapolated' })).toHaveLength(0);
    expect(findAll(root, 'circle').filter((c) => c.attrs['data-error'] !== undefined)).toHaveLength(1);
  });

  it('rejects a non-positive h', () => {
    expect(() => refinementSvg({ title: 't', valueName: 'v', points: [{ h: 0, value: 1 }], extrapolated: null, order: null })).toThrow(
      /point 1 needs a positive finite h/,
    );
  });
});
