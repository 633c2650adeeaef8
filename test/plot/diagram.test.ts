import { describe, expect, it } from 'vitest';
import { diagramSvg, splitByStability, type DiagramInput } from '../../src/plot/index.js';
import { placeLabels, type Box } from '../../src/plot/labels.js';
import { textWidth } from '../../src/plot/svg.js';
import { STABILITY_STYLE } from '../../src/plot/theme.js';
import { hopfDiagram, pitchforkDiagram, sCurveDiagram, snakingDiagram } from './sample-data.js';
import { findAll, parseXml, pathPoints, textContent, type XmlElement } from './xml-check.js';

function segments(root: XmlElement, branch: string): XmlElement[] {
  return findAll(root, 'path', { 'data-branch': branch }).filter((e) => e.attrs['data-stability'] !== undefined);
}

describe('splitByStability', () => {
  it('splits where stability changes, neighbours sharing the midpoint of the changing piece', () => {
    const segs = splitByStability([
      { parameter: 0, monitor: 0, stable: true },
      { parameter: 1, monitor: 1, stable: true },
      { parameter: 2, monitor: 3, stable: false },
      { parameter: 3, monitor: 4, stable: false },
      { parameter: 4, monitor: 4, stable: null },
    ]);
    expect(segs.map((s) => s.stability)).toEqual(['stable', 'unstable', 'unknown']);
    expect(segs[0].points[segs[0].points.length - 1]).toEqual({ parameter: 1.5, monitor: 2 });
    expect(segs[1].points[0]).toEqual({ parameter: 1.5, monitor: 2 });
    expect(segs[1].points[segs[1].points.length - 1]).toEqual({ parameter: 3.5, monitor: 4 });
    expect(segs[2].points[0]).toEqual({ parameter: 3.5, monitor: 4 });
  });

  it('uses a special point on the changing piece as the junction', () => {
    const segs = splitByStability(
      [
        { parameter: 0, monitor: 0, stable: true },
        { parameter: 1, monitor: 1, stable: true },
        { parameter: 1.2, monitor: 2, stable: false },
      ],
      [
        { parameter: 1.19, monitor: 1.4 },
        { parameter: 5, monitor: 5 },
      ],
    );
    expect(segs[0].points[2]).toEqual({ parameter: 1.19, monitor: 1.4 });
    expect(segs[1].points[0]).toEqual({ parameter: 1.19, monitor: 1.4 });
  });

  it('breaks the curve at non-finite points', () => {
    const segs = splitByStability([
      { parameter: 0, monitor: 0, stable: true },
      { parameter: 1, monitor: 1, stable: true },
      { parameter: Number.NaN, monitor: 1, stable: true },
      { parameter: 2, monitor: 2, stable: true },
      { parameter: 3, monitor: 3, stable: true },
    ]);
    expect(segs).toHaveLength(2);
    expect(segs[0].points).toHaveLength(2);
    expect(segs[1].points).toHaveLength(2);
  });
});

describe('diagramSvg on an S-shaped branch with two folds', () => {
  const input = sCurveDiagram();
  const svg = diagramSvg(input);
  const root = parseXml(svg);

  it('is well-formed SVG with a title', () => {
    expect(root.name).toBe('svg');
    expect(root.attrs.xmlns).toBe('http://www.w3.org/2000/svg');
    expect(textContent(findAll(root, 'title')[0])).toBe(input.title);
  });

  it('draws one path per stability segment: stable solid, unstable dashed', () => {
    const segs = segments(root, '1');
    expect(segs.map((s) => s.attrs['data-stability']).sort()).toEqual(['stable', 'stable', 'unstable']);
    for (const s of segs) {
      if (s.attrs['data-stability'] === 'stable') expect(s.attrs['stroke-dasharray']).toBeUndefined();
      else expect(s.attrs['stroke-dasharray']).toBe(STABILITY_STYLE.unstable.dash);
    }
    // All three in the branch's colour.
    expect(new Set(segs.map((s) => s.attrs.stroke)).size).toBe(1);
  });

  it('segments meet at the fold points', () => {
    const bySeg = new Map(segments(root, '1').map((s) => [Number(s.attrs['data-segment']), pathPoints(s.attrs.d)]));
    const first = bySeg.get(1) as [number, number][];
    const middle = bySeg.get(2) as [number, number][];
    const last = bySeg.get(3) as [number, number][];
    expect(first[first.length - 1]).toEqual(middle[0]);
    expect(middle[middle.length - 1]).toEqual(last[0]);
    // The junctions are the fold markers' positions (the folds lie on the changing pieces).
    const folds = findAll(root, 'g', { 'data-role': 'special-point', 'data-kind': 'fold' });
    expect(folds).toHaveLength(2);
    const foldCentres = folds.map((g) => pathPoints(findAll(g, 'path')[0].attrs.d)[0]);
    // The diamond path starts at the top vertex: (x, y − d); compare x only, and y within the marker.
    const near = (p: [number, number], q: [number, number]): boolean => Math.abs(p[0] - q[0]) < 0.02 && Math.abs(p[1] - q[1]) < 8;
    expect(foldCentres.some((c) => near(c, first[first.length - 1]))).toBe(true);
    expect(foldCentres.some((c) => near(c, last[0]))).toBe(true);
  });

  it('labels the special points in plain words with their parameter values', () => {
    const labels = findAll(root, 'g', { 'data-role': 'special-point', 'data-kind': 'fold' }).map((g) => textContent(findAll(g, 'text', { 'data-role': 'label' })[0]));
    expect(labels.some((l) => l.startsWith('fold (ignition)') && l.includes('lambda = 2.6563'))).toBe(true);
    expect(labels.some((l) => l.startsWith('fold (extinction)') && l.includes('lambda = 1.0562'))).toBe(true);
    const ends = findAll(root, 'g', { 'data-role': 'special-point', 'data-kind': 'end' });
    expect(ends).toHaveLength(2);
    expect(textContent(ends[0])).toBe('end');
  });

  it('has a legend naming the branch, the line styles and the point kinds, and the caution', () => {
    const legend = textContent(findAll(root, 'g', { 'data-role': 'legend' })[0]);
    for (const w of ['branch 1', 'stable', 'unstable', 'fold', 'end']) expect(legend).toContain(w);
    expect(legend).not.toContain('not computed');
    expect(textContent(findAll(root, 'g', { 'data-role': 'caution' })[0])).toContain('not a substitute for design codes');
  });

  it('axis titles and tick labels', () => {
    expect(textContent(findAll(root, 'text', { 'data-role': 'x-title' })[0])).toBe('lambda');
    expect(textContent(findAll(root, 'text', { 'data-role': 'y-title' })[0])).toBe('max u');
    const ticks = findAll(root, 'g', { 'data-role': 'tick-labels' })[0].children.map(textContent);
    expect(ticks).toContain('0.0');
    expect(ticks).toContain('3.5');
  });

  it('without a caution there is no footer', () => {
    const plain = parseXml(diagramSvg({ ...input, caution: undefined }));
    expect(findAll(plain, 'g', { 'data-role': 'caution' })).toHaveLength(0);
  });
});

describe('diagramSvg on a pitchfork with three branches', () => {
  const root = parseXml(diagramSvg(pitchforkDiagram()));

  it('colours each branch differently and splits the zero state at the first branch point', () => {
    const colours = ['1', '2', '3'].map((b) => segments(root, b)[0].attrs.stroke);
    expect(new Set(colours).size).toBe(3);
    const zero = segments(root, '1');
    expect(zero.map((s) => s.attrs['data-stability']).sort()).toEqual(['stable', 'unstable']);
    expect(segments(root, '2').map((s) => s.attrs['data-stability'])).toEqual(['stable']);
  });

  it('marks both branch points with the words "branch point"', () => {
    const bps = findAll(root, 'g', { 'data-role': 'special-point', 'data-kind': 'branch-point' });
    expect(bps).toHaveLength(2);
    for (const g of bps) expect(textContent(g)).toMatch(/^branch point/);
    expect(bps.map((g) => Number(g.attrs['data-parameter'])).sort((a, b) => a - b)).toEqual([Math.PI ** 2, 4 * Math.PI ** 2]);
  });

  it('names branches from their names in the legend', () => {
    const legend = textContent(findAll(root, 'g', { 'data-role': 'legend' })[0]);
    for (const n of ['zero state', 'positive arm', 'negative arm']) expect(legend).toContain(n);
  });
});

describe('diagramSvg escaping and unknown stability', () => {
  const input = hopfDiagram();
  const svg = diagramSvg(input);
  const root = parseXml(svg);

  it('escapes markup characters in every text', () => {
    expect(svg).not.toContain('<homogeneous>');
    expect(svg).toContain('&lt;homogeneous&gt;');
    expect(textContent(findAll(root, 'title')[0])).toBe(input.title);
    const header = textContent(findAll(root, 'g', { 'data-role': 'header' })[0]);
    expect(header).toContain('"quotes", ampersands & angle <brackets>');
  });

  it('draws not-computed stability in the third (dotted) style and names it in the legend', () => {
    const segs = segments(root, 'homogeneous');
    expect(segs.map((s) => s.attrs['data-stability'])).toEqual(expect.arrayContaining(['unknown', 'stable', 'unstable']));
    const unknown = segs.find((s) => s.attrs['data-stability'] === 'unknown') as XmlElement;
    expect(unknown.attrs['stroke-dasharray']).toBe(STABILITY_STYLE.unknown.dash);
    expect(textContent(findAll(root, 'g', { 'data-role': 'legend' })[0])).toContain('stability not computed');
  });

  it('labels the Hopf point "Hopf"', () => {
    const g = findAll(root, 'g', { 'data-role': 'special-point', 'data-kind': 'hopf' });
    expect(g).toHaveLength(1);
    expect(textContent(g[0])).toBe('HopfB = 2');
  });
});

describe('diagram input errors', () => {
  const base = (): DiagramInput => pitchforkDiagram();
  it('name the problem', () => {
    expect(() =>
      diagramSvg({ ...base(), specialPoints: [{ kind: 'saddle' as never, branch: 1, parameter: 0, monitor: 0 }] }),
    ).toThrow(/special point 1 has kind 'saddle' \(accepted: fold, branch-point, hopf, end, cusp, bogdanov-takens, fold-branch-point, mode-change, mode-crossing, zero-hopf, bautin, double-hopf\)/);
    expect(() =>
      diagramSvg({ ...base(), specialPoints: [{ kind: 'fold', branch: 9, parameter: 0, monitor: 0 }] }),
    ).toThrow(/refers to branch '9', which is not among the branches \(1, 2, 3\)/);
    expect(() => diagramSvg({ ...base(), branches: [base().branches[0], base().branches[0]] })).toThrow(/branch id '1' appears twice/);
  });

  it('an empty diagram still renders', () => {
    const root = parseXml(diagramSvg({ title: 'nothing yet', parameterName: 'p', monitorName: 'm', branches: [] }));
    expect(findAll(root, 'path', { 'data-stability': 'stable' })).toHaveLength(0);
  });
});

describe('label placement', () => {
  it('keeps labels apart in a crowded diagram (twelve stacked folds)', () => {
    const root = parseXml(diagramSvg(snakingDiagram()));
    const groups = findAll(root, 'g', { 'data-role': 'special-point' });
    expect(groups).toHaveLength(14);
    // Label boxes from the tspan positions and the estimated text widths.
    const boxes = groups.map((g) => {
      const spans = findAll(g, 'tspan');
      const x = Number(spans[0].attrs.x);
      const top = Number(spans[0].attrs.y) - 11;
      const bottom = Number(spans[spans.length - 1].attrs.y) + 3;
      const w = Math.max(...spans.map((t, k) => textWidth(textContent(t), k === 0 ? 11.5 : 10.5, k === 0)));
      return { x0: x, y0: top, x1: x + w, y1: bottom };
    });
    for (let i = 0; i < boxes.length; i++) {
      for (let j = i + 1; j < boxes.length; j++) {
        const a = boxes[i];
        const b = boxes[j];
        const overlap = Math.min(a.x1, b.x1) > Math.max(a.x0, b.x0) && Math.min(a.y1, b.y1) > Math.max(a.y0, b.y0);
        expect(overlap, `labels ${i} and ${j} overlap`).toBe(false);
      }
    }
  });

  it('placeLabels: crowded markers get non-overlapping boxes inside the bounds', () => {
    const bounds: Box = { x0: 0, y0: 0, x1: 400, y1: 300 };
    const reqs = Array.from({ length: 8 }, (_, i) => ({ x: 200, y: 60 + 25 * i, radius: 6, width: 70, height: 18 }));
    const placed = placeLabels(reqs, bounds, []);
    for (const p of placed) {
      expect(p.box.x0).toBeGreaterThanOrEqual(0);
      expect(p.box.x1).toBeLessThanOrEqual(400);
    }
    for (let i = 0; i < placed.length; i++) {
      for (let j = i + 1; j < placed.length; j++) {
        const a = placed[i].box;
        const b = placed[j].box;
        const overlap = Math.min(a.x1, b.x1) > Math.max(a.x0, b.x0) && Math.min(a.y1, b.y1) > Math.max(a.y0, b.y0);
        expect(overlap).toBe(false);
      }
    }
  });
});
