/**
 * Line plot of a 1D solution: one curve per field against x.
 */
import { bottomMarginFor, drawAxes, leftMarginFor, linearAxis, withRange, type Rect } from './axes.js';
import { footer, header, SIDE } from './figure.js';
import { el, num, svgDocument, text, textWidth } from './svg.js';
import { FONT_FAMILY, INK, PAPER, TYPE, seriesColour } from './theme.js';

export interface LineField {
  readonly name: string;
  readonly values: ArrayLike<number>;
}

export interface LinePlotInput {
  readonly title: string;
  readonly subtitle?: string;
  /** Node coordinates (same length as every field). */
  readonly x: ArrayLike<number>;
  readonly fields: readonly LineField[];
  /** Default `x`. */
  readonly xLabel?: string;
  /** Default: the field name when there is one field, `value` otherwise. */
  readonly yLabel?: string;
  readonly caution?: string;
  /** Figure width in px (default 760). */
  readonly width?: number;
  /** Plot-area height in px (default 360). */
  readonly plotHeight?: number;
}

export function linePlotSvg(input: LinePlotInput): string {
  if (!input || typeof input.title !== 'string') throw new Error("line plot: 'title' must be a string");
  const n = input.x?.length ?? 0;
  if (n === 0) throw new Error("line plot: 'x' must hold at least one value");
  if (!Array.isArray(input.fields) || input.fields.length === 0) {
    throw new Error("line plot: 'fields' must hold at least one field");
  }
  input.fields.forEach((f, i) => {
    if (f.values?.length !== n) {
      throw new Error(
        `line plot: field '${f.name ?? i + 1}' has ${f.values?.length ?? 0} values but x has ${n}`,
      );
    }
  });
  const width = input.width ?? 760;
  const plotHeight = input.plotHeight ?? 360;

  let xmin = Infinity;
  let xmax = -Infinity;
  let ymin = Infinity;
  let ymax = -Infinity;
  for (let i = 0; i < n; i++) {
    const x = input.x[i];
    if (!Number.isFinite(x)) continue;
    for (const f of input.fields) {
      const y = f.values[i];
      if (!Number.isFinite(y)) continue;
      xmin = Math.min(xmin, x);
      xmax = Math.max(xmax, x);
      ymin = Math.min(ymin, y);
      ymax = Math.max(ymax, y);
    }
  }
  if (xmin > xmax) {
    xmin = 0;
    xmax = 1;
    ymin = 0;
    ymax = 1;
  }
  const multi = input.fields.length > 1;
  const head = header(width, input.title, input.subtitle);
  const legendRow = multi ? 26 : 0;
  const yTitle = input.yLabel ?? (multi ? 'value' : input.fields[0].name);
  // The x axis is tight to the data (a solution lives on a fixed domain); y gets nice ends.
  const xAxis0 = linearAxis(xmin, xmax, [0, 1], input.xLabel ?? 'x', { padLow: 0, padHigh: 0 });
  const yAxis0 = linearAxis(ymin, ymax, [1, 0], yTitle);
  const left = SIDE + leftMarginFor(yAxis0.labels, true) - 8;
  const plot: Rect = { x: left, y: head.height + legendRow + 6, width: width - left - SIDE - 12, height: plotHeight };
  const xAxis = withRange(xAxis0, [plot.x, plot.x + plot.width]);
  const yAxis = withRange(yAxis0, [plot.y + plot.height, plot.y]);
  const X = xAxis.scale.map;
  const Y = yAxis.scale.map;

  const body: string[] = [head.markup, drawAxes(plot, xAxis, yAxis)];
  if (multi) {
    let lx = plot.x;
    const ly = head.height + 8;
    const items = input.fields.map((f, i) => {
      const item = el(
        'g',
        { 'data-legend': 'field', 'data-field': f.name },
        el('path', { d: `M${num(lx)} ${num(ly)}h20`, stroke: seriesColour(i), 'stroke-width': 2.4, 'stroke-linecap': 'round' }) +
          text(lx + 27, ly + 4, f.name, { 'font-size': TYPE.legend, fill: INK }),
      );
      lx += 27 + textWidth(f.name, TYPE.legend) + 22;
      return item;
    });
    body.push(el('g', { 'data-role': 'legend' }, items.join('')));
  }

  const curves = input.fields.map((f, fi) => {
    // Non-finite values break the curve into pieces.
    const pieces: string[] = [];
    let d = '';
    for (let i = 0; i < n; i++) {
      const x = input.x[i];
      const y = f.values[i];
      if (!Number.isFinite(x) || !Number.isFinite(y)) {
        if (d) pieces.push(d);
        d = '';
        continue;
      }
      d += `${d ? 'L' : 'M'}${num(X(x))} ${num(Y(y))}`;
    }
    if (d) pieces.push(d);
    return el('path', {
      d: pieces.join(''),
      'data-field': f.name,
      fill: 'none',
      stroke: seriesColour(fi),
      'stroke-width': 2.2,
      'stroke-linejoin': 'round',
      'stroke-linecap': 'round',
    });
  });
  body.push(el('g', { 'data-role': 'curves' }, curves.join('\n')));

  const contentBottom = plot.y + plot.height + bottomMarginFor(true);
  const foot = footer(width, contentBottom, input.caution);
  body.push(foot.markup);
  return svgDocument({
    width,
    height: Math.ceil(contentBottom + foot.height + 8),
    title: input.title,
    description: `Solution profile: ${input.fields.map((f) => f.name).join(', ')} against ${input.xLabel ?? 'x'}.`,
    kind: 'line',
    fontFamily: FONT_FAMILY,
    background: PAPER,
    body: body.join('\n'),
  });
}
