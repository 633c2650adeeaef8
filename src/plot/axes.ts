/**
 * Axes: scales, "nice" ticks (1-2-5 steps; decades for log axes), tick-label formatting and the
 * drawing of grid lines, ticks, tick labels and axis titles.
 */
import { el, escapeXml, num, text, textWidth } from './svg.js';
import { FAINT, GRID, INK, MUTED, RULE, TYPE } from './theme.js';

export interface Rect {
  readonly x: number;
  readonly y: number;
  readonly width: number;
  readonly height: number;
}

export interface Scale {
  readonly domain: readonly [number, number];
  readonly range: readonly [number, number];
  readonly log: boolean;
  map(v: number): number;
}

export function linearScale(domain: readonly [number, number], range: readonly [number, number]): Scale {
  const [d0, d1] = domain;
  const [r0, r1] = range;
  const k = (r1 - r0) / (d1 - d0);
  return { domain, range, log: false, map: (v) => r0 + (v - d0) * k };
}

export function logScale(domain: readonly [number, number], range: readonly [number, number]): Scale {
  if (!(domain[0] > 0 && domain[1] > 0)) {
    throw new Error(`log axis needs a positive range (got ${domain[0]} to ${domain[1]})`);
  }
  const l0 = Math.log10(domain[0]);
  const l1 = Math.log10(domain[1]);
  const [r0, r1] = range;
  const k = (r1 - r0) / (l1 - l0);
  return { domain, range, log: true, map: (v) => r0 + (Math.log10(v) - l0) * k };
}

export interface Ticks {
  readonly ticks: number[];
  readonly step: number;
}

/** Widen a degenerate range [v, v] to something drawable. */
export function widenRange(min: number, max: number): [number, number] {
  if (!Number.isFinite(min) || !Number.isFinite(max)) {
    throw new Error(`axis range must be finite (got ${min} to ${max})`);
  }
  if (min > max) [min, max] = [max, min];
  if (max - min > 1e-12 * Math.max(Math.abs(min), Math.abs(max))) return [min, max];
  const c = 0.5 * (min + max);
  const half = c === 0 ? 1 : 0.1 * Math.abs(c);
  return [c - half, c + half];
}

/** k · m · 10^e as the double nearest the exact decimal (k·m is an exact integer). */
function tickValue(k: number, m: number, e: number): number {
  const v = Number(`${k * m}e${e}`);
  return v === 0 ? 0 : v;
}

/**
 * Ticks with a step of 1, 2 or 5 times a power of ten, between `minCount` and `maxCount` of
 * them (default 3 to 10), as close to `target` as the range allows.
 * `cover: true` (default): the first tick is at or below min and the last at or above max (the
 * ticks can be the axis ends). `cover: false`: ticks inside [min, max] only, none more than a
 * step from either end (for axes whose ends are the padded data range, and colour bars).
 */
export function niceTicks(
  min: number,
  max: number,
  options: { target?: number; cover?: boolean; minCount?: number; maxCount?: number } = {},
): Ticks {
  [min, max] = widenRange(min, max);
  const cover = options.cover ?? true;
  const target = options.target ?? 6;
  const lo = options.minCount ?? 3;
  const hi = options.maxCount ?? 10;
  const range = max - min;
  const e0 = Math.floor(Math.log10(range));
  let best: { score: number; step: number; m: number; e: number; k0: number; k1: number } | null = null;
  for (let e = e0 - 2; e <= e0 + 1; e++) {
    for (const m of [1, 2, 5]) {
      const step = Number(`${m}e${e}`);
      // Round-off slack relative to the quotient, so a value a hair off a multiple of the
      // step does not get a tick of its own, while tiny true offsets are still covered.
      const q0 = min / step;
      const q1 = max / step;
      const s0 = 1e-9 * Math.abs(q0);
      const s1 = 1e-9 * Math.abs(q1);
      const k0 = cover ? Math.floor(q0 + s0) : Math.ceil(q0 - s0);
      const k1 = cover ? Math.ceil(q1 - s1) : Math.floor(q1 + s1);
      const count = k1 - k0 + 1;
      if (count < lo || count > hi) continue;
      const waste = Math.abs((k1 - k0) * step - range) / range;
      const score = Math.abs(count - target) + 2 * waste;
      if (best === null || score < best.score) best = { score, step, m, e, k0, k1 };
    }
  }
  if (best === null) {
    // Not reachable for the default counts (1-2-5 steps are dense enough); kept for odd options.
    return { ticks: [min, max], step: range };
  }
  const ticks: number[] = [];
  for (let k = best.k0; k <= best.k1; k++) ticks.push(tickValue(k, best.m, best.e));
  return { ticks, step: best.step };
}

export interface LogTicks {
  readonly major: number[];
  readonly minor: number[];
}

/**
 * Log-axis ticks covering [min, max] (both > 0). Spanning about a decade or less: 1-2-5 ticks
 * in each decade; more: one tick per decade (every k-th decade beyond ten), minor ticks at
 * 2…9 times each decade where they are not too dense.
 */
export function logTicks(min: number, max: number): LogTicks {
  if (!(min > 0 && max > 0 && Number.isFinite(min) && Number.isFinite(max))) {
    throw new Error(`log axis needs a positive finite range (got ${min} to ${max})`);
  }
  if (min > max) [min, max] = [max, min];
  if (max / min < 1 + 1e-9) {
    min /= 1.5;
    max *= 1.5;
  }
  const d0 = Math.floor(Math.log10(min) + 1e-12);
  const d1 = Math.ceil(Math.log10(max) - 1e-12);
  const decades = d1 - d0;
  const pow = (e: number, m = 1): number => Number((m * Math.pow(10, e)).toPrecision(12));
  if (decades <= 2) {
    // Fine ticks: 1, 2, 5 per decade, trimmed to one tick beyond the data at each end.
    const all: number[] = [];
    for (let e = d0; e <= d1; e++) for (const m of [1, 2, 5]) all.push(pow(e, m));
    const lo = all.filter((t) => t <= min * (1 + 1e-12)).pop() ?? all[0];
    const hi = all.find((t) => t >= max * (1 - 1e-12)) ?? all[all.length - 1];
    const major = all.filter((t) => t >= lo && t <= hi);
    const minor: number[] = [];
    for (let e = d0; e <= d1; e++) {
      for (const m of [3, 4, 6, 7, 8, 9]) {
        const t = pow(e, m);
        if (t > lo && t < hi) minor.push(t);
      }
    }
    return { major, minor };
  }
  const every = Math.max(1, Math.ceil(decades / 8));
  const start = Math.floor(d0 / every) * every;
  const end = Math.ceil(d1 / every) * every;
  const major: number[] = [];
  for (let e = start; e <= end; e += every) major.push(pow(e));
  const minor: number[] = [];
  if (every === 1 && decades <= 6) {
    for (let e = start; e < end; e++) for (let m = 2; m <= 9; m++) minor.push(pow(e, m));
  } else if (every > 1) {
    for (let e = start; e < end; e++) if ((e - start) % every !== 0) minor.push(pow(e));
  }
  return { major, minor };
}

const SUPERSCRIPT: Record<string, string> = {
  '-': '⁻',
  '0': '⁰',
  '1': '¹',
  '2': '²',
  '3': '³',
  '4': '⁴',
  '5': '⁵',
  '6': '⁶',
  '7': '⁷',
  '8': '⁸',
  '9': '⁹',
};

function superscript(n: number): string {
  return String(n)
    .split('')
    .map((c) => SUPERSCRIPT[c] ?? c)
    .join('');
}

/** Typographic minus for negative numbers. */
function minus(s: string): string {
  return s.replace(/^-/, '\u2212');
}

/**
 * m×10ⁿ with m to `digits` significant figures (trailing zeros dropped). A mantissa of 1 is
 * written as the bare power (10ⁿ) unless `keepOne` is set.
 */
export function scientific(v: number, digits = 3, keepOne = false): string {
  if (v === 0) return '0';
  const e = Math.floor(Math.log10(Math.abs(v)));
  let m = Number((v / Math.pow(10, e)).toPrecision(digits));
  let ee = e;
  if (Math.abs(m) >= 10) {
    m = Number((m / 10).toPrecision(digits));
    ee += 1;
  }
  const pow = `10${superscript(ee)}`;
  if (!keepOne && Math.abs(m) === 1) return m < 0 ? `\u2212${pow}` : pow;
  return `${minus(String(m))}×${pow}`;
}

/**
 * Tick label for a linear axis with the given step: plain decimals with just enough places,
 * or m×10ⁿ when the ticks are all below 0.001 or reach a million (judged over `ticks`, so one
 * axis never mixes the two).
 */
export function formatTick(v: number, step: number, ticks?: readonly number[]): string {
  const big = Math.max(...(ticks ?? [v]).map(Math.abs));
  if (big >= 1e6 || (big < 1e-3 && big > 0)) {
    if (v === 0) return '0';
    // Enough mantissa digits to tell neighbouring ticks apart.
    const digits = Math.max(1, Math.floor(Math.log10(Math.abs(v)) + 1e-9) - Math.floor(Math.log10(step) + 1e-9) + 1);
    return scientific(v, Math.min(15, digits), true);
  }
  const decimals = Math.max(0, -Math.floor(Math.log10(step) + 1e-9));
  return minus((v === 0 ? 0 : v).toFixed(decimals));
}

/**
 * Tick labels for a log axis: plain decimals when every tick lies in [0.001, 10000), powers
 * of ten (m×10ⁿ) otherwise, so one axis never mixes the two.
 */
export function formatLogTicks(ticks: readonly number[]): string[] {
  const plain = ticks.every((v) => v >= 1e-3 && v < 1e4);
  return ticks.map((v) => (plain ? String(Number(v.toPrecision(6))) : scientific(v, 2)));
}

/**
 * A value for labels and legends, to `sig` significant figures — more when `resolution` is
 * given and finer digits are needed to place the value to that resolution (e.g. 1/100 of an
 * axis step on an axis far from zero).
 */
export function formatValue(v: number, sig = 5, resolution?: number): string {
  if (!Number.isFinite(v)) return String(v);
  if (v === 0) return '0';
  const a = Math.abs(v);
  let digits = sig;
  if (resolution !== undefined && resolution > 0 && Number.isFinite(resolution)) {
    digits = Math.max(sig, Math.floor(Math.log10(a)) - Math.floor(Math.log10(resolution)) + 1);
  }
  digits = Math.min(15, digits);
  if (a >= 1e6 || a < 1e-4) return scientific(v, digits);
  return minus(String(Number(v.toPrecision(digits))));
}

export interface AxisSpec {
  readonly scale: Scale;
  readonly ticks: readonly number[];
  readonly labels: readonly string[];
  readonly minor?: readonly number[];
  readonly title?: string;
}

/** Horizontal space the y tick labels and title need to the left of the plot area. */
export function leftMarginFor(yLabels: readonly string[], hasTitle: boolean): number {
  const w = Math.max(0, ...yLabels.map((l) => textWidth(l, TYPE.tick)));
  return Math.ceil(w + 6 + 5 + (hasTitle ? TYPE.axisTitle + 12 : 0) + 4);
}

/** Vertical space below the plot area for x tick labels and title. */
export function bottomMarginFor(hasTitle: boolean): number {
  return 6 + 5 + TYPE.tick + (hasTitle ? TYPE.axisTitle + 12 : 0) + 4;
}

/**
 * Grid lines, the left and bottom axis lines, outward ticks, tick labels and axis titles.
 * Returns markup in a `<g data-role="axes">`.
 */
export function drawAxes(plot: Rect, x: AxisSpec, y: AxisSpec, options: { grid?: boolean } = {}): string {
  const grid = options.grid ?? true;
  const parts: string[] = [];
  const x0 = plot.x;
  const x1 = plot.x + plot.width;
  const y0 = plot.y + plot.height;
  const y1 = plot.y;
  const inX = (px: number): boolean => px >= x0 - 0.5 && px <= x1 + 0.5;
  const inY = (py: number): boolean => py >= y1 - 0.5 && py <= y0 + 0.5;

  if (grid) {
    let d = '';
    for (const t of x.ticks) {
      const px = x.scale.map(t);
      if (inX(px) && Math.abs(px - x0) > 0.5) d += `M${num(px)} ${num(y0)}V${num(y1)}`;
    }
    for (const t of y.ticks) {
      const py = y.scale.map(t);
      if (inY(py) && Math.abs(py - y0) > 0.5) d += `M${num(x0)} ${num(py)}H${num(x1)}`;
    }
    if (d) parts.push(el('path', { d, stroke: GRID, 'stroke-width': 1, fill: 'none', 'data-role': 'grid' }));
  }

  let ticks = '';
  for (const t of x.ticks) {
    const px = x.scale.map(t);
    if (inX(px)) ticks += `M${num(px)} ${num(y0)}v5`;
  }
  for (const t of y.ticks) {
    const py = y.scale.map(t);
    if (inY(py)) ticks += `M${num(x0)} ${num(py)}h-5`;
  }
  let minorTicks = '';
  for (const t of x.minor ?? []) {
    const px = x.scale.map(t);
    if (inX(px)) minorTicks += `M${num(px)} ${num(y0)}v3`;
  }
  for (const t of y.minor ?? []) {
    const py = y.scale.map(t);
    if (inY(py)) minorTicks += `M${num(x0)} ${num(py)}h-3`;
  }
  parts.push(
    el('path', {
      d: `M${num(x0)} ${num(y1)}V${num(y0)}H${num(x1)}`,
      stroke: RULE,
      'stroke-width': 1,
      fill: 'none',
      'data-role': 'axis-lines',
    }),
  );
  if (ticks) parts.push(el('path', { d: ticks, stroke: MUTED, 'stroke-width': 1, fill: 'none' }));
  if (minorTicks) parts.push(el('path', { d: minorTicks, stroke: FAINT, 'stroke-width': 0.8, fill: 'none' }));

  const xl: string[] = [];
  x.ticks.forEach((t, i) => {
    const px = x.scale.map(t);
    if (inX(px)) xl.push(text(px, y0 + 6 + 5 + TYPE.tick * 0.8, x.labels[i], { 'text-anchor': 'middle' }));
  });
  const yl: string[] = [];
  y.ticks.forEach((t, i) => {
    const py = y.scale.map(t);
    if (inY(py)) yl.push(text(x0 - 6 - 3, py + TYPE.tick * 0.35, y.labels[i], { 'text-anchor': 'end' }));
  });
  parts.push(
    el(
      'g',
      { fill: MUTED, 'font-size': TYPE.tick, 'font-variant-numeric': 'tabular-nums', 'data-role': 'tick-labels' },
      xl.join('') + yl.join(''),
    ),
  );

  if (x.title) {
    parts.push(
      text(x0 + plot.width / 2, y0 + 6 + 5 + TYPE.tick + 8 + TYPE.axisTitle * 0.8, x.title, {
        'text-anchor': 'middle',
        'font-size': TYPE.axisTitle,
        fill: INK,
        'data-role': 'x-title',
      }),
    );
  }
  if (y.title) {
    const w = Math.max(0, ...y.labels.map((l) => textWidth(l, TYPE.tick)));
    const tx = x0 - 6 - 5 - w - 10;
    const ty = y1 + plot.height / 2;
    parts.push(
      el(
        'text',
        {
          x: tx,
          y: ty,
          transform: `rotate(-90 ${num(tx)} ${num(ty)})`,
          'text-anchor': 'middle',
          'font-size': TYPE.axisTitle,
          fill: INK,
          'data-role': 'y-title',
        },
        escapeXml(y.title),
      ),
    );
  }
  return el('g', { 'data-role': 'axes' }, parts.join(''));
}

/**
 * A linear axis over the data range [min, max] widened by `padLow`/`padHigh` (fractions of the
 * range, default 0.04 each), with nice ticks inside it.
 */
export function linearAxis(
  min: number,
  max: number,
  range: readonly [number, number],
  title?: string,
  options: { target?: number; padLow?: number; padHigh?: number } = {},
): AxisSpec {
  [min, max] = widenRange(min, max);
  const span = max - min;
  const domain: [number, number] = [min - (options.padLow ?? 0.04) * span, max + (options.padHigh ?? 0.04) * span];
  const { ticks, step } = niceTicks(domain[0], domain[1], { target: options.target ?? 6, cover: false });
  return {
    scale: linearScale(domain, range),
    ticks,
    labels: ticks.map((t) => formatTick(t, step, ticks)),
    title,
  };
}

/** A log axis spec whose domain is the covering major ticks of [min, max] (both > 0). */
export function logAxis(min: number, max: number, range: readonly [number, number], title?: string): AxisSpec {
  const { major, minor } = logTicks(min, max);
  const domain: [number, number] = [major[0], major[major.length - 1]];
  return {
    scale: logScale(domain, range),
    ticks: major,
    labels: formatLogTicks(major),
    minor: minor.filter((t) => t > domain[0] && t < domain[1]),
    title,
  };
}

/** The same axis mapped onto another pixel range (ticks and labels unchanged). */
export function withRange(spec: AxisSpec, range: readonly [number, number]): AxisSpec {
  const scale = spec.scale.log ? logScale(spec.scale.domain, range) : linearScale(spec.scale.domain, range);
  return { ...spec, scale };
}
