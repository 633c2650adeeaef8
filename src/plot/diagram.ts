/**
 * The bifurcation diagram: continuation parameter across, a monitor up; every branch in its own
 * colour; stable parts solid, unstable dashed, stability not computed dotted; special points
 * marked by shape and named in plain words.
 */
import { bottomMarginFor, drawAxes, formatValue, leftMarginFor, linearAxis, logAxis, withRange, type Rect } from './axes.js';
import { footer, header, SIDE } from './figure.js';
import { placeLabels, type Box, type LabelRequest, type Segment } from './labels.js';
import { el, escapeXml, num, svgDocument, text, textWidth } from './svg.js';
import {
  FONT_FAMILY,
  INK,
  MUTED,
  PAPER,
  STABILITY_STYLE,
  TYPE,
  seriesColour,
  type StabilityClass,
} from './theme.js';

export type SpecialPointKind = 'fold' | 'branch-point' | 'hopf' | 'end' | 'cusp' | 'bogdanov-takens' | 'fold-branch-point' | 'mode-change' | 'mode-crossing' | 'zero-hopf' | 'bautin' | 'double-hopf';
export const SPECIAL_POINT_KINDS: readonly SpecialPointKind[] = ['fold', 'branch-point', 'hopf', 'end', 'cusp', 'bogdanov-takens', 'fold-branch-point', 'mode-change', 'mode-crossing', 'zero-hopf', 'bautin', 'double-hopf'];

/** Plain words for each kind of special point, as shown on plots (from `cusp` on: points on curves). */
export const SPECIAL_POINT_WORDS: Readonly<Record<SpecialPointKind, string>> = {
  fold: 'fold',
  'branch-point': 'branch point',
  hopf: 'Hopf',
  end: 'end',
  cusp: 'cusp',
  'bogdanov-takens': 'Bogdanov–Takens',
  'fold-branch-point': 'fold meets branch point',
  'mode-change': 'mode change',
  'mode-crossing': 'modes cross',
  'zero-hopf': 'zero-Hopf',
  bautin: 'Bautin',
  'double-hopf': 'double Hopf',
};

export interface DiagramPoint {
  readonly parameter: number;
  readonly monitor: number;
  /** true: stable, false: unstable, null: not computed. */
  readonly stable: boolean | null;
}

export interface DiagramBranch {
  readonly id: string | number;
  /** Legend name; default `branch <id>` for numeric ids, the id itself otherwise. */
  readonly name?: string;
  readonly points: readonly DiagramPoint[];
}

export interface DiagramSpecialPoint {
  readonly kind: SpecialPointKind;
  readonly branch: string | number;
  readonly parameter: number;
  readonly monitor: number;
  /** Label text; default the plain word for the kind (e.g. "branch point"); '' for a marker without a label. */
  readonly label?: string;
}

export interface DiagramInput {
  readonly title: string;
  readonly subtitle?: string;
  readonly parameterName: string;
  readonly monitorName: string;
  readonly branches: readonly DiagramBranch[];
  readonly specialPoints?: readonly DiagramSpecialPoint[];
  /** Footer caution (ignition, runaway and buckling models). */
  readonly caution?: string;
  /** Figure width in px (default 860). */
  readonly width?: number;
  /** Plot-area height in px (default 440). */
  readonly plotHeight?: number;
  /** Show the parameter value under each special-point label (default true). */
  readonly labelValues?: boolean;
  /**
   * Curves of special points in a parameter plane (curve runs): the legend lists `curves` and no
   * stability (the lines are drawn solid), and the description says what the axes are.
   */
  readonly curves?: boolean;
  /** Logarithmic axes (every value must be positive). */
  readonly logParameter?: boolean;
  readonly logMonitor?: boolean;
}

export interface StabilitySegment {
  readonly stability: StabilityClass;
  readonly points: { parameter: number; monitor: number }[];
}

function stabilityClass(s: boolean | null | undefined): StabilityClass {
  return s === true ? 'stable' : s === false ? 'unstable' : 'unknown';
}

/**
 * Split a branch into runs of equal stability. Neighbouring runs share their junction point:
 * a special point of this branch lying on the piece where stability changes when there is one
 * (a fold or branch point usually is where it changes), otherwise the midpoint of that piece.
 * Points with a non-finite coordinate break the curve.
 */
export function splitByStability(
  points: readonly DiagramPoint[],
  specials: readonly { parameter: number; monitor: number }[] = [],
): StabilitySegment[] {
  const segments: StabilitySegment[] = [];
  let current: StabilitySegment | null = null;
  let prev: DiagramPoint | null = null;
  for (const p of points) {
    if (!Number.isFinite(p.parameter) || !Number.isFinite(p.monitor)) {
      current = null;
      prev = null;
      continue;
    }
    const cls = stabilityClass(p.stable);
    const xy = { parameter: p.parameter, monitor: p.monitor };
    if (current === null) {
      current = { stability: cls, points: [xy] };
      segments.push(current);
    } else if (current.stability === cls) {
      current.points.push(xy);
    } else {
      const a = prev as DiagramPoint;
      const junction = junctionPoint(a, p, specials);
      current.points.push(junction);
      current = { stability: cls, points: [{ ...junction }, xy] };
      segments.push(current);
    }
    prev = p;
  }
  return segments;
}

function junctionPoint(
  a: DiagramPoint,
  b: DiagramPoint,
  specials: readonly { parameter: number; monitor: number }[],
): { parameter: number; monitor: number } {
  const lo = (u: number, v: number): number => Math.min(u, v);
  const hi = (u: number, v: number): number => Math.max(u, v);
  const sx = Math.abs(b.parameter - a.parameter);
  const sy = Math.abs(b.monitor - a.monitor);
  let best: { parameter: number; monitor: number } | null = null;
  let bestD = Infinity;
  for (const s of specials) {
    // Within the piece's bounding box (with a little slack) ...
    if (
      s.parameter < lo(a.parameter, b.parameter) - 0.05 * sx - 1e-300 ||
      s.parameter > hi(a.parameter, b.parameter) + 0.05 * sx + 1e-300 ||
      s.monitor < lo(a.monitor, b.monitor) - 0.05 * sy - 1e-300 ||
      s.monitor > hi(a.monitor, b.monitor) + 0.05 * sy + 1e-300
    ) {
      continue;
    }
    // ... and closest to the straight piece, in units of its extent.
    const ux = sx > 0 ? (s.parameter - a.parameter) / sx : 0;
    const uy = sy > 0 ? (s.monitor - a.monitor) / sy : 0;
    const vx = sx > 0 ? (b.parameter - a.parameter) / sx : 0;
    const vy = sy > 0 ? (b.monitor - a.monitor) / sy : 0;
    const vv = vx * vx + vy * vy;
    const t = vv > 0 ? Math.min(1, Math.max(0, (ux * vx + uy * vy) / vv)) : 0;
    const d = Math.hypot(ux - t * vx, uy - t * vy);
    if (d < bestD) {
      bestD = d;
      best = { parameter: s.parameter, monitor: s.monitor };
    }
  }
  return best ?? { parameter: 0.5 * (a.parameter + b.parameter), monitor: 0.5 * (a.monitor + b.monitor) };
}

const MARKER_RADIUS = 5.5;

/** The marker of a special point, centred at (x, y). */
export function markerShape(kind: SpecialPointKind, x: number, y: number, colour: string): string {
  const r = MARKER_RADIUS;
  switch (kind) {
    case 'fold': {
      const d = r * 1.25;
      return el('path', {
        d: `M${num(x)} ${num(y - d)}L${num(x + d)} ${num(y)}L${num(x)} ${num(y + d)}L${num(x - d)} ${num(y)}Z`,
        fill: INK,
        stroke: PAPER,
        'stroke-width': 1.5,
        'stroke-linejoin': 'round',
      });
    }
    case 'branch-point':
      return (
        el('circle', { cx: x, cy: y, r, fill: PAPER, stroke: INK, 'stroke-width': 2 }) +
        el('circle', { cx: x, cy: y, r: 1.8, fill: INK })
      );
    case 'hopf': {
      const h = r * 1.3;
      return el('path', {
        d: `M${num(x)} ${num(y - h)}L${num(x + h * 0.95)} ${num(y + h * 0.62)}H${num(x - h * 0.95)}Z`,
        fill: INK,
        stroke: PAPER,
        'stroke-width': 1.4,
        'stroke-linejoin': 'round',
      });
    }
    case 'end':
      return el('rect', {
        x: x - r * 0.75,
        y: y - r * 0.75,
        width: r * 1.5,
        height: r * 1.5,
        fill: PAPER,
        stroke: colour,
        'stroke-width': 1.8,
      });
    case 'cusp': {
      // a hollow downward wedge
      const h = r * 1.3;
      return el('path', {
        d: `M${num(x - h * 0.95)} ${num(y - h * 0.62)}H${num(x + h * 0.95)}L${num(x)} ${num(y + h)}Z`,
        fill: PAPER,
        stroke: INK,
        'stroke-width': 1.8,
        'stroke-linejoin': 'round',
      });
    }
    case 'bogdanov-takens': {
      // a filled five-pointed star
      const pts: string[] = [];
      for (let k = 0; k < 10; k++) {
        const a = -Math.PI / 2 + (k * Math.PI) / 5;
        const rr = k % 2 === 0 ? r * 1.45 : r * 0.62;
        pts.push(`${num(x + rr * Math.cos(a))} ${num(y + rr * Math.sin(a))}`);
      }
      return el('path', { d: `M${pts.join('L')}Z`, fill: INK, stroke: PAPER, 'stroke-width': 1.2, 'stroke-linejoin': 'round' });
    }
    case 'fold-branch-point': {
      const d = r * 1.25;
      return (
        el('path', {
          d: `M${num(x)} ${num(y - d)}L${num(x + d)} ${num(y)}L${num(x)} ${num(y + d)}L${num(x - d)} ${num(y)}Z`,
          fill: PAPER,
          stroke: INK,
          'stroke-width': 1.8,
          'stroke-linejoin': 'round',
        }) + el('circle', { cx: x, cy: y, r: 1.8, fill: INK })
      );
    }
    case 'mode-change':
      return el('circle', { cx: x, cy: y, r: r * 0.95, fill: INK, stroke: PAPER, 'stroke-width': 1.5 });
    case 'mode-crossing':
      return (
        el('circle', { cx: x, cy: y, r, fill: PAPER, stroke: INK, 'stroke-width': 1.6 }) +
        el('path', { d: `M${num(x - r * 0.6)} ${num(y - r * 0.6)}L${num(x + r * 0.6)} ${num(y + r * 0.6)}M${num(x + r * 0.6)} ${num(y - r * 0.6)}L${num(x - r * 0.6)} ${num(y + r * 0.6)}`, stroke: INK, 'stroke-width': 1.4 })
      );
    case 'zero-hopf':
    case 'bautin': {
      // the Hopf triangle hollow (Bautin), with a centre dot where a real eigenvalue also crosses (zero-Hopf)
      const h = r * 1.3;
      const tri = el('path', {
        d: `M${num(x)} ${num(y - h)}L${num(x + h * 0.95)} ${num(y + h * 0.62)}H${num(x - h * 0.95)}Z`,
        fill: PAPER,
        stroke: INK,
        'stroke-width': 1.8,
        'stroke-linejoin': 'round',
      });
      return kind === 'zero-hopf' ? tri + el('circle', { cx: x, cy: y + h * 0.12, r: 1.8, fill: INK }) : tri;
    }
    case 'double-hopf': {
      // two Hopf triangles tip to tip: a filled hourglass
      const h = r * 1.2;
      return el('path', {
        d: `M${num(x)} ${num(y)}L${num(x - h * 0.85)} ${num(y - h)}H${num(x + h * 0.85)}ZM${num(x)} ${num(y)}L${num(x + h * 0.85)} ${num(y + h)}H${num(x - h * 0.85)}Z`,
        fill: INK,
        stroke: PAPER,
        'stroke-width': 1.2,
        'stroke-linejoin': 'round',
      });
    }
  }
}

function strokeAttrs(cls: StabilityClass, colour: string): Record<string, string | number | null> {
  const s = STABILITY_STYLE[cls];
  return {
    fill: 'none',
    stroke: colour,
    'stroke-width': s.width,
    'stroke-dasharray': s.dash,
    'stroke-linecap': s.cap,
    'stroke-linejoin': 'round',
  };
}

function validate(input: DiagramInput): void {
  if (!input || typeof input.title !== 'string') throw new Error("diagram: 'title' must be a string");
  if (!Array.isArray(input.branches)) throw new Error("diagram: 'branches' must be an array");
  const ids = new Set<string>();
  input.branches.forEach((b, i) => {
    const key = String(b.id);
    if (ids.has(key)) throw new Error(`diagram: branch id '${key}' appears twice (branch ${i + 1})`);
    ids.add(key);
    if (!Array.isArray(b.points)) throw new Error(`diagram: branch '${key}' has no 'points' array`);
  });
  (input.specialPoints ?? []).forEach((s, i) => {
    if (!SPECIAL_POINT_KINDS.includes(s.kind)) {
      throw new Error(
        `diagram: special point ${i + 1} has kind '${String(s.kind)}' (accepted: ${SPECIAL_POINT_KINDS.join(', ')})`,
      );
    }
    if (!ids.has(String(s.branch))) {
      throw new Error(
        `diagram: special point ${i + 1} (${s.kind}) refers to branch '${String(s.branch)}', which is not among the branches (${[...ids].join(', ')})`,
      );
    }
  });
}

/** Drop points closer than `tol` px to the last kept one (keeps the last point). */
function thin(pts: [number, number][], tol = 0.35): [number, number][] {
  if (pts.length <= 2) return pts;
  const out: [number, number][] = [pts[0]];
  for (let i = 1; i < pts.length - 1; i++) {
    const last = out[out.length - 1];
    if (Math.abs(pts[i][0] - last[0]) + Math.abs(pts[i][1] - last[1]) >= tol) out.push(pts[i]);
  }
  out.push(pts[pts.length - 1]);
  return out;
}

function pathData(pts: [number, number][]): string {
  if (pts.length === 1) return `M${num(pts[0][0])} ${num(pts[0][1])}h0`;
  let d = `M${num(pts[0][0])} ${num(pts[0][1])}`;
  for (let i = 1; i < pts.length; i++) d += `L${num(pts[i][0])} ${num(pts[i][1])}`;
  return d;
}

const STABILITY_WORDS: Record<StabilityClass, string> = {
  stable: 'stable',
  unstable: 'unstable',
  unknown: 'stability not computed',
};

/** The diagram as a standalone SVG document. */
export function diagramSvg(input: DiagramInput): string {
  validate(input);
  const width = input.width ?? 860;
  const plotHeight = input.plotHeight ?? 440;
  const specials = input.specialPoints ?? [];
  const showValues = input.labelValues ?? true;

  // Data range over every finite point and special point.
  let xmin = Infinity;
  let xmax = -Infinity;
  let ymin = Infinity;
  let ymax = -Infinity;
  const extend = (x: number, y: number): void => {
    if (!Number.isFinite(x) || !Number.isFinite(y)) return;
    xmin = Math.min(xmin, x);
    xmax = Math.max(xmax, x);
    ymin = Math.min(ymin, y);
    ymax = Math.max(ymax, y);
  };
  for (const b of input.branches) for (const p of b.points) extend(p.parameter, p.monitor);
  for (const s of specials) extend(s.parameter, s.monitor);
  if (xmin > xmax) {
    xmin = 0;
    xmax = 1;
    ymin = 0;
    ymax = 1;
  }

  // Legend content decides the right margin.
  const branchNames = input.branches.map(
    (b) => b.name ?? (/^\d+$/.test(String(b.id)) ? `branch ${String(b.id)}` : String(b.id)),
  );
  // stability changes at special points: of the branch itself, or where it was born (a branch
  // point recorded on its parent branch)
  const segmentsByBranch = input.branches.map((b) => splitByStability(b.points, specials));
  const classesPresent = input.curves
    ? []
    : (['stable', 'unstable', 'unknown'] as StabilityClass[]).filter((c) => segmentsByBranch.some((segs) => segs.some((s) => s.stability === c)));
  const kindsPresent = SPECIAL_POINT_KINDS.filter((k) => specials.some((s) => s.kind === k));
  const legendTexts = [
    ...branchNames,
    ...classesPresent.map((c) => STABILITY_WORDS[c]),
    ...kindsPresent.map((k) => SPECIAL_POINT_WORDS[k]),
    'special points',
  ];
  const legendWidth = Math.max(120, Math.min(220, 34 + Math.max(...legendTexts.map((t) => textWidth(t, TYPE.legend)))));

  const head = header(width, input.title, input.subtitle);
  const xAxis0 = input.logParameter && xmin > 0 ? logAxis(xmin, xmax, [0, 1], input.parameterName) : linearAxis(xmin, xmax, [0, 1], input.parameterName);
  const yAxis0 = input.logMonitor && ymin > 0 ? logAxis(ymin, ymax, [1, 0], input.monitorName) : linearAxis(ymin, ymax, [1, 0], input.monitorName);
  const left = SIDE + leftMarginFor(yAxis0.labels, true) - 8;
  const plot: Rect = {
    x: left,
    y: head.height + 6,
    width: width - left - legendWidth - SIDE - 22,
    height: plotHeight,
  };
  const xAxis = withRange(xAxis0, [plot.x, plot.x + plot.width]);
  const yAxis = withRange(yAxis0, [plot.y + plot.height, plot.y]);
  const X = xAxis.scale.map;
  const Y = yAxis.scale.map;
  const xStep = xAxis.ticks.length > 1 ? xAxis.ticks[1] - xAxis.ticks[0] : Math.abs(xmax - xmin);

  const body: string[] = [head.markup, drawAxes(plot, xAxis, yAxis)];

  // Branch segments: all unstable/unknown first, then stable on top.
  const curveSegments: Segment[] = [];
  const order: StabilityClass[] = ['unknown', 'unstable', 'stable'];
  const paths: string[] = [];
  for (const cls of order) {
    input.branches.forEach((b, bi) => {
      const colour = seriesColour(bi);
      segmentsByBranch[bi].forEach((seg, si) => {
        if (seg.stability !== cls) return;
        const px = thin(seg.points.map((p) => [X(p.parameter), Y(p.monitor)] as [number, number]));
        for (let k = 1; k < px.length; k++) curveSegments.push([px[k - 1][0], px[k - 1][1], px[k][0], px[k][1]]);
        paths.push(
          el('path', {
            d: pathData(px),
            'data-branch': String(b.id),
            'data-stability': seg.stability,
            'data-segment': si + 1,
            ...strokeAttrs(seg.stability, colour),
          }),
        );
      });
    });
  }
  body.push(el('g', { 'data-role': 'branches' }, paths.join('\n')));

  // Special points: markers, then labels placed around them.
  const branchIndex = new Map(input.branches.map((b, i) => [String(b.id), i]));
  const visible = specials.filter((s) => Number.isFinite(s.parameter) && Number.isFinite(s.monitor));
  const labelLines = visible.map((s) => {
    const word = s.label ?? SPECIAL_POINT_WORDS[s.kind];
    const lines = [word];
    if (showValues && s.kind !== 'end') {
      lines.push(`${input.parameterName} = ${formatValue(s.parameter, 5, xStep / 100)}`);
    }
    return lines;
  });
  const lineHeight = TYPE.label + 3;
  const requests: LabelRequest[] = visible.map((s, i) => {
    const lines = labelLines[i];
    const w =
      Math.max(
        textWidth(lines[0], TYPE.label, true),
        ...lines.slice(1).map((l) => textWidth(l, TYPE.label - 1)),
      ) + 4;
    return { x: X(s.parameter), y: Y(s.monitor), radius: MARKER_RADIUS + 2, width: w, height: lines.length * lineHeight + 2 };
  });
  const bounds: Box = { x0: plot.x + 2, y0: plot.y + 2, x1: plot.x + plot.width - 2, y1: plot.y + plot.height - 2 };
  // markers with an empty label are drawn bare (and kept clear of the other labels)
  const bare = visible.map((s) => s.label === '');
  const labelled = requests.filter((_, i) => !bare[i]);
  const bareBoxes: Box[] = requests
    .filter((_, i) => bare[i])
    .map((r) => ({ x0: r.x - r.radius - 1, y0: r.y - r.radius - 1, x1: r.x + r.radius + 1, y1: r.y + r.radius + 1 }));
  const placedLabels = placeLabels(labelled, bounds, curveSegments, bareBoxes);
  let nextPlaced = 0;
  const placements = visible.map((_, i) => (bare[i] ? null : placedLabels[nextPlaced++]));

  const pointsMarkup: string[] = [];
  visible.forEach((s, i) => {
    const colour = seriesColour(branchIndex.get(String(s.branch)) ?? 0);
    const r = requests[i];
    const pl = placements[i];
    const parts: string[] = [];
    if (pl === null) {
      pointsMarkup.push(
        el(
          'g',
          pointAttributes(s),
          markerShape(s.kind, r.x, r.y, colour),
        ),
      );
      return;
    }
    if (pl.leader) {
      // A thin line from the marker edge to the nearest point of the label box.
      const cx = Math.min(Math.max(r.x, pl.box.x0), pl.box.x1);
      const cy = Math.min(Math.max(r.y, pl.box.y0), pl.box.y1);
      const len = Math.hypot(cx - r.x, cy - r.y);
      if (len > MARKER_RADIUS + 3) {
        const sx = r.x + ((cx - r.x) * (MARKER_RADIUS + 2)) / len;
        const sy = r.y + ((cy - r.y) * (MARKER_RADIUS + 2)) / len;
        parts.push(el('path', { d: `M${num(sx)} ${num(sy)}L${num(cx)} ${num(cy)}`, stroke: MUTED, 'stroke-width': 0.8 }));
      }
    }
    parts.push(markerShape(s.kind, r.x, r.y, colour));
    const lines = labelLines[i];
    const tx = pl.box.x0 + 2;
    let ty = pl.box.y0 + TYPE.label;
    const tspans = lines
      .map((line, k) => {
        const a =
          k === 0
            ? { x: tx, y: ty, 'font-weight': 600, fill: INK }
            : { x: tx, y: (ty += lineHeight), 'font-size': TYPE.label - 1, fill: MUTED };
        return el('tspan', a, escapeXml(line));
      })
      .join('');
    parts.push(
      el(
        'text',
        {
          'font-size': TYPE.label,
          'data-role': 'label',
          stroke: PAPER,
          'stroke-width': 3,
          'stroke-linejoin': 'round',
          'paint-order': 'stroke',
        },
        tspans,
      ),
    );
    pointsMarkup.push(
      el(
        'g',
        pointAttributes(s),
        parts.join(''),
      ),
    );
  });
  body.push(el('g', { 'data-role': 'special-points' }, pointsMarkup.join('\n')));

  // Legend in the right margin.
  const lx = plot.x + plot.width + 22;
  let ly = plot.y + 4;
  const leg: string[] = [];
  const section = (title: string): void => {
    leg.push(text(lx, ly + 9, title, { 'font-size': TYPE.legend - 1, fill: MUTED, 'font-weight': 600 }));
    ly += 20;
  };
  const entry = (swatch: string, label: string, extra: Record<string, string> = {}): void => {
    leg.push(el('g', extra, swatch + text(lx + 30, ly + 4, label, { 'font-size': TYPE.legend, fill: INK })));
    ly += 19;
  };
  section(input.curves ? 'curves' : 'branches');
  input.branches.forEach((b, i) => {
    entry(
      el('path', { d: `M${num(lx)} ${num(ly)}h22`, ...strokeAttrs('stable', seriesColour(i)) }),
      branchNames[i],
      { 'data-legend': 'branch', 'data-branch': String(b.id) },
    );
  });
  if (classesPresent.length > 0) {
    ly += 8;
    section('stability');
    for (const c of classesPresent) {
      entry(el('path', { d: `M${num(lx)} ${num(ly)}h22`, ...strokeAttrs(c, INK) }), STABILITY_WORDS[c], {
        'data-legend': 'stability',
        'data-stability': c,
      });
    }
  }
  if (kindsPresent.length > 0) {
    ly += 8;
    section('special points');
    for (const k of kindsPresent) {
      entry(markerShape(k, lx + 11, ly, INK), SPECIAL_POINT_WORDS[k], { 'data-legend': 'special-point', 'data-kind': k });
    }
  }
  body.push(el('g', { 'data-role': 'legend' }, leg.join('')));

  const contentBottom = Math.max(plot.y + plot.height + bottomMarginFor(true), ly + 8);
  const foot = footer(width, contentBottom, input.caution);
  body.push(foot.markup);
  const height = Math.ceil(contentBottom + foot.height + 8);

  const desc = input.curves
    ? `Curves of special points in the plane of ${input.parameterName} and ${input.monitorName}; ${input.branches.length} curve(s), ${visible.length} special point(s).`
    : `Bifurcation diagram: ${input.parameterName} against ${input.monitorName}; ` +
      `${input.branches.length} branch(es), ${visible.length} special point(s). ` +
      'Solid: stable; dashed: unstable; dotted: stability not computed.';
  return svgDocument({
    width,
    height,
    title: input.title,
    description: desc,
    kind: 'diagram',
    fontFamily: FONT_FAMILY,
    background: PAPER,
    body: body.join('\n'),
  });
}

/** Attributes of a special point's group (tests and users find points by them). */
function pointAttributes(s: { kind: string; branch: string | number; parameter: number; monitor: number }): Record<string, string> {
  return {
    'data-role': 'special-point',
    'data-kind': s.kind,
    'data-branch': String(s.branch),
    'data-parameter': String(s.parameter),
    'data-monitor': String(s.monitor),
  };
}
