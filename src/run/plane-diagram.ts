/**
 * Curves of several curve runs in one parameter-plane diagram: fold and Hopf curves meet at
 * Bogdanov–Takens points, so a Hopf-curve run started at one (`start: {run: FOLD-RUN, point:
 * bogdanov-takens}`) is best seen with the fold curves it came from, and a batch of curve runs
 * in the same two parameters with all its curves together.
 *
 *  - `earlierCurves(run, parameter, free)`: the curves of the runs a start chain came from (the
 *    run's `case.start.run`, that run's own start, … up to five runs back) that lie in the same
 *    plane (the same two parameters, in either order: swapped runs are drawn swapped back);
 *    drawRunPlots adds them to a curve run's diagram.svg.
 *  - `drawBatchPlanes(dirs, folder)`: after a batch, one `plane-<parameter>-<free>.svg` in the
 *    batch's folder per plane that two or more of its curve runs share.
 *
 * Reads the runs' files only (run.json, points.json, the branch CSVs) through readRunDiagram.
 */
import { existsSync } from 'node:fs';
import { basename, dirname, join, resolve } from 'node:path';
import { diagramSvg, type DiagramBranch, type DiagramSpecialPoint } from '../plot/diagram.js';
import { readRunDiagram } from './plots.js';
import { writeFileAtomic } from './writers.js';

export interface PlaneCurves {
  branches: DiagramBranch[];
  shown: DiagramSpecialPoint[];
  /** The runs the curves come from (folders) and their case names. */
  runs: string[];
  names: string[];
}

interface RunPlane {
  dir: string;
  name: string;
  parameter: string;
  free: string;
  branches: DiagramBranch[];
  shown: DiagramSpecialPoint[];
  caution?: string;
}

/** A curve run's curves and special points (undefined: not a curve run, or unreadable). */
function planeOf(dir: string): RunPlane | undefined {
  try {
    const d = readRunDiagram(dir);
    if (!d.free) return undefined;
    const name = typeof (d.run.case as { name?: unknown } | undefined)?.name === 'string' ? ((d.run.case as { name: string }).name) : basename(dir);
    return { dir, name, parameter: d.parameter, free: d.free, branches: d.branches, shown: d.shown, ...(d.caution ? { caution: d.caution } : {}) };
  } catch {
    return undefined;
  }
}

/** The plane's curves, relabelled as another run's (`fold curve 1 of slab-limit`), swapped into (parameter, free) when needed. */
function asPart(p: RunPlane, parameter: string, free: string, tag: string): { branches: DiagramBranch[]; shown: DiagramSpecialPoint[] } | undefined {
  const swap = p.parameter === free && p.free === parameter;
  if (!swap && !(p.parameter === parameter && p.free === free)) return undefined;
  const flip = <T extends { parameter: number; monitor: number }>(x: T): T => (swap ? { ...x, parameter: x.monitor, monitor: x.parameter } : x);
  return {
    branches: p.branches.map((b) => ({ ...b, id: `${tag}:${b.id}`, name: `${b.name ?? `curve ${b.id}`} of ${p.name}`, points: b.points.map(flip) })),
    shown: p.shown.filter((s) => s.kind !== 'end').map((s) => ({ ...flip(s), branch: `${tag}:${s.branch}` })),
  };
}

/** The curves of the earlier runs of a start chain that lie in the plane of (parameter, free). */
export function earlierCurves(run: Record<string, unknown>, parameter: string, free: string): PlaneCurves {
  const out: PlaneCurves = { branches: [], shown: [], runs: [], names: [] };
  const seen = new Set<string>();
  let start = (run.case as { start?: { run?: unknown } } | undefined)?.start;
  for (let depth = 0; depth < 5 && typeof start?.run === 'string'; depth++) {
    const dir = resolve(start.run);
    if (seen.has(dir) || !existsSync(join(dir, 'run.json'))) break;
    seen.add(dir);
    const p = planeOf(dir);
    const part = p && asPart(p, parameter, free, `run${depth + 1}`);
    if (part) {
      out.branches.push(...part.branches);
      out.shown.push(...part.shown);
      out.runs.push(dir);
      out.names.push(p!.name);
    }
    let next: Record<string, unknown> | undefined;
    try {
      next = readRunDiagram(dir).run;
    } catch {
      break;
    }
    start = (next.case as { start?: { run?: unknown } } | undefined)?.start;
  }
  return out;
}

/**
 * After a batch: for each plane of two parameters that two or more of the curve runs in `dirs`
 * share, `plane-<parameter>-<free>.svg` in `folder` with all their curves. Returns the files
 * written (paths) with the runs in each.
 */
export function drawBatchPlanes(dirs: readonly string[], folder?: string): { file: string; runs: string[]; parameter: string; free: string }[] {
  const planes = dirs.map(planeOf).filter((p): p is RunPlane => p !== undefined);
  const parent = folder ?? commonParent(dirs);
  if (!parent) return [];
  const written: { file: string; runs: string[]; parameter: string; free: string }[] = [];
  const used = new Set<RunPlane>();
  for (const first of planes) {
    if (used.has(first)) continue;
    const members = planes.filter((p) => !used.has(p) && asPart(p, first.parameter, first.free, '') !== undefined);
    if (members.length < 2) continue;
    members.forEach((m) => used.add(m));
    const branches: DiagramBranch[] = [];
    const shown: DiagramSpecialPoint[] = [];
    members.forEach((m, i) => {
      const part = asPart(m, first.parameter, first.free, `run${i + 1}`)!;
      branches.push(...part.branches);
      shown.push(...part.shown);
    });
    const caution = members.find((m) => m.caution)?.caution;
    const svg = diagramSvg({
      title: `Curves of ${members.length} runs in the plane of ${first.parameter} and ${first.free}`,
      subtitle: members.map((m) => m.name).join(', '),
      parameterName: first.parameter,
      monitorName: first.free,
      branches,
      specialPoints: shown,
      curves: true,
      ...(caution ? { caution } : {}),
    });
    const file = join(parent, `plane-${safe(first.parameter)}-${safe(first.free)}.svg`);
    writeFileAtomic(file, svg);
    written.push({ file, runs: members.map((m) => m.dir), parameter: first.parameter, free: first.free });
  }
  return written;
}

const safe = (name: string): string => name.replace(/[^A-Za-z0-9_.-]/g, '_');

/** The folder holding every run folder, when they share one. */
function commonParent(dirs: readonly string[]): string | undefined {
  const parents = new Set(dirs.map((d) => dirname(resolve(d))));
  return parents.size === 1 ? [...parents][0] : undefined;
}
