/**
 * Grid-refinement plot, two panels side by side:
 *  left  — the value against h, from h = 0 at the left, with the extrapolated value as a
 *          reference line and its error estimate as a band;
 *  right — |value − extrapolated| against h on log–log axes with a line of slope p (the
 *          order) fitted through the points, and the expected slope for comparison when given.
 *          Without an extrapolated value it shows |difference to the previous grid| instead.
 */
import {
  bottomMarginFor,
  drawAxes,
  formatValue,
  leftMarginFor,
  linearAxis,
  logAxis,
  withRange,
  type Rect,
} from './axes.js';
import { footer, header, SIDE } from './figure.js';
import { el, escapeXml, num, svgDocument, text } from './svg.js';
import { FONT_FAMILY, INK, MUTED, PAPER, SERIES, TYPE } from './theme.js';

export interface RefinementPlotInput {
  readonly title: string;
  readonly subtitle?: string;
  /** What the value is (axis title), e.g. `lambda at fold 1`. */
  readonly valueName: string;
  readonly points: readonly { readonly h: number; readonly value: number }[];
  readonly extrapolated: number | null;
  readonly errorEstimate?: number | null;
  /** Observed (or assumed) order used for the extrapolation. */
  readonly order: number | null;
  /** Formal order of the scheme, drawn as a reference slope. */
  readonly expectedOrder?: number;
  readonly caution?: string;
  /** Figure width in px (default 900). */
  readonly width?: number;
  /** Plot-area height in px (default 320). */
  readonly plotHeight?: number;
}

const POINT_COLOUR = SERIES[0];
const FIT_COLOUR = SERIES[1];

/**
 * The value with as many digits as its error estimate resolves (two digits of the error, trailing
 * zeros kept: 1.8883000 ± 8e-7 reads differently from 1.8883 ± 8e-7); 7 significant digits
 * without an estimate.
 */
export function valueToError(v: number, err: number | null): string {
  if (err === null || !(err > 0) || !Number.isFinite(v) || v === 0) return formatValue(v, 7);
  const digits = Math.floor(Math.log10(Math.abs(v))) - Math.floor(Math.log10(err)) + 2;
  if (Math.abs(v) >= 1e6 || Math.abs(v) < 1e-4) return formatValue(v, Math.min(15, Math.max(3, digits)));
  return v.toPrecision(Math.min(15, Math.max(3, digits))).replace('-', '\u2212');
}

function dot(x: number, y: number, extra: Record<string, string | number> = {}): string {
  return el('circle', { cx: x, cy: y, r: 4.2, fill: POINT_COLOUR, stroke: PAPER, 'stroke-width': 1.4, ...extra });
}

function haloText(x: number, y: number, content: string, a: Record<string, string | number>): string {
  return el(
    'text',
    { x, y, stroke: PAPER, 'stroke-width': 3, 'stroke-linejoin': 'round', 'paint-order': 'stroke', ...a },
    escapeXml(content),
  );
}

export function refinementSvg(input: RefinementPlotInput): string {
  if (!input || typeof input.title !== 'string') throw new Error("refinement plot: 'title' must be a string");
  if (!Array.isArray(input.points) || input.points.length === 0) {
    throw new Error("refinement plot: 'points' must hold at least one grid");
  }
  input.points.forEach((p, i) => {
    if (!(Number.isFinite(p.h) && p.h > 0 && Number.isFinite(p.value))) {
      throw new Error(`refinement plot: point ${i + 1} needs a positive finite h and a finite value (got h = ${p.h}, value = ${p.value})`);
    }
  });
  const width = input.width ?? 900;
  const plotHeight = input.plotHeight ?? 320;
  const pts = [...input.points].sort((a, b) => b.h - a.h);
  const ext = input.extrapolated !== null && Number.isFinite(input.extrapolated) ? input.extrapolated : null;
  const errEst = input.errorEstimate !== undefined && input.errorEstimate !== null && Number.isFinite(input.errorEstimate) ? input.errorEstimate : null;
  const order = input.order !== null && Number.isFinite(input.order) ? input.order : null;

  const head = header(width, input.title, input.subtitle);
  const top = head.height + 30;
  const gap = 40;
  const panelW = (width - 2 * SIDE - gap) / 2;
  const body: string[] = [head.markup];

  // Left panel: value against h from 0.
  const hmax = Math.max(...pts.map((p) => p.h));
  let vmin = Math.min(...pts.map((p) => p.value));
  let vmax = Math.max(...pts.map((p) => p.value));
  if (ext !== null) {
    vmin = Math.min(vmin, ext - (errEst ?? 0));
    vmax = Math.max(vmax, ext + (errEst ?? 0));
  }
  const xL0 = linearAxis(0, hmax, [0, 1], 'grid spacing h', { padLow: 0, padHigh: 0.06 });
  const yL0 = linearAxis(vmin, vmax, [1, 0], input.valueName, { target: 5, padLow: 0.06, padHigh: 0.08 });
  const leftL = leftMarginFor(yL0.labels, true) - 8;
  const plotL: Rect = { x: SIDE + leftL, y: top, width: panelW - leftL, height: plotHeight };
  const xL = withRange(xL0, [plotL.x, plotL.x + plotL.width]);
  const yL = withRange(yL0, [plotL.y + plotL.height, plotL.y]);
  const left: string[] = [];
  left.push(text(plotL.x, top - 12, 'value against grid spacing', { 'font-size': TYPE.axisTitle, 'font-weight': 600, fill: INK }));
  left.push(drawAxes(plotL, xL, yL));
  if (ext !== null) {
    const ey = yL.scale.map(ext);
    if (errEst !== null && errEst > 0) {
      const y0 = yL.scale.map(ext + errEst);
      const y1 = yL.scale.map(ext - errEst);
      left.push(
        el('rect', {
          x: plotL.x,
          y: y0,
          width: plotL.width,
          height: Math.max(0.8, y1 - y0),
          fill: FIT_COLOUR,
          'fill-opacity': 0.12,
          'data-role': 'error-band',
        }),
      );
    }
    left.push(
      el('path', {
        d: `M${num(plotL.x)} ${num(ey)}H${num(plotL.x + plotL.width)}`,
        stroke: FIT_COLOUR,
        'stroke-width': 1.4,
        'stroke-dasharray': '6 4',
        'data-role': 'extrapolated',
        'data-value': String(ext),
      }),
    );
    // A ring at h = 0: where the sequence is heading.
    left.push(el('circle', { cx: xL.scale.map(0), cy: ey, r: 4.5, fill: PAPER, stroke: FIT_COLOUR, 'stroke-width': 1.8 }));
    const label =
      `extrapolated ${valueToError(ext, errEst)}` + (errEst !== null ? ` ± ${formatValue(errEst, 2)}` : '');
    // Put the label on the side of the line away from the data near the right end.
    const last = pts[0];
    const above = yL.scale.map(last.value) > ey;
    left.push(
      haloText(plotL.x + plotL.width - 4, above ? ey - 7 : ey + 15, label, {
        'text-anchor': 'end',
        'font-size': TYPE.label,
        fill: FIT_COLOUR,
        'font-weight': 600,
      }),
    );
  }
  left.push(
    el('path', {
      d: pts.map((p, i) => `${i ? 'L' : 'M'}${num(xL.scale.map(p.h))} ${num(yL.scale.map(p.value))}`).join(''),
      stroke: POINT_COLOUR,
      'stroke-width': 1.3,
      fill: 'none',
      'stroke-opacity': 0.7,
    }),
  );
  left.push(...pts.map((p) => dot(xL.scale.map(p.h), yL.scale.map(p.value), { 'data-h': String(p.h), 'data-value': String(p.value) })));
  body.push(el('g', { 'data-role': 'panel', 'data-panel': 'values' }, left.join('\n')));

  // Right panel: log–log error against h.
  const useExt = ext !== null;
  const errPts = (
    useExt
      ? pts.map((p) => ({ h: p.h, e: Math.abs(p.value - (ext as number)) }))
      : pts.slice(1).map((p, i) => ({ h: p.h, e: Math.abs(p.value - pts[i].value) }))
  ).filter((q) => q.e > 0 && Number.isFinite(q.e));
  const rx = SIDE + panelW + gap;
  const right: string[] = [];
  const rightTitle = useExt ? 'error against grid spacing (log–log)' : 'change between grids (log–log)';
  const yTitleR = useExt ? `|value − extrapolated|` : '|difference to previous grid|';
  if (errPts.length === 0) {
    const msg = useExt ? 'all values equal the extrapolated value' : 'fewer than two distinct values';
    right.push(text(rx, top - 12, rightTitle, { 'font-size': TYPE.axisTitle, 'font-weight': 600, fill: INK }));
    right.push(text(rx + panelW / 2, top + plotHeight / 2, `nothing to show: ${msg}`, { 'text-anchor': 'middle', 'font-size': TYPE.label, fill: MUTED }));
  } else {
    const hs = errPts.map((q) => q.h);
    const es = errPts.map((q) => q.e);
    // Fitted line: slope p (the order), intercept by least squares in log space.
    let fit: ((h: number) => number) | null = null;
    if (order !== null && order > 0) {
      const c = errPts.reduce((s, q) => s + Math.log10(q.e) - order * Math.log10(q.h), 0) / errPts.length;
      fit = (h: number): number => Math.pow(10, c + order * Math.log10(h));
    }
    let ref: ((h: number) => number) | null = null;
    if (input.expectedOrder !== undefined && input.expectedOrder > 0 && (order === null || Math.abs(order - input.expectedOrder) > 1e-9)) {
      const pe = input.expectedOrder;
      const coarse = errPts[0];
      ref = (h: number): number => coarse.e * Math.pow(h / coarse.h, pe) * 0.5;
    }
    const hLo = Math.min(...hs) / 1.25;
    const hHi = Math.max(...hs) * 1.25;
    const allE = [...es];
    if (fit) allE.push(fit(hLo), fit(hHi));
    if (ref) allE.push(ref(hLo), ref(hHi));
    const xR0 = logAxis(hLo, hHi, [0, 1], 'grid spacing h');
    const yR0 = logAxis(Math.min(...allE), Math.max(...allE), [1, 0], yTitleR);
    const leftR = leftMarginFor(yR0.labels, true) - 8;
    const plotR: Rect = { x: rx + leftR, y: top, width: panelW - leftR, height: plotHeight };
    const xR = withRange(xR0, [plotR.x, plotR.x + plotR.width]);
    const yR = withRange(yR0, [plotR.y + plotR.height, plotR.y]);
    right.push(text(plotR.x, top - 12, rightTitle, { 'font-size': TYPE.axisTitle, 'font-weight': 600, fill: INK }));
    right.push(drawAxes(plotR, xR, yR));
    const line = (f: (h: number) => number, a: Record<string, string | number>): string =>
      el('path', {
        d: `M${num(xR.scale.map(hLo))} ${num(yR.scale.map(f(hLo)))}L${num(xR.scale.map(hHi))} ${num(yR.scale.map(f(hHi)))}`,
        fill: 'none',
        ...a,
      });
    if (ref) {
      right.push(line(ref, { stroke: MUTED, 'stroke-width': 1.2, 'stroke-dasharray': '2 3', 'data-role': 'expected-slope' }));
      const hx = Math.pow(10, 0.5 * (Math.log10(hLo) + Math.log10(hHi)));
      right.push(
        haloText(xR.scale.map(hx) + 8, yR.scale.map(ref(hx)) + 14, `slope ${formatValue(input.expectedOrder as number, 3)} (expected)`, {
          'font-size': TYPE.label - 0.5,
          fill: MUTED,
        }),
      );
    }
    if (fit) {
      right.push(line(fit, { stroke: FIT_COLOUR, 'stroke-width': 1.6, 'data-role': 'fitted-slope', 'data-order': String(order) }));
      // Label at the upper (coarse) end of the line, just above it.
      const hx = Math.pow(10, Math.log10(hLo) + 0.72 * (Math.log10(hHi) - Math.log10(hLo)));
      const lx = xR.scale.map(hx);
      const ly = yR.scale.map(fit(hx));
      const lab = `slope ${formatValue(order as number, 3)} (order)`;
      right.push(
        haloText(lx - 6, ly - 9, lab, {
          'text-anchor': 'end',
          'font-size': TYPE.label,
          fill: FIT_COLOUR,
          'font-weight': 600,
        }),
      );
    }
    right.push(...errPts.map((q) => dot(xR.scale.map(q.h), yR.scale.map(q.e), { 'data-h': String(q.h), 'data-error': String(q.e) })));
  }
  body.push(el('g', { 'data-role': 'panel', 'data-panel': 'errors' }, right.join('\n')));

  const contentBottom = top + plotHeight + bottomMarginFor(true);
  const foot = footer(width, contentBottom, input.caution);
  body.push(foot.markup);
  return svgDocument({
    width,
    height: Math.ceil(contentBottom + foot.height + 8),
    title: input.title,
    description:
      `Grid refinement of ${input.valueName}: ${pts.length} grid(s)` +
      (ext !== null ? `, extrapolated ${formatValue(ext, 7)}` : '') +
      (order !== null ? `, order ${formatValue(order, 3)}` : '') +
      '.',
    kind: 'refinement',
    fontFamily: FONT_FAMILY,
    background: PAPER,
    body: body.join('\n'),
  });
}
