/**
 * Heat maps of 2D fields: one panel per field, side by side, each with its own colour bar.
 * Values are on grid nodes (C order, y the slow index: value[j * nx + i]); each node is drawn
 * as a tile centred on it, so the axes run half a cell beyond the first and last nodes.
 * Large grids are block-averaged to at most `maxCells` tiles per axis to keep files small.
 */
import { drawAxes, formatTick, formatValue, leftMarginFor, linearScale, niceTicks, type AxisSpec, type Rect } from './axes.js';
import { RAMP, rampIndex } from './colormap.js';
import { footer, header, SIDE } from './figure.js';
import { el, idSafe, num, svgDocument, text, textWidth } from './svg.js';
import { FONT_FAMILY, INK, MISSING, MUTED, PAPER, RULE, TYPE } from './theme.js';

export interface HeatMapField {
  readonly name: string;
  /** nx·ny node values, C order with y as the slow index. */
  readonly values: ArrayLike<number>;
}

export interface HeatMapInput {
  readonly title: string;
  readonly subtitle?: string;
  readonly nx: number;
  readonly ny: number;
  readonly fields: readonly HeatMapField[];
  /** Coordinates of the first and last node along x (default 0 and nx − 1). */
  readonly x?: readonly [number, number];
  /** Coordinates of the first and last node along y (default 0 and ny − 1). */
  readonly y?: readonly [number, number];
  readonly xLabel?: string;
  readonly yLabel?: string;
  readonly caution?: string;
  /** Most tiles per axis before block averaging (default 200). */
  readonly maxCells?: number;
  /** Longer side of each panel's image in px (default 300). */
  readonly panelSize?: number;
  /** Prefix for element ids, to keep them unique when several SVGs share a page. */
  readonly idPrefix?: string;
}

export interface BlockGrid {
  /** Tiles per axis. */
  readonly cx: number;
  readonly cy: number;
  /** Tile boundaries in node indices: tile i covers nodes [xb[i], xb[i+1]). */
  readonly xb: Int32Array;
  readonly yb: Int32Array;
  /** Block averages (NaN where a block has no finite value), C order, y slow. */
  readonly values: Float64Array;
}

/** Block-average an nx × ny field down to at most maxCells tiles per axis (exactly that many when larger). */
export function blockAverage(values: ArrayLike<number>, nx: number, ny: number, maxCells: number): BlockGrid {
  // As many tiles as allowed; blocks differ by at most one node in size.
  const cx = Math.min(nx, maxCells);
  const cy = Math.min(ny, maxCells);
  const xb = new Int32Array(cx + 1);
  const yb = new Int32Array(cy + 1);
  for (let i = 0; i <= cx; i++) xb[i] = Math.round((i * nx) / cx);
  for (let j = 0; j <= cy; j++) yb[j] = Math.round((j * ny) / cy);
  const out = new Float64Array(cx * cy);
  for (let bj = 0; bj < cy; bj++) {
    for (let bi = 0; bi < cx; bi++) {
      let s = 0;
      let c = 0;
      for (let j = yb[bj]; j < yb[bj + 1]; j++) {
        for (let i = xb[bi]; i < xb[bi + 1]; i++) {
          const v = values[j * nx + i];
          if (Number.isFinite(v)) {
            s += v;
            c++;
          }
        }
      }
      out[bj * cx + bi] = c > 0 ? s / c : Number.NaN;
    }
  }
  return { cx, cy, xb, yb, values: out };
}

function validate(input: HeatMapInput): void {
  if (!input || typeof input.title !== 'string') throw new Error("heat map: 'title' must be a string");
  const { nx, ny } = input;
  if (!Number.isInteger(nx) || nx < 1) throw new Error(`heat map: 'nx' must be a positive integer (got ${String(nx)})`);
  if (!Number.isInteger(ny) || ny < 1) throw new Error(`heat map: 'ny' must be a positive integer (got ${String(ny)})`);
  if (!Array.isArray(input.fields) || input.fields.length === 0) {
    throw new Error("heat map: 'fields' must hold at least one field");
  }
  input.fields.forEach((f, i) => {
    if (f.values?.length !== nx * ny) {
      throw new Error(
        `heat map: field '${f.name ?? i + 1}' has ${f.values?.length ?? 0} values; expected nx·ny = ${nx}·${ny} = ${nx * ny}`,
      );
    }
  });
  for (const key of ['x', 'y'] as const) {
    const r = input[key];
    if (r !== undefined && !(r.length === 2 && Number.isFinite(r[0]) && Number.isFinite(r[1]) && r[1] > r[0])) {
      throw new Error(`heat map: '${key}' must be [first, last] node coordinates with last > first (got ${JSON.stringify(r)})`);
    }
  }
  if (input.maxCells !== undefined && !(Number.isInteger(input.maxCells) && input.maxCells >= 2)) {
    throw new Error(`heat map: 'maxCells' must be an integer of at least 2 (got ${String(input.maxCells)})`);
  }
}

/** Axis with ticks inside [lo, hi] (the image edges), labels by the tick step. */
function insideAxis(lo: number, hi: number, range: readonly [number, number], title?: string, target = 5): AxisSpec {
  const { ticks, step } = niceTicks(lo, hi, { cover: false, target });
  return { scale: linearScale([lo, hi], range), ticks, labels: ticks.map((t) => formatTick(t, step, ticks)), title };
}

export function heatMapSvg(input: HeatMapInput): string {
  validate(input);
  const { nx, ny } = input;
  const maxCells = input.maxCells ?? 200;
  const panelSize = input.panelSize ?? 300;
  const prefix = idSafe(input.idPrefix ?? 'heatmap');

  // Node coordinates and tile edges (half a cell beyond the end nodes).
  const [xa, xz] = input.x ?? [0, nx - 1];
  const [ya, yz] = input.y ?? [0, ny - 1];
  const hx = nx > 1 ? (xz - xa) / (nx - 1) : 1;
  const hy = ny > 1 ? (yz - ya) / (ny - 1) : 1;
  const ex: [number, number] = [xa - hx / 2, xa + hx * (nx - 0.5)];
  const ey: [number, number] = [ya - hy / 2, ya + hy * (ny - 0.5)];
  const aspect = (ex[1] - ex[0]) / (ey[1] - ey[0]);
  let imgW = aspect >= 1 ? panelSize : Math.max(60, panelSize * aspect);
  let imgH = aspect >= 1 ? Math.max(60, panelSize / aspect) : panelSize;
  imgW = Math.round(imgW);
  imgH = Math.round(imgH);

  const downsampled = nx > maxCells || ny > maxCells;
  const blocks = input.fields.map((f) => blockAverage(f.values, nx, ny, maxCells));
  let subtitle = input.subtitle ?? '';
  if (downsampled) {
    const b = blocks[0];
    const note = `shown as ${b.cx} × ${b.cy} block averages of the ${nx} × ${ny} nodes`;
    subtitle = subtitle ? `${subtitle}; ${note}.` : `${note[0].toUpperCase()}${note.slice(1)}.`;
  }

  // Panel geometry: y tick labels | image | gap | colour bar | bar labels.
  const yAxis0 = insideAxis(ey[0], ey[1], [1, 0], input.yLabel ?? 'y');
  const leftFirst = leftMarginFor(yAxis0.labels, true) - 8;
  const leftOther = leftMarginFor(yAxis0.labels, false) + 4;
  const ranges = input.fields.map((f) => {
    let lo = Infinity;
    let hi = -Infinity;
    let missing = 0;
    for (let k = 0; k < f.values.length; k++) {
      const v = f.values[k];
      if (Number.isFinite(v)) {
        if (v < lo) lo = v;
        if (v > hi) hi = v;
      } else {
        missing++;
      }
    }
    if (lo > hi) return { lo: 0, hi: 1, constant: false, empty: true, missing };
    const constant = hi - lo <= 1e-12 * Math.max(Math.abs(lo), Math.abs(hi));
    return { lo, hi, constant, empty: false, missing };
  });
  const barTicks = ranges.map((r) => {
    if (r.empty) return { ticks: [] as number[], labels: [] as string[] };
    if (r.constant) return { ticks: [r.lo], labels: [formatValue(r.lo, 6)] };
    const { ticks, step } = niceTicks(r.lo, r.hi, { cover: false, target: 5 });
    return { ticks, labels: ticks.map((t) => formatTick(t, step, ticks)) };
  });
  const barWidth = 13;
  const panels = input.fields.map((_, fi) => {
    const labelW = Math.max(0, ...barTicks[fi].labels.map((l) => textWidth(l, TYPE.tick)));
    const left = fi === 0 ? leftFirst : leftOther;
    return { left, width: left + imgW + 12 + barWidth + 6 + labelW + 18 };
  });
  const width = Math.max(
    SIDE * 2 + panels.reduce((s, p) => s + p.width, 0),
    440,
  );

  const head = header(width, input.title, subtitle || undefined);
  const top = head.height + 26;
  const body: string[] = [head.markup];
  const defs: string[] = [];
  // One gradient for all colour bars (the ramp, bottom = low).
  const gradId = `${prefix}-ramp`;
  const stops: string[] = [];
  for (let k = 0; k <= 16; k++) {
    const t = k / 16;
    stops.push(el('stop', { offset: num(t), 'stop-color': RAMP[rampIndex(t)] }));
  }
  defs.push(el('linearGradient', { id: gradId, x1: 0, y1: 1, x2: 0, y2: 0 }, stops.join('')));

  let px = SIDE;
  input.fields.forEach((f, fi) => {
    const p = panels[fi];
    const img: Rect = { x: px + p.left, y: top, width: imgW, height: imgH };
    const r = ranges[fi];
    const b = blocks[fi];
    const parts: string[] = [];
    parts.push(text(img.x, top - 10, f.name, { 'font-size': TYPE.axisTitle, 'font-weight': 600, fill: INK }));
    const notes = [
      r.empty ? 'no finite values' : r.constant ? 'constant field' : '',
      r.missing > 0 && !r.empty ? `grey: ${r.missing} node${r.missing === 1 ? '' : 's'} without a finite value` : '',
    ].filter((t) => t !== '');
    if (notes.length > 0) {
      parts.push(
        text(img.x + img.width, top - 10, notes.join('; '), { 'font-size': TYPE.tick, fill: MUTED, 'text-anchor': 'end' }),
      );
    }

    // Tiles in node-index units, scaled onto the image. Runs of equal colour along a row are
    // merged, and all tiles of one colour level form one path (a third of the size of one
    // <rect> per run, rendered identically).
    const span = r.constant || r.empty ? 1 : r.hi - r.lo;
    const byColour = new Map<string, string[]>();
    for (let bj = 0; bj < b.cy; bj++) {
      const y0 = ny - b.yb[bj + 1];
      const hgt = b.yb[bj + 1] - b.yb[bj];
      let bi = 0;
      while (bi < b.cx) {
        const v = b.values[bj * b.cx + bi];
        const colour = Number.isFinite(v) ? RAMP[rampIndex(r.constant ? 0.5 : (v - r.lo) / span)] : MISSING;
        let bk = bi + 1;
        while (bk < b.cx) {
          const w = b.values[bj * b.cx + bk];
          const c2 = Number.isFinite(w) ? RAMP[rampIndex(r.constant ? 0.5 : (w - r.lo) / span)] : MISSING;
          if (c2 !== colour) break;
          bk++;
        }
        const w = b.xb[bk] - b.xb[bi];
        let list = byColour.get(colour);
        if (!list) byColour.set(colour, (list = []));
        list.push(`M${b.xb[bi]} ${y0}h${w}v${hgt}h-${w}z`);
        bi = bk;
      }
    }
    const sx = img.width / nx;
    const sy = img.height / ny;
    parts.push(
      el(
        'g',
        {
          'data-role': 'cells',
          'data-field': f.name,
          'data-nx': nx,
          'data-ny': ny,
          'data-cells-x': b.cx,
          'data-cells-y': b.cy,
          transform: `translate(${num(img.x)} ${num(img.y)}) scale(${sx.toPrecision(6)} ${sy.toPrecision(6)})`,
          'shape-rendering': 'crispEdges',
        },
        [...byColour.entries()]
          .sort((a, c) => (a[0] < c[0] ? -1 : a[0] > c[0] ? 1 : 0))
          .map(([colour, list]) => `<path fill="${colour}" d="${list.join('')}"/>`)
          .join('\n'),
      ),
    );
    parts.push(el('rect', { x: img.x, y: img.y, width: img.width, height: img.height, fill: 'none', stroke: RULE, 'stroke-width': 0.8 }));
    const xAxis = insideAxis(ex[0], ex[1], [img.x, img.x + img.width], input.xLabel ?? 'x');
    const yAxis = insideAxis(ey[0], ey[1], [img.y + img.height, img.y], fi === 0 ? (input.yLabel ?? 'y') : undefined);
    parts.push(drawAxes(img, xAxis, yAxis, { grid: false }));

    // Colour bar.
    const bx = img.x + img.width + 12;
    const bar: string[] = [];
    bar.push(el('rect', { x: bx, y: img.y, width: barWidth, height: img.height, fill: `url(#${gradId})`, stroke: RULE, 'stroke-width': 0.8 }));
    const bt = barTicks[fi];
    const barScale = r.constant
      ? (_v: number): number => img.y + img.height / 2
      : linearScale([r.lo, r.hi], [img.y + img.height, img.y]).map;
    let tickPath = '';
    bt.ticks.forEach((t, k) => {
      const ty = barScale(t);
      tickPath += `M${num(bx + barWidth)} ${num(ty)}h4`;
      bar.push(text(bx + barWidth + 7, ty + TYPE.tick * 0.35, bt.labels[k], { 'font-size': TYPE.tick, fill: MUTED }));
    });
    if (tickPath) bar.push(el('path', { d: tickPath, stroke: MUTED, 'stroke-width': 1 }));
    parts.push(el('g', { 'data-role': 'colour-bar', 'data-field': f.name, 'data-min': String(r.lo), 'data-max': String(r.hi) }, bar.join('')));

    body.push(el('g', { 'data-role': 'panel', 'data-field': f.name }, parts.join('\n')));
    px += p.width;
  });

  const contentBottom = top + imgH + 6 + 5 + TYPE.tick + TYPE.axisTitle + 12 + 10;
  const foot = footer(width, contentBottom, input.caution);
  body.push(foot.markup);
  return svgDocument({
    width: Math.ceil(width),
    height: Math.ceil(contentBottom + foot.height + 8),
    title: input.title,
    description: `Heat map of ${input.fields.map((f) => f.name).join(', ')} on a ${nx} × ${ny} grid.`,
    kind: 'heat-map',
    fontFamily: FONT_FAMILY,
    background: PAPER,
    defs: defs.join(''),
    body: body.join('\n'),
  });
}
