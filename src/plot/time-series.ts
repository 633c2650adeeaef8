/**
 * Quantities against time: panels stacked over one shared time axis, each with its own vertical
 * axis (linear, or logarithmic for positive quantities such as a residual) and its own legend.
 * The time axis is logarithmic when the times span more than three decades (transients and the
 * slow approach to a steady state both stay visible); the start time 0 is then left out.
 */
import { bottomMarginFor, drawAxes, leftMarginFor, linearAxis, logAxis, withRange, type AxisSpec, type Rect } from './axes.js';
import { footer, header, SIDE } from './figure.js';
import { el, num, svgDocument, text, textWidth } from './svg.js';
import { FONT_FAMILY, INK, PAPER, TYPE, seriesColour } from './theme.js';

export interface TimeSeries {
  readonly name: string;
  readonly values: ArrayLike<number>;
}

export interface TimeSeriesPanel {
  /** Vertical axis title. */
  readonly title: string;
  /** Logarithmic vertical axis (non-positive values are left out). */
  readonly log?: boolean;
  readonly series: readonly TimeSeries[];
}

export interface TimeSeriesInput {
  readonly title: string;
  readonly subtitle?: string;
  readonly time: ArrayLike<number>;
  readonly panels: readonly TimeSeriesPanel[];
  /** Logarithmic time axis: true, false, or 'auto' (default: more than three decades). */
  readonly logTime?: boolean | 'auto';
  readonly timeLabel?: string;
  readonly caution?: string;
  /** Figure width in px (default 760). */
  readonly width?: number;
  /** Plot height per panel in px (default 150). */
  readonly panelHeight?: number;
}

function range(values: Iterable<number>, positiveOnly: boolean): [number, number] | undefined {
  let lo = Infinity;
  let hi = -Infinity;
  for (const v of values) {
    if (!Number.isFinite(v) || (positiveOnly && !(v > 0))) continue;
    lo = Math.min(lo, v);
    hi = Math.max(hi, v);
  }
  return lo <= hi ? [lo, hi] : undefined;
}

export function timeSeriesSvg(input: TimeSeriesInput): string {
  const n = input.time?.length ?? 0;
  if (n === 0) throw new Error("time series: 'time' must hold at least one value");
  if (!Array.isArray(input.panels) || input.panels.length === 0) throw new Error("time series: 'panels' must hold at least one panel");
  for (const p of input.panels) {
    for (const s of p.series) {
      if (s.values.length !== n) throw new Error(`time series: '${s.name}' has ${s.values.length} values but time has ${n}`);
    }
  }
  const width = input.width ?? 760;
  const panelHeight = input.panelHeight ?? 150;
  const times = Array.from(input.time);
  const positive = range(times, true);
  const all = range(times, false) ?? [0, 1];
  const logTime = input.logTime === true || ((input.logTime ?? 'auto') === 'auto' && positive !== undefined && positive[1] / positive[0] > 1e3);
  const keep = (i: number): boolean => Number.isFinite(times[i]) && (!logTime || times[i] > 0);

  // vertical axes first: the left margin must fit the widest tick labels of every panel
  const yAxes: AxisSpec[] = input.panels.map((p) => {
    const values: number[] = [];
    for (const s of p.series) for (let i = 0; i < n; i++) if (keep(i)) values.push(s.values[i]);
    const r = range(values, p.log === true);
    if (p.log) return r ? logAxis(r[0], r[1], [1, 0], p.title) : logAxis(1e-1, 1, [1, 0], p.title);
    return r ? linearAxis(r[0], r[1], [1, 0], p.title, { target: 4 }) : linearAxis(0, 1, [1, 0], p.title, { target: 4 });
  });
  const left = SIDE + Math.max(...yAxes.map((a) => leftMarginFor(a.labels, true))) - 8;
  const plotWidth = width - left - SIDE - 12;
  const xTitle = input.timeLabel ?? 'time';
  const x0 = logTime ? logAxis(positive![0], positive![1], [0, 1], xTitle) : linearAxis(all[0], all[1], [0, 1], xTitle, { padLow: 0, padHigh: 0 });
  const xAxis = withRange(x0, [left, left + plotWidth]);
  const X = xAxis.scale.map;

  const head = header(width, input.title, input.subtitle);
  const body: string[] = [head.markup];
  const legendRow = 22;
  const gap = 18;
  let top = head.height;
  input.panels.forEach((p, k) => {
    const last = k === input.panels.length - 1;
    const plot: Rect = { x: left, y: top + legendRow, width: plotWidth, height: panelHeight };
    const yAxis = withRange(yAxes[k], [plot.y + plot.height, plot.y]);
    const Y = yAxis.scale.map;
    // only the bottom panel labels the time axis
    const xa: AxisSpec = last ? xAxis : { ...xAxis, labels: xAxis.labels.map(() => ''), title: undefined };
    const parts: string[] = [drawAxes(plot, xa, yAxis)];
    let lx = plot.x;
    const ly = top + 12;
    const legend: string[] = [];
    const curves = p.series.map((s: TimeSeries, i: number) => {
      const colour = seriesColour(i);
      legend.push(
        el(
          'g',
          { 'data-legend': 'series', 'data-series': s.name },
          el('path', { d: `M${num(lx)} ${num(ly)}h18`, stroke: colour, 'stroke-width': 2.2, 'stroke-linecap': 'round' }) + text(lx + 24, ly + 4, s.name, { 'font-size': TYPE.legend, fill: INK }),
        ),
      );
      lx += 24 + textWidth(s.name, TYPE.legend) + 18;
      let d = '';
      let pen = false;
      for (let i = 0; i < n; i++) {
        const v = s.values[i];
        if (!keep(i) || !Number.isFinite(v) || (p.log && !(v > 0))) {
          pen = false;
          continue;
        }
        d += `${pen ? 'L' : 'M'}${num(X(times[i]))} ${num(Y(v))}`;
        pen = true;
      }
      return el('path', { d, 'data-series': s.name, fill: 'none', stroke: colour, 'stroke-width': 1.8, 'stroke-linejoin': 'round', 'stroke-linecap': 'round' });
    });
    parts.push(el('g', { 'data-role': 'legend' }, legend.join('')));
    parts.push(el('g', { 'data-role': 'curves' }, curves.join('\n')));
    body.push(el('g', { 'data-role': 'panel', 'data-panel': p.title }, parts.join('\n')));
    top = plot.y + plot.height + (last ? bottomMarginFor(true) : gap);
  });
  const foot = footer(width, top, input.caution);
  body.push(foot.markup);
  return svgDocument({
    width,
    height: Math.ceil(top + foot.height + 8),
    title: input.title,
    description: `${input.panels.map((p) => p.title).join('; ')} against ${xTitle}${logTime ? ' (logarithmic time axis)' : ''}.`,
    kind: 'time-series',
    fontFamily: FONT_FAMILY,
    background: PAPER,
    body: body.join('\n'),
  });
}
