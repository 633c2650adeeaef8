/**
 * The pictures of a time integration (`branchline settle`), drawn from its files alone (run.json,
 * monitors.csv, snapshots/, solutions/final.npy), so that `branchline plot DIR` redraws them:
 *
 *   monitors.svg        the monitors against time, one panel per field (max, min, L2 norm), one
 *                       for the other monitors and extra unknowns, and the scaled residual on a
 *                       logarithmic axis with the steady tolerance; a logarithmic time axis when
 *                       the times span more than three decades
 *   plots/initial.svg   the initial state (t = 0)
 *   plots/final.svg     the final state (polished by Newton when steady)
 *
 * Models whose results bear on safety carry their caution in every footer.
 */
import { existsSync, mkdirSync } from 'node:fs';
import { join } from 'node:path';
import { formatValue, timeSeriesSvg, type TimeSeriesPanel } from '../plot/index.js';
import { InputError } from './errors.js';
import { type AxisInfo, statePictureSvg } from './plots.js';
import { readRunJson } from './start.js';
import { readCsv, readNpy, writeFileAtomic } from './writers.js';

/** Columns of monitors.csv that are not monitors. */
const bookkeeping = new Set(['step', 'time', 'time-step', 'residual', 'newton-iterations', 'factorised']);

const words: Record<string, string> = { max: 'max', min: 'min', 'l2-norm': 'L2 norm' };

/** Panels: per field (max, min, L2 norm and the field's own monitors), the rest, the residual. */
export function monitorPanels(columns: readonly string[], rows: readonly number[][], fields: readonly string[], steadyTolerance?: number): TimeSeriesPanel[] {
  const col = (name: string): number[] => {
    const k = columns.indexOf(name);
    return rows.map((r) => r[k]);
  };
  const monitors = columns.filter((c) => !bookkeeping.has(c));
  const used = new Set<string>();
  const panels: TimeSeriesPanel[] = [];
  if (fields.length === 1) {
    const mine = monitors.filter((m) => !/:/.test(m) && !/^drift-|^end-reaction$/.test(m));
    if (mine.length) {
      panels.push({ title: fields[0], series: mine.map((m) => ({ name: words[m] ?? m, values: col(m) })) });
      mine.forEach((m) => used.add(m));
    }
  } else {
    for (const f of fields) {
      const mine = monitors.filter((m) => m.endsWith(`:${f}`));
      if (!mine.length) continue;
      panels.push({ title: f, series: mine.map((m) => ({ name: words[m.slice(0, -f.length - 1)] ?? m, values: col(m) })) });
      mine.forEach((m) => used.add(m));
    }
  }
  const rest = monitors.filter((m) => !used.has(m));
  if (rest.length) panels.push({ title: 'other monitors', series: rest.map((m) => ({ name: m, values: col(m) })) });
  const residual = { title: 'scaled residual', log: true, series: [{ name: 'residual ‖D⁻¹F‖', values: col('residual') }] };
  if (steadyTolerance !== undefined) residual.series.push({ name: 'steady tolerance', values: rows.map(() => steadyTolerance) });
  panels.push(residual);
  return panels;
}

export interface SettlePlotResult {
  files: string[];
  warnings: string[];
}

function str(v: unknown, fallback = ''): string {
  return typeof v === 'string' ? v : fallback;
}

/** Draw monitors.svg and plots/initial.svg, plots/final.svg of the settle run in `dir`. */
export function drawSettlePlots(dir: string): SettlePlotResult {
  let run: Record<string, unknown>;
  try {
    run = readRunJson(dir);
  } catch (e) {
    throw new InputError(`cannot draw: ${(e as Error).message}`);
  }
  if (run.kind !== 'settle') throw new InputError(`cannot draw: ${dir} holds a continuation run, not a time integration`);
  const files: string[] = [];
  const warnings: string[] = [];
  const problem = (run.problem ?? {}) as Record<string, unknown>;
  const fields = (Array.isArray(problem.fields) ? problem.fields : []) as string[];
  const axes = (Array.isArray(problem.axes) ? problem.axes : []) as AxisInfo[];
  const caution = typeof run.caution === 'string' ? run.caution : undefined;
  const name = str((run.case as Record<string, unknown> | undefined)?.name, 'run');
  const outcome = run.outcome as { kind?: string; text?: string } | undefined;
  const status = str(run.status, 'running');
  const state = outcome?.text ?? (status === 'running' ? 'integration still running' : `integration ${status}`);
  const grid = axes.length ? `grid ${axes.map((a) => a.intervals).join(' × ')} intervals; ${String(problem.unknowns ?? '?')} unknowns` : '';
  const subtitle = [str(problem.summary), grid].filter((t) => t !== '').join('; ');
  const steady = ((run.case as { time?: { 'steady-tolerance'?: unknown } } | undefined)?.time?.['steady-tolerance']);

  try {
    const csv = readCsv(join(dir, 'monitors.csv'));
    if (csv.rows.length > 0) {
      const svg = timeSeriesSvg({
        title: `${name}: monitors against time (${state})`,
        subtitle,
        time: csv.rows.map((r) => r[csv.columns.indexOf('time')]),
        panels: monitorPanels(csv.columns, csv.rows, fields, typeof steady === 'number' ? steady : undefined),
        ...(caution ? { caution } : {}),
      });
      writeFileAtomic(join(dir, 'monitors.svg'), svg);
      files.push('monitors.svg');
    }
  } catch (e) {
    warnings.push(`monitors.csv: not drawn (${(e as Error).message})`);
  }

  const params = Object.entries((run['start-parameters'] ?? {}) as Record<string, unknown>)
    .map(([k, v]) => `${k} = ${typeof v === 'number' ? formatValue(v, 6) : String(v)}`)
    .join(', ');
  const what = fields.length === 1 ? fields[0] : fields.join(', ');
  const snapshots = (Array.isArray(run.snapshots) ? run.snapshots : []) as { time: number; file: string }[];
  const final = run.final as { solution?: unknown; time?: unknown } | undefined;
  const pictures: { file: string; source?: string; title: string }[] = [
    { file: 'plots/initial.svg', source: snapshots.find((s) => s.time === 0)?.file, title: `${what} at t = 0 (initial state)` },
    {
      file: 'plots/final.svg',
      source: typeof final?.solution === 'string' ? final.solution : undefined,
      title: `${what} at t = ${typeof final?.time === 'number' ? formatValue(final.time, 6) : '?'} (${outcome?.kind === 'steady' ? 'steady state, polished by Newton' : `final state: ${outcome?.kind ?? status}`})`,
    },
  ];
  for (const p of pictures) {
    if (p.source === undefined || !existsSync(join(dir, p.source))) continue;
    try {
      const svg = statePictureSvg(readNpy(join(dir, p.source)), {
        title: p.title,
        subtitle: `${params}; case ${name}`,
        fields,
        axes,
        ...(caution ? { caution } : {}),
        idPrefix: p.file.replace(/^plots\/|\.svg$/g, ''),
      });
      mkdirSync(join(dir, 'plots'), { recursive: true });
      writeFileAtomic(join(dir, p.file), svg);
      files.push(p.file);
    } catch (e) {
      warnings.push(`${p.source}: not drawn (${(e as Error).message})`);
    }
  }
  return { files, warnings };
}
