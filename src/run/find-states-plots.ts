/**
 * The pictures of a find-states folder, drawn from its files (run.json, solutions/state-K.npy,
 * the trace folders), so that `branchline plot DIR` redraws them as the command drew them:
 *
 *   plots/state-K.svg   each state (a line plot in 1D, heat maps in 2D)
 *   diagram.svg         with traces: every traced branch in one diagram, a colour per trace;
 *                       a trace lying along another under the monitor (u and −u under the L2
 *                       norm) says so in the legend; a special point met by several traces is
 *                       labelled once
 */
import { existsSync, mkdirSync } from 'node:fs';
import { join } from 'node:path';
import { diagramSvg } from '../plot/index.js';
import type { DiagramBranch, DiagramSpecialPoint } from '../plot/diagram.js';
import { InputError } from './errors.js';
import { type AxisInfo, labelCoincidentPointsOnce, monitorWords, nameCoincidentBranches, readRunDiagram, statePictureSvg } from './plots.js';
import { readRunJson } from './start.js';
import { formatValue } from './summary.js';
import { readNpy, writeFileAtomic } from './writers.js';

interface StateEntry {
  state: number;
  solution: string;
  'found-by-solve': number;
  guess: number;
  solves: number;
  stability?: { stable: boolean | null; unstableCount: number };
}

interface TraceEntry {
  state: number;
  direction: 'increase' | 'decrease';
  directory: string;
}

export interface FindPlotResult {
  files: string[];
  warnings: string[];
  monitor?: string;
}

const str = (v: unknown, fallback = ''): string => (typeof v === 'string' ? v : fallback);

/** Draw plots/state-K.svg for every state and, with traces, diagram.svg. Throws InputError when `dir` holds no find-states folder. */
export function drawFindPlots(dir: string, options: { monitor?: string } = {}): FindPlotResult {
  let run: Record<string, unknown>;
  try {
    run = readRunJson(dir);
  } catch (e) {
    throw new InputError(`cannot draw: ${(e as Error).message}`);
  }
  if (run.kind !== 'find-states') throw new InputError(`cannot draw: ${dir} does not hold a search for steady states (find-states)`);
  const files: string[] = [];
  const warnings: string[] = [];
  const problem = (run.problem ?? {}) as Record<string, unknown>;
  const fields = (Array.isArray(problem.fields) ? problem.fields : []) as string[];
  const axes = (Array.isArray(problem.axes) ? problem.axes : []) as AxisInfo[];
  const caution = typeof run.caution === 'string' ? run.caution : undefined;
  const caseDoc = (run.case ?? {}) as Record<string, unknown>;
  const name = str(caseDoc.name, 'case');
  const params = (run['start-parameters'] ?? {}) as Record<string, number>;
  const states = (Array.isArray(run.states) ? run.states : []) as StateEntry[];
  const at = Object.entries(params)
    .map(([k, v]) => `${k} = ${typeof v === 'number' ? formatValue(v, 6) : String(v)}`)
    .join(', ');
  const what = fields.length === 1 ? fields[0] : fields.join(', ');
  for (const s of states) {
    const file = `plots/state-${s.state}.svg`;
    try {
      if (!existsSync(join(dir, s.solution))) throw new Error(`${s.solution} is missing`);
      const st = s.stability;
      const svg = statePictureSvg(readNpy(join(dir, s.solution)), {
        title: `${what}: state ${s.state} of ${states.length}${st ? ` (${st.stable === true ? 'stable' : st.stable === false ? `unstable, ${st.unstableCount}` : 'stability not certified'})` : ''}`,
        subtitle: `${at}; found by solve ${s['found-by-solve']} from guess ${s.guess}; ${s.solves} solve${s.solves === 1 ? '' : 's'} ended here; case ${name}`,
        fields,
        axes,
        ...(caution ? { caution } : {}),
        idPrefix: `state-${s.state}`,
      });
      mkdirSync(join(dir, 'plots'), { recursive: true });
      writeFileAtomic(join(dir, file), svg);
      files.push(file);
    } catch (e) {
      warnings.push(`${file}: not drawn (${(e as Error).message})`);
    }
  }

  const traces = (Array.isArray(run.traces) ? run.traces : []) as TraceEntry[];
  if (traces.length === 0) return { files, warnings };
  const branches: DiagramBranch[] = [];
  const points: DiagramSpecialPoint[] = [];
  let monitor = options.monitor ?? str((caseDoc.plot as { monitor?: unknown } | undefined)?.monitor);
  let descriptions: Record<string, string> = {};
  let parameter = 'parameter';
  for (const t of traces) {
    let d;
    try {
      d = readRunDiagram(join(dir, t.directory), monitor === '' ? undefined : monitor);
    } catch (e) {
      if (options.monitor !== undefined && e instanceof InputError && /is not a column/.test(e.message)) throw e;
      warnings.push(`${t.directory}: not drawn (${(e as Error).message})`);
      continue;
    }
    monitor = d.monitor;
    descriptions = d.descriptions;
    parameter = d.parameter;
    const way = t.direction === 'increase' ? 'up' : 'down';
    for (const b of d.branches) branches.push({ ...b, id: `${t.state}:${t.direction}:${b.id}`, name: `state ${t.state} ${way}${d.branches.length > 1 ? `, branch ${b.id}` : ''}` });
    for (const p of d.shown) if (p.kind !== 'end') points.push({ ...p, branch: `${t.state}:${t.direction}:${p.branch}` });
    warnings.push(...d.warnings.map((w) => `${t.directory}: ${w}`));
  }
  if (branches.length === 0) {
    warnings.push('diagram.svg: not drawn (no trace has a branch to draw)');
    return { files, warnings };
  }
  // a trace running along another (through a pitchfork onto the mirror state, or both halves
  // of an isola) would be invisible: its legend name says so
  const names = new Map(branches.map((b) => [String(b.id), b.name ?? String(b.id)]));
  const marked = branches.slice();
  nameCoincidentBranches(marked);
  marked.forEach((b, i) => {
    const along = /lies along branch (.+)\)$/.exec(b.name ?? '')?.[1];
    if (along !== undefined && b.name !== branches[i].name) branches[i] = { ...branches[i], name: `${names.get(String(b.id))}, along ${names.get(along) ?? along}` };
  });
  labelCoincidentPointsOnce(points);
  const others = Object.entries(params)
    .filter(([k]) => k !== parameter)
    .map(([k, v]) => `${k} = ${formatValue(v, 6)}`)
    .join(', ');
  const words = monitorWords(monitor, fields, descriptions);
  const svg = diagramSvg({
    title: `${name}: ${words} against ${parameter}, the branches of the ${states.length} states found at ${parameter} = ${formatValue(params[parameter], 6)}`,
    subtitle: `${others ? `${others}; ` : ''}${str(problem.summary)}; up and down: ${parameter} increasing and decreasing from each state`,
    parameterName: parameter,
    monitorName: words,
    branches,
    specialPoints: points,
    ...(caution ? { caution } : {}),
  });
  writeFileAtomic(join(dir, 'diagram.svg'), svg);
  files.push('diagram.svg');
  return { files, warnings, monitor };
}
