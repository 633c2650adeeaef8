/**
 * The pictures of a run, drawn from its files alone (run.json, branches/*.csv, points.json,
 * solutions/*.npy), so that `branchline plot DIR` redraws them at any time — during a long run,
 * after a stop, or with another monitor — and `run` draws them when it ends:
 *
 *   diagram.svg            the bifurcation diagram: the continuation parameter across, a monitor
 *                          up (case key `plot: {monitor: ...}`; default max, or max of the first
 *                          field); every branch; stable solid, unstable dashed, stability not
 *                          computed dotted; special points marked and named in words
 *   plots/<name>.svg       the solution at each special point with a solution file
 *                          (solutions/<name>.npy): 1D one curve per field, 2D heat maps with a
 *                          colour bar per field, 3D the middle z slice
 *
 * Models whose results bear on safety (ignition, runaway, buckling) carry their caution in every
 * footer (run.json `caution`). Files are replaced atomically; plots of special points that no
 * longer exist (a run replaced with --force) are removed.
 */
import { existsSync, mkdirSync, readdirSync, rmSync } from 'node:fs';
import { basename, join } from 'node:path';
import {
  type DiagramBranch,
  type DiagramSpecialPoint,
  type SpecialPointKind,
  SPECIAL_POINT_KINDS,
  diagramSvg,
  formatValue,
  heatMapSvg,
  linePlotSvg,
} from '../plot/index.js';
import { curveName } from '../continuation/curves/types.js';
import { earlierCurves } from './plane-diagram.js';
import { defaultPlotMonitor } from './case.js';
import { InputError } from './errors.js';
import { isRunPlotName } from './manifest.js';
import type { SpecialRecord } from './run-directory.js';
import { readPointsJson, readRunJson, runFilePath } from './start.js';
import { parseJsonNumber, readCsv, readNpy, writeFileAtomic } from './writers.js';

export interface PlotOptions {
  /** Monitor on the diagram's vertical axis (default: the case's `plot.monitor`, else max). */
  monitor?: string;
  /** Draw the solution plots at special points (default true). */
  solutions?: boolean;
  /**
   * At most this many solution plots (default 60): folds, Hopf points and branch points first,
   * branch by branch, then branch ends. Infinity draws every one.
   */
  maxSolutionPlots?: number;
}

export const defaultMaxSolutionPlots = 60;

export interface PlotResult {
  /** Files written, relative to the run directory. */
  files: string[];
  /** Things that could not be drawn, in words. */
  warnings: string[];
  /** Remarks that are not problems (e.g. how many solution plots were left out). */
  notes: string[];
  /** The monitor used on the diagram. */
  monitor: string;
  /** Curve runs: the diagram's axes, the two parameters. */
  plane?: [string, string];
}

export interface AxisInfo {
  name: string;
  intervals: number;
  length: number;
  h: number;
  nodes: number;
}

/** Columns of a branch CSV that are not monitors. */
const nonMonitorColumns = new Set(['point', 'arclength', 'newton-iterations', 'residual', 'step-length', 'stable', 'unstable-count', 'leading-real', 'leading-imag', 'search-complete', 'unexplained-change']);

const kindWords: Record<string, string> = {
  fold: 'fold',
  'branch-point': 'branch point',
  hopf: 'Hopf point',
  end: 'end',
  cusp: 'cusp',
  'bogdanov-takens': 'Bogdanov–Takens point',
  'fold-branch-point': 'fold meeting a branch point',
  'mode-change': 'mode change',
  'mode-crossing': 'mode crossing',
  'zero-hopf': 'zero-Hopf point',
  bautin: 'Bautin point',
  'double-hopf': 'double-Hopf point',
};

function str(v: unknown, fallback = ''): string {
  return typeof v === 'string' ? v : fallback;
}

function num(v: unknown): number {
  try {
    return parseJsonNumber(v);
  } catch {
    return NaN;
  }
}

/** Monitors available in a run: the CSV columns that are monitors (not the parameter, not extras). */
function monitorColumns(columns: readonly string[], parameter: string, extras: readonly string[]): string[] {
  return columns.filter((c) => c !== parameter && !nonMonitorColumns.has(c) && !/^eigenvalue-\d+-(real|imag)$/.test(c) && !extras.includes(c));
}

/** A monitor column in words for an axis title: `max` → `max u`, `l2-norm:v` → `L2 norm of v`. */
export function monitorWords(monitor: string, fields: readonly string[], descriptions: Readonly<Record<string, string>> = {}): string {
  if (monitor === 'centre') return typeof descriptions.centre === 'string' ? descriptions.centre.replace(/,.*$/, '') : fields.length === 1 ? `${fields[0]} at the centre` : monitor;
  const m = /^(max|min|l2-norm)(?::(.+))?$/.exec(monitor);
  if (!m) return monitor;
  const field = m[2] ?? (fields.length === 1 ? fields[0] : undefined);
  if (field === undefined) return monitor;
  return m[1] === 'l2-norm' ? `L2 norm of ${field}, √(∫${field}²)` : `${m[1]} ${field}`;
}

/** The title of the run's pictures. */
function runTitle(run: Record<string, unknown>): { name: string; summary: string; grid: string } {
  const problem = (run.problem ?? {}) as Record<string, unknown>;
  const c = (run.case ?? {}) as Record<string, unknown>;
  const axes = (Array.isArray(problem.axes) ? problem.axes : []) as AxisInfo[];
  const hs = axes.map((a) => formatValue(num(a.h), 4));
  const grid = axes.length
    ? `grid ${axes.map((a) => a.intervals).join(' × ')} intervals, h = ${hs.every((h) => h === hs[0]) ? hs[0] : hs.join(', ')}; ${num(problem.unknowns)} unknowns`
    : '';
  return { name: str(c.name, 'run'), summary: str(problem.summary), grid };
}

/** What a run's diagram shows, read from its files (also used for diagrams of several runs). */
export interface RunDiagramData {
  run: Record<string, unknown>;
  specials: SpecialRecord[];
  parameter: string;
  /** The monitor on the vertical axis, and the problem's fields (for words). */
  monitor: string;
  fields: string[];
  /** Monitor descriptions from run.json (older runs: none). */
  descriptions: Record<string, string>;
  branches: DiagramBranch[];
  /** Special points on the drawn branches (ends as bare markers). */
  shown: DiagramSpecialPoint[];
  caution?: string;
  warnings: string[];
  /** Curve runs: the free parameter, on the vertical axis instead of the monitor. */
  free?: string;
}

/**
 * Read the branches and special points of the run in `dir` for a diagram. Throws InputError when
 * `dir` holds no run or the monitor is unknown; a branch file that cannot be read is a warning.
 */
export function readRunDiagram(dir: string, monitorAsked?: string): RunDiagramData {
  let run: Record<string, unknown>;
  let specials: SpecialRecord[];
  try {
    run = readRunJson(dir);
    // a run that failed before its first special point has no points.json: draw its branches
    specials = readPointsJson(dir, true);
  } catch (e) {
    throw new InputError(`cannot draw: ${(e as Error).message}`);
  }
  const warnings: string[] = [];
  const parameter = str(run['continuation-parameter'], 'parameter');
  const problem = (run.problem ?? {}) as Record<string, unknown>;
  const fields = (Array.isArray(problem.fields) ? problem.fields : []) as string[];
  const descriptions = (problem.monitors !== null && typeof problem.monitors === 'object' ? problem.monitors : {}) as Record<string, string>;
  const extras = (Array.isArray(problem['extra-unknowns']) ? problem['extra-unknowns'] : []) as string[];
  const columns = (Array.isArray(run.columns) ? run.columns : []) as string[];
  const caution = typeof run.caution === 'string' ? run.caution : undefined;
  const monitors = monitorColumns(columns, parameter, extras);
  const caseDoc = (run.case ?? {}) as { plot?: { monitor?: unknown } };
  const monitor = monitorAsked ?? str(caseDoc.plot?.monitor) ?? '';
  const chosen = monitor !== '' ? monitor : defaultPlotMonitor(monitors, fields);
  if (!monitors.includes(chosen)) {
    throw new InputError(`monitor '${chosen}' is not a column of this run (accepted: ${monitors.join(', ') || 'none'})`);
  }

  // --- the diagram (curve runs: the curves in the plane of the two parameters)
  const free = typeof run['free-parameter'] === 'string' ? run['free-parameter'] : undefined;
  const across = free ?? chosen;
  const branchRecords = (Array.isArray(run.branches) ? run.branches : []) as { id: number; file: string; follow?: string; mode?: number[] }[];
  const branchFiles = branchRecords.length
    ? branchRecords.map((b) => ({ id: b.id, file: b.file }))
    : listBranchFiles(dir);
  const branches: DiagramBranch[] = [];
  for (const b of branchFiles) {
    const path = join(dir, b.file);
    if (!existsSync(path)) {
      warnings.push(`branch ${b.id}: ${b.file} is missing`);
      continue;
    }
    let csv: { columns: string[]; rows: number[][] };
    try {
      csv = readCsv(path, ['unexplained-change']);
    } catch (e) {
      warnings.push(`branch ${b.id}: ${(e as Error).message}`);
      continue;
    }
    const ip = csv.columns.indexOf(parameter);
    const im = csv.columns.indexOf(across);
    const is = csv.columns.indexOf('stable');
    if (ip < 0 || im < 0) {
      warnings.push(`branch ${b.id}: ${b.file} has no column ${ip < 0 ? parameter : across}`);
      continue;
    }
    const record = branchRecords.find((r) => r.id === b.id);
    branches.push({
      id: b.id,
      ...(free ? { name: `${record?.follow ? curveName(record.follow) : 'curve'} ${b.id}${Array.isArray(record?.mode) ? `, mode ${record!.mode.join(', ')}` : ''}` } : {}),
      points: csv.rows.map((r) => ({
        parameter: r[ip],
        monitor: r[im],
        stable: free ? true : is < 0 || Number.isNaN(r[is]) ? null : r[is] === 1,
      })),
    });
  }
  const ids = new Set(branches.map((b) => String(b.id)));
  const shown: DiagramSpecialPoint[] = [];
  for (const s of specials) {
    if (!(SPECIAL_POINT_KINDS as readonly string[]).includes(s.kind) || !ids.has(String(s.branch))) continue;
    const m = free ? num(s.free) : s.monitors?.[chosen];
    const value = num(s.value);
    if (typeof m !== 'number' || !Number.isFinite(m) || !Number.isFinite(value)) continue;
    // a curve that ends at a mode change goes on as another curve: its end is the mode change;
    // a Hopf curve that ends at a Bogdanov–Takens point: its end is that point's marker
    if (s.kind === 'end' && (s.reason === 'mode-change' || s.reason === 'bogdanov-takens')) continue;
    // ends are where the user's bounds stopped a branch: a bare marker (the legend names it)
    const modes = s.kind === 'mode-change' && Array.isArray(s.mode) && Array.isArray(s['new-mode']) ? { label: `mode ${(s.mode as number[]).join(', ')} → ${(s['new-mode'] as number[]).join(', ')}` } : {};
    shown.push({ kind: s.kind as SpecialPointKind, branch: s.branch, parameter: value, monitor: m, ...(s.kind === 'end' ? { label: '' } : modes) });
  }
  return { run, specials, parameter, monitor: chosen, fields, descriptions, branches, shown, ...(caution ? { caution } : {}), warnings, ...(free ? { free } : {}) };
}

/**
 * Draw diagram.svg and plots/*.svg of the run in `dir`. Throws InputError when `dir` holds no
 * run or the monitor is unknown; a solution that cannot be drawn becomes a warning.
 */
export function drawRunPlots(dir: string, options: PlotOptions = {}): PlotResult {
  const { run, specials, parameter, monitor: chosen, fields, descriptions, branches, shown, caution, warnings, free } = readRunDiagram(dir, options.monitor);
  const notes: string[] = [];
  const written: string[] = [];
  const problem = (run.problem ?? {}) as Record<string, unknown>;
  const title = runTitle(run);
  // a curve run started at a point of an earlier curve run in the same plane: its curves too
  const earlier = free ? earlierCurves(run, parameter, free) : undefined;
  const own = branches.length;
  if (earlier) {
    branches.push(...earlier.branches);
    shown.push(...earlier.shown);
  }
  nameCoincidentBranches(branches);
  labelCoincidentPointsOnce(shown);
  const statusNote = run.status === 'finished' ? '' : ` (run ${str(run.status, 'unfinished')})`;
  const follow = str(run.follow, 'special point');
  const withEarlier = earlier?.names.length ? `with the curves of ${earlier.names.join(', ')}, where it started` : '';
  // curves spanning more than two decades of positive values get a log axis (an ignition limit
  // over Biot numbers from 0.01 to 100, an imperfection from 1e-6 to 1e-3)
  const decades = (pick: (p: { parameter: number; monitor: number }) => number): boolean => {
    const vs = [...branches.flatMap((b) => b.points.map(pick)), ...shown.map(pick)].filter(Number.isFinite);
    return vs.length > 1 && Math.min(...vs) > 0 && Math.max(...vs) >= 100 * Math.min(...vs);
  };
  const svg = diagramSvg({
    title: free
      ? `${title.name}: the ${curveName(follow).replace(/-/g, ' ')}${own === 1 ? '' : 's'} in the plane of ${parameter} and ${free}${statusNote}`
      : `${title.name}: ${monitorWords(chosen, fields, descriptions)} against ${parameter}${statusNote}`,
    subtitle: [withEarlier, title.summary, title.grid].filter((t) => t !== '').join('; '),
    parameterName: parameter,
    monitorName: free ?? monitorWords(chosen, fields, descriptions),
    branches,
    specialPoints: shown,
    ...(free ? { curves: true, logParameter: decades((p) => p.parameter), logMonitor: decades((p) => p.monitor) } : {}),
    ...(caution ? { caution } : {}),
  });
  writeFileAtomic(join(dir, 'diagram.svg'), svg);
  written.push('diagram.svg');

  // --- the solutions at special points
  const plotsDir = join(dir, 'plots');
  const keep = new Set<string>();
  if (options.solutions !== false) {
    const axes = (Array.isArray(problem.axes) ? problem.axes : []) as AxisInfo[];
    const withFiles = specials.filter((s) => typeof s.solution === 'string');
    const ordered = [...withFiles.filter((s) => s.kind !== 'end'), ...withFiles.filter((s) => s.kind === 'end')];
    const limit = options.maxSolutionPlots ?? defaultMaxSolutionPlots;
    if (ordered.length > limit) {
      notes.push(
        `drew ${limit} of ${ordered.length} solution plots (folds, Hopf and branch points first, then branch ends); \`branchline plot ${dir} --all\` draws every one`,
      );
    }
    for (const s of ordered.slice(0, limit)) {
      if (typeof s.solution !== 'string') continue;
      const name = basename(s.solution).replace(/\.npy$/, '');
      const file = `plots/${name}.svg`;
      try {
        const array = readNpy(runFilePath(dir, s.solution, 'the solution file'));
        const plot = solutionSvg(array, s, { fields, axes, parameter, caution, caseName: title.name, monitor: chosen, descriptions });
        mkdirSync(plotsDir, { recursive: true });
        writeFileAtomic(join(dir, file), plot);
        written.push(file);
        keep.add(`${name}.svg`);
      } catch (e) {
        warnings.push(`${s.solution}: not drawn (${(e as Error).message})`);
      }
    }
  }
  // plots of special points this run no longer has (an earlier run replaced with --force)
  if (existsSync(plotsDir)) {
    for (const f of readdirSync(plotsDir)) {
      if (isRunPlotName(f) && !keep.has(f)) rmSync(join(plotsDir, f), { force: true });
    }
  }
  return { files: written, warnings, notes, monitor: chosen, ...(free ? { plane: [parameter, free] as [string, string] } : {}) };
}


/**
 * Symmetric problems give branches that coincide under a monitor (u and −u under l2-norm, a
 * pattern and its mirror image under max): a branch lying entirely along an earlier one would be
 * invisible, so its legend name says so. Tolerance: 0.3% of the plotted range (about a pixel).
 */
export function nameCoincidentBranches(branches: DiagramBranch[]): void {
  let x0 = Infinity;
  let x1 = -Infinity;
  let y0 = Infinity;
  let y1 = -Infinity;
  for (const b of branches) {
    for (const p of b.points) {
      if (!Number.isFinite(p.parameter) || !Number.isFinite(p.monitor)) continue;
      x0 = Math.min(x0, p.parameter);
      x1 = Math.max(x1, p.parameter);
      y0 = Math.min(y0, p.monitor);
      y1 = Math.max(y1, p.monitor);
    }
  }
  if (!(x1 >= x0 && y1 >= y0)) return;
  const sx = x1 > x0 ? 1 / (x1 - x0) : 1;
  const sy = y1 > y0 ? 1 / (y1 - y0) : 1;
  const tol = 0.003;
  const norm = (b: DiagramBranch): [number, number][] =>
    b.points.filter((p) => Number.isFinite(p.parameter) && Number.isFinite(p.monitor)).map((p) => [(p.parameter - x0) * sx, (p.monitor - y0) * sy]);
  const pts = branches.map(norm);
  const near = (q: [number, number], line: [number, number][]): boolean => {
    if (line.length === 1) return Math.hypot(q[0] - line[0][0], q[1] - line[0][1]) <= tol;
    for (let k = 1; k < line.length; k++) {
      const [ax, ay] = line[k - 1];
      const [bx, by] = line[k];
      if (q[0] < Math.min(ax, bx) - tol || q[0] > Math.max(ax, bx) + tol || q[1] < Math.min(ay, by) - tol || q[1] > Math.max(ay, by) + tol) continue;
      const vx = bx - ax;
      const vy = by - ay;
      const vv = vx * vx + vy * vy;
      const t = vv > 0 ? Math.min(1, Math.max(0, ((q[0] - ax) * vx + (q[1] - ay) * vy) / vv)) : 0;
      if (Math.hypot(q[0] - ax - t * vx, q[1] - ay - t * vy) <= tol) return true;
    }
    return false;
  };
  branches.forEach((b, i) => {
    if (pts[i].length === 0) return;
    for (let j = 0; j < i; j++) {
      if (pts[j].length === 0) continue;
      if (pts[i].every((q) => near(q, pts[j]))) {
        branches[i] = { ...b, name: `branch ${String(b.id)} (lies along branch ${String(branches[j].id)})` };
        return;
      }
    }
  });
}

/**
 * Mirror-image branches meet the same special point twice (a secondary branch point seen from a
 * branch and from its mirror image): one label is enough, the other marker stays bare.
 */
export function labelCoincidentPointsOnce(points: DiagramSpecialPoint[]): void {
  const xs = points.map((p) => p.parameter);
  const ys = points.map((p) => p.monitor);
  const dx = Math.max(...xs) - Math.min(...xs) || 1;
  const dy = Math.max(...ys) - Math.min(...ys) || 1;
  points.forEach((p, i) => {
    if (p.label === '') return;
    for (let j = 0; j < i; j++) {
      const q = points[j];
      if (q.kind === p.kind && q.label !== '' && Math.abs(q.parameter - p.parameter) <= 0.003 * dx && Math.abs(q.monitor - p.monitor) <= 0.003 * dy) {
        points[i] = { ...p, label: '' };
        return;
      }
    }
  });
}

/** Branch CSVs in branches/ (when run.json lists none, e.g. a run that failed early). */
function listBranchFiles(dir: string): { id: number; file: string }[] {
  const folder = join(dir, 'branches');
  if (!existsSync(folder)) return [];
  return readdirSync(folder)
    .map((f) => /^(\d+)\.csv$/.exec(f))
    .filter((m): m is RegExpExecArray => m !== null)
    .map((m) => ({ id: Number(m[1]), file: `branches/${m[0]}` }))
    .sort((a, b) => a.id - b.id);
}

interface SolutionContext {
  fields: readonly string[];
  axes: readonly AxisInfo[];
  parameter: string;
  caution?: string;
  caseName: string;
  monitor: string;
  /** Monitor descriptions from run.json (older runs: none). */
  descriptions?: Readonly<Record<string, string>>;
}

/** `fold 2 on branch 1`, `the end of branch 3` (from the record and its file name). */
function pointTitle(s: SpecialRecord): string {
  const k = /-(\d+)\.npy$/.exec(String(s.solution ?? ''))?.[1];
  const what = typeof s['free-parameter'] === 'string' ? 'curve' : 'branch';
  if (s.kind === 'end') return `the end of ${what} ${s.branch}`;
  const words = kindWords[s.kind] ?? s.kind.replace(/-/g, ' ');
  return `${words}${k ? ` ${k}` : ''} on ${what} ${s.branch}`;
}

/** One line under the title: parameter value, the diagram's monitor, extra unknowns, location status. */
function pointSubtitle(s: SpecialRecord, ctx: SolutionContext): string {
  const parts = [`${ctx.parameter} = ${formatValue(num(s.value), 10)}`];
  // points on curves: the free parameter too
  if (typeof s['free-parameter'] === 'string') parts.push(`${s['free-parameter']} = ${formatValue(num(s.free), 10)}`);
  const m = s.monitors?.[ctx.monitor];
  if (typeof m === 'number') parts.push(`${monitorWords(ctx.monitor, ctx.fields, ctx.descriptions)} = ${formatValue(m, 6)}`);
  const extras = s['extra-unknowns'];
  if (extras && typeof extras === 'object') {
    for (const [k, v] of Object.entries(extras as Record<string, unknown>)) parts.push(`${k} = ${formatValue(num(v), 6)}`);
  }
  if (s.kind === 'hopf' && typeof s.frequency === 'number') parts.push(`frequency ${formatValue(s.frequency, 5)}`);
  if (s.kind === 'branch-point' && typeof s.type === 'string' && s.type !== 'unknown') parts.push(String(s.type));
  if (s.located === false) parts.push('not fully located');
  return `${parts.join(', ')}; case ${ctx.caseName}`;
}

/** The solution plot of one special point: a line plot (1D) or heat maps (2D; 3D: the middle z slice). */
export function solutionSvg(array: { shape: number[]; data: Float64Array }, s: SpecialRecord, ctx: SolutionContext): string {
  const nf = array.shape[0];
  const names = ctx.fields.length === nf ? ctx.fields : Array.from({ length: nf }, (_, i) => `field ${i + 1}`);
  const what = names.length === 1 ? names[0] : names.join(', ');
  return statePictureSvg(array, {
    title: `${what} at ${pointTitle(s)}`,
    subtitle: pointSubtitle(s, ctx),
    fields: ctx.fields,
    axes: ctx.axes,
    ...(ctx.caution ? { caution: ctx.caution } : {}),
    idPrefix: basename(String(s.solution ?? 'solution')).replace(/\.npy$/, ''),
  });
}

/** A state (node array) as a picture: a line plot in 1D, heat maps in 2D, the middle z slice in 3D. */
export function statePictureSvg(
  array: { shape: number[]; data: Float64Array },
  ctx: { title: string; subtitle: string; fields: readonly string[]; axes: readonly AxisInfo[]; caution?: string; idPrefix: string },
): string {
  const { shape, data } = array;
  const dim = shape.length - 1;
  if (dim < 1 || dim > 3) throw new Error(`shape (${shape.join(', ')}) is not (fields, [nz, ny,] nx)`);
  const nf = shape[0];
  const names = ctx.fields.length === nf ? ctx.fields : Array.from({ length: nf }, (_, i) => `field ${i + 1}`);
  const nodes = shape.slice(1).reduce((a, b) => a * b, 1);
  const axis = (i: number): AxisInfo | undefined => ctx.axes[i];
  const title = ctx.title;
  let subtitle = ctx.subtitle;
  const caution = ctx.caution ? { caution: ctx.caution } : {};
  if (dim === 1) {
    const nx = shape[1];
    const h = axis(0)?.h ?? 1;
    const x = Float64Array.from({ length: nx }, (_, i) => i * h);
    return linePlotSvg({
      title,
      subtitle,
      x,
      xLabel: axis(0)?.name ?? 'x',
      fields: names.map((name, f) => ({ name, values: data.subarray(f * nodes, (f + 1) * nodes) })),
      ...(names.length === 1 ? { yLabel: names[0] } : {}),
      ...caution,
    });
  }
  // 2D, or the middle z slice of 3D (axes in x, y, z order; the array's last index is x)
  const nx = shape[shape.length - 1];
  const ny = shape[shape.length - 2];
  const nz = dim === 3 ? shape[1] : 1;
  const kz = Math.floor(nz / 2);
  if (dim === 3) subtitle += `; the slice z = ${formatValue(kz * (axis(2)?.h ?? 1), 4)} (node ${kz} of ${nz})`;
  const hx = axis(0)?.h ?? 1;
  const hy = axis(1)?.h ?? 1;
  return heatMapSvg({
    title,
    subtitle,
    nx,
    ny,
    ...(nx > 1 ? { x: [0, (nx - 1) * hx] as const } : {}),
    ...(ny > 1 ? { y: [0, (ny - 1) * hy] as const } : {}),
    xLabel: axis(0)?.name ?? 'x',
    yLabel: axis(1)?.name ?? 'y',
    fields: names.map((name, f) => ({ name, values: data.subarray(f * nodes + kz * nx * ny, f * nodes + (kz + 1) * nx * ny) })),
    idPrefix: ctx.idPrefix,
    ...caution,
  });
}

/**
 * Draw a run's plots after the run (the `run` command): never throws; problems become one
 * warning line each.
 */
export function drawPlotsAfterRun(dir: string, log: (level: 'info' | 'warning', message: string) => void = () => {}): void {
  try {
    const r = drawRunPlots(dir);
    for (const w of r.warnings) log('warning', `plot: ${w}`);
    for (const n of r.notes) log('info', `plot: ${n}`);
    const n = r.files.length - 1;
    log('info', `drew diagram.svg${n > 0 ? ` and ${n} solution plot${n === 1 ? '' : 's'} in plots/` : ''}`);
  } catch (e) {
    log('warning', `the plots could not be drawn: ${(e as Error).message}`);
  }
}
