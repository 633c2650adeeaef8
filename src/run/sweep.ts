/**
 * Sweeps: one case run over a list of values of one of its parameters (not the continuation
 * parameter), each value its own run folder under one parent folder, summarised together.
 *
 * The sweep folder:
 *   sweep.json     the sweep (case, parameter, values) and per value: the run folder, status, point
 *                  count, and every special point (kind, branch, located value)
 *   sweep.csv      one row per value: the value, run folder, status, points, branches, counts of
 *                  folds, branch points and Hopf points, and the located values of the first fold,
 *                  branch point and Hopf point on branch 1
 *   sweep.svg      one diagram with every value's branches, a colour per curve, named by the value
 *   <parameter>-<value>/   the run folder of each value (a complete run)
 *
 * A sweep of a curve run (`continuation.follow`) counts the curves and their special points
 * instead (sweep.csv: run, status, points, curves and a count per kind of curve point; sweep.json
 * also gives each point's free-parameter value), and sweep.svg draws every value's curves in the
 * plane of the two parameters.
 *
 * The runs are independent: they run here (one after another or in worker processes) or on a
 * cluster (an executor); the summary is made from their folders alone, so it is the same
 * wherever they ran.
 */
import { existsSync, readdirSync, readFileSync, statSync } from 'node:fs';
import { join, relative, resolve } from 'node:path';
import { diagramSvg } from '../plot/index.js';
import type { DiagramBranch, DiagramSpecialPoint } from '../plot/diagram.js';
import { type PreparedCase, caseDocument, ownCodeModel, prepareCaseObject } from './case.js';
import { InputError } from './errors.js';
import type { PieceOutcome, RunPiece } from './executor.js';
import { monitorWords, readRunDiagram } from './plots.js';
import type { SpecialRecord } from './run-directory.js';
import { readPointsJson } from './start.js';
import { formatValue } from './summary.js';
import { softwareVersion } from './version.js';
import { curveSpecialKinds } from '../continuation/curves/types.js';
import { csvLine, parseJsonNumber, writeFileAtomic, writeJsonAtomic } from './writers.js';

export const sweepFormat = 'branchline sweep';
export const sweepFormatVersion = 1;

export interface SweepSpec {
  parameter: string;
  values: number[];
}

/** Most values a sweep takes. */
export const maxSweepValues = 1000;

/** `biot=0.5,1,2` → { parameter: 'biot', values: [0.5, 1, 2] } (one-line errors otherwise). */
export function parseSweep(text: string): SweepSpec {
  const accepted = 'accepted: NAME=V1,V2,... with a parameter name and numbers, e.g. biot=0.5,1,2';
  const m = /^\s*([A-Za-z_][\w]*)\s*=\s*(.+)$/.exec(text);
  if (!m) throw new InputError(`--sweep '${text}' is not accepted (${accepted})`);
  const parts = m[2].split(',').map((s) => s.trim());
  const values = parts.map((s) => (s === '' ? NaN : Number(s)));
  const bad = parts.find((s, i) => !Number.isFinite(values[i]));
  if (bad !== undefined) throw new InputError(`--sweep '${text}': ${JSON.stringify(bad)} is not a finite number (${accepted})`);
  const seen = new Set<number>();
  for (const v of values) {
    if (seen.has(v)) throw new InputError(`--sweep '${text}': the value ${v} is listed twice`);
    seen.add(v);
  }
  if (values.length > maxSweepValues) throw new InputError(`--sweep '${text}': ${values.length} values, more than the ${maxSweepValues} accepted`);
  return { parameter: m[1], values };
}

/** The folder-name form of a value (shortest round-trip digits). */
export function valueText(v: number): string {
  return String(v);
}

function isOurSweep(dir: string): boolean {
  try {
    return (JSON.parse(readFileSync(join(dir, 'sweep.json'), 'utf8')) as { format?: unknown }).format === sweepFormat;
  } catch {
    return false;
  }
}

/** Why `dir` cannot take a sweep (undefined when it can). */
export function sweepFolderProblem(dir: string, force: boolean): string | undefined {
  if (!existsSync(dir)) return undefined;
  if (!statSync(dir).isDirectory()) return `output folder ${dir} exists and is a file, not a folder`;
  const entries = readdirSync(dir);
  if (entries.length === 0) return undefined;
  if (!force) return `output folder ${dir} is not empty (${isOurSweep(dir) ? 'it holds an earlier sweep' : `it holds ${entries.length} entries`}); choose another with --out, or pass --force to replace an earlier sweep`;
  if (!isOurSweep(dir)) return `output folder ${dir} is not empty and holds no earlier sweep; --force replaces only an earlier sweep, choose another folder with --out`;
  return undefined;
}

/**
 * The runs of a sweep: the case with the parameter set to each value (checked, problems built),
 * named `<case>-<parameter>-<value>`, in `<parent>/<parameter>-<value>`.
 */
export async function sweepPieces(prepared: PreparedCase, spec: SweepSpec, parent: string): Promise<RunPiece[]> {
  const names = Object.keys(prepared.params);
  if (!names.includes(spec.parameter)) {
    throw new InputError(`--sweep: '${spec.parameter}' is not a parameter of ${prepared.label} (accepted: ${names.join(', ')})`);
  }
  if (spec.parameter === prepared.settings.parameter) {
    throw new InputError(`--sweep: '${spec.parameter}' is the continuation parameter of ${prepared.label}; sweep another parameter (accepted: ${names.filter((n) => n !== spec.parameter).join(', ') || 'none'})`);
  }
  const curve = sweptCurve(prepared);
  if (curve && spec.parameter === curve.free) {
    throw new InputError(`--sweep: '${spec.parameter}' is the free parameter of the curve run ${prepared.label} (it adjusts along the curve); sweep another parameter (accepted: ${names.filter((n) => n !== spec.parameter && n !== prepared.settings.parameter).join(', ') || 'none'})`);
  }
  const pieces: RunPiece[] = [];
  for (const v of spec.values) {
    const doc = caseDocument(prepared.case) as Record<string, unknown> & { parameters: Record<string, unknown>; output: Record<string, unknown> };
    doc.parameters = { ...doc.parameters, [spec.parameter]: v };
    doc.name = `${prepared.case.name}-${spec.parameter}-${valueText(v)}`;
    delete doc.output.directory;
    const label = `${prepared.label} (${spec.parameter} = ${valueText(v)})`;
    // the values are the user's case: its code model (only that one) may load
    const p = await prepareCaseObject(doc, { label, baseDir: prepared.baseDir, ...(prepared.file !== undefined ? { file: prepared.file } : {}), ...ownCodeModel(prepared.case) });
    pieces.push({
      name: `${spec.parameter}-${valueText(v)}`,
      outDir: resolve(parent, `${spec.parameter}-${valueText(v)}`),
      doc,
      label,
      baseDir: prepared.baseDir,
      ...(prepared.file !== undefined ? { file: prepared.file } : {}),
      prepared: p,
    });
  }
  return pieces;
}

// ---------------------------------------------------------------------------------------------
// The summary

export const SWEEP_COLUMNS = ['run', 'status', 'points', 'branches', 'folds', 'branch-points', 'hopf', 'first-fold', 'first-branch-point', 'first-hopf'] as const;

/** The columns of sweep.csv for a sweep of curve runs: the kinds of curve points counted. */
export const CURVE_SWEEP_COLUMNS = ['run', 'status', 'points', 'curves', ...curveSpecialKinds] as const;

/** A curve run's kind and free parameter; undefined for a one-parameter run. */
function sweptCurve(prepared: PreparedCase): { follow: string; free: string } | undefined {
  const f = prepared.case.continuation.follow;
  return f ? { follow: f.kind, free: f.free } : undefined;
}

export interface SweepRow {
  value: number;
  directory: string;
  status: string;
  reason?: string;
  points?: number;
  branches?: number;
  specials: SpecialRecord[];
}

export interface SweepResult {
  status: 'finished' | 'failed' | 'stopped' | 'submitted';
  directory: string;
  spec: SweepSpec;
  continuationParameter: string;
  rows: SweepRow[];
  files: string[];
  warnings: string[];
  caution?: string;
  /** A sweep of curve runs: what they follow and the free parameter. */
  curve?: { follow: string; free: string };
}

function readRun(dir: string): Record<string, unknown> | undefined {
  try {
    return JSON.parse(readFileSync(join(dir, 'run.json'), 'utf8')) as Record<string, unknown>;
  } catch {
    return undefined;
  }
}

function firstOn(specials: readonly SpecialRecord[], kind: string): number | undefined {
  return specials.find((s) => s.kind === kind && s.branch === 1)?.value;
}

/**
 * Write sweep.json, sweep.csv and sweep.svg from the run folders (and the outcomes' reasons);
 * returns what the summary shows.
 */
export function writeSweepSummary(prepared: PreparedCase, spec: SweepSpec, parent: string, pieces: readonly RunPiece[], outcomes: readonly PieceOutcome[]): SweepResult {
  const warnings: string[] = [];
  const cparam = prepared.settings.parameter;
  const rows: SweepRow[] = pieces.map((p, i) => {
    const o = outcomes[i];
    const run = readRun(p.outDir);
    let specials: SpecialRecord[] = [];
    try {
      specials = readPointsJson(p.outDir, true);
    } catch {
      specials = [];
    }
    const counts = (run?.counts ?? {}) as { points?: unknown; branches?: unknown };
    const status = o?.status === 'submitted' ? 'submitted' : typeof run?.status === 'string' ? run.status : (o?.status ?? 'not-started');
    return {
      value: spec.values[i],
      directory: relative(parent, p.outDir),
      status,
      ...(o?.reason !== undefined && status !== 'finished' ? { reason: o.reason } : {}),
      ...(typeof counts.points === 'number' ? { points: counts.points } : {}),
      ...(typeof counts.branches === 'number' ? { branches: counts.branches } : {}),
      specials,
    };
  });
  const overall: SweepResult['status'] = rows.every((r) => r.status === 'finished')
    ? 'finished'
    : rows.some((r) => r.status === 'submitted' || r.status === 'running')
      ? 'submitted'
      : rows.some((r) => r.status === 'failed')
        ? 'failed'
        : 'stopped';

  const curve = sweptCurve(prepared);
  let csv = csvLine([spec.parameter, ...(curve ? CURVE_SWEEP_COLUMNS : SWEEP_COLUMNS)]);
  for (const r of rows) {
    const count = (k: string): number => r.specials.filter((s) => s.kind === k).length;
    if (curve) csv += csvLine([r.value, r.directory, r.status, r.points, r.branches, ...curveSpecialKinds.map(count)]);
    else csv += csvLine([r.value, r.directory, r.status, r.points, r.branches, count('fold'), count('branch-point'), count('hopf'), firstOn(r.specials, 'fold'), firstOn(r.specials, 'branch-point'), firstOn(r.specials, 'hopf')]);
  }
  const files: string[] = [];
  writeFileAtomic(join(parent, 'sweep.csv'), csv);
  files.push('sweep.csv');

  const json = {
    format: sweepFormat,
    'format-version': sweepFormatVersion,
    software: { ...softwareVersion(), node: process.version },
    status: overall,
    'case-file': prepared.file ?? null,
    case: prepared.case.name,
    model: prepared.problem.describe().summary,
    parameter: spec.parameter,
    values: spec.values,
    'continuation-parameter': cparam,
    ...(curve ? { follow: curve.follow, 'free-parameter': curve.free } : {}),
    runs: rows.map((r) => ({
      value: r.value,
      directory: r.directory,
      status: r.status,
      ...(r.reason !== undefined ? { reason: r.reason } : {}),
      ...(r.points !== undefined ? { points: r.points } : {}),
      ...(r.branches !== undefined ? { branches: r.branches } : {}),
      'special-points': r.specials.filter((s) => s.kind !== 'end').map((s) => ({ kind: s.kind, branch: s.branch, value: s.value, ...(curve ? { free: s.free } : {}) })),
    })),
    ...(prepared.caution ? { caution: prepared.caution } : {}),
  };
  writeJsonAtomic(join(parent, 'sweep.json'), json);
  files.push('sweep.json');

  try {
    writeFileAtomic(join(parent, 'sweep.svg'), sweepSvg(prepared, spec, parent, pieces, warnings));
    files.push('sweep.svg');
  } catch (e) {
    warnings.push(`sweep.svg not drawn: ${(e as Error).message}`);
  }
  return { status: overall, directory: parent, spec, continuationParameter: cparam, rows, files, warnings, ...(prepared.caution ? { caution: prepared.caution } : {}), ...(curve ? { curve } : {}) };
}

/** One diagram, every value's branches (a colour per curve, named by the value). */
function sweepSvg(prepared: PreparedCase, spec: SweepSpec, parent: string, pieces: readonly RunPiece[], warnings: string[]): string {
  const curve = sweptCurve(prepared);
  const branches: DiagramBranch[] = [];
  const points: DiagramSpecialPoint[] = [];
  let monitor = prepared.case.plot.monitor;
  let fields: readonly string[] = prepared.problem.describe().fields;
  let descriptions: Record<string, string> = {};
  pieces.forEach((p, i) => {
    if (!existsSync(join(p.outDir, 'run.json'))) return;
    let d;
    try {
      d = readRunDiagram(p.outDir, monitor);
    } catch (e) {
      warnings.push(`${relative(parent, p.outDir)}: not drawn (${(e as Error).message})`);
      return;
    }
    monitor = d.monitor;
    fields = d.fields;
    descriptions = d.descriptions;
    const several = d.branches.length > 1;
    const v = `${spec.parameter} = ${formatValue(spec.values[i], 6)}`;
    // (curve runs: the curves' own names, e.g. `branch-point curve 2, mode 3`)
    for (const b of d.branches) branches.push({ id: `${i}:${b.id}`, name: several ? `${v}, ${curve && b.name ? b.name : `branch ${b.id}`}` : v, points: b.points });
    for (const s of d.shown) if (s.kind !== 'end') points.push({ ...s, branch: `${i}:${s.branch}` });
    warnings.push(...d.warnings.map((w) => `${relative(parent, p.outDir)}: ${w}`));
  });
  if (branches.length === 0) throw new Error('no run has a branch to draw yet');
  const cparam = prepared.settings.parameter;
  const shown = spec.values.map((v) => formatValue(v, 6));
  return diagramSvg({
    title: curve
      ? `${prepared.case.name}: the ${curve.follow.replace(/-/g, ' ')} curves in the plane of ${cparam} and ${curve.free}, per value of ${spec.parameter}`
      : `${prepared.case.name}: ${monitorWords(monitor, fields, descriptions)} against ${cparam}, a curve per value of ${spec.parameter}`,
    subtitle: `${spec.parameter} = ${shown.length > 8 ? `${shown.slice(0, 4).join(', ')}, …, ${shown.slice(-2).join(', ')}` : shown.join(', ')}; ${prepared.problem.describe().summary}`,
    parameterName: cparam,
    monitorName: curve ? curve.free : monitorWords(monitor, fields, descriptions),
    branches,
    specialPoints: points,
    ...(curve ? { curves: true } : {}),
    ...(prepared.caution ? { caution: prepared.caution } : {}),
  });
}

/** The sweep table in words (ends with a newline). */
export function formatSweepSummary(r: SweepResult, cwd = process.cwd()): string {
  const out: string[] = [];
  const cp = r.continuationParameter;
  let header: string[];
  const table: string[][] = [];
  if (r.curve) {
    out.push(`Sweep of ${r.spec.parameter} over ${r.rows.length} values (${r.curve.follow.replace(/-/g, ' ')} curves in ${cp}, ${r.curve.free} free):`);
    header = [r.spec.parameter, 'status', 'points', 'curves', 'points on the curves'];
    table.push(header);
    for (const row of r.rows) {
      const kinds = curveSpecialKinds.map((k) => [k, row.specials.filter((s) => s.kind === k).length] as const).filter(([, n]) => n > 0);
      const named = kinds.map(([k, n]) => `${k} ${n}`).join(', ') || (row.status === 'finished' ? 'none' : '');
      table.push([formatValue(row.value, 10), row.status, row.points !== undefined ? String(row.points) : '', row.branches !== undefined ? String(row.branches) : '', named]);
    }
  } else {
    out.push(`Sweep of ${r.spec.parameter} over ${r.rows.length} values (continuation in ${cp}):`);
    header = [r.spec.parameter, 'status', 'points', 'folds', 'branch points', 'Hopf', `first fold (${cp})`];
    table.push(header);
    for (const row of r.rows) {
      const count = (k: string): string => String(row.specials.filter((s) => s.kind === k).length);
      const fold = firstOn(row.specials, 'fold');
      table.push([formatValue(row.value, 10), row.status, row.points !== undefined ? String(row.points) : '', count('fold'), count('branch-point'), count('hopf'), fold !== undefined ? formatValue(parseJsonNumber(fold), 11) : '']);
    }
  }
  const widths = header.map((_, c) => Math.max(...table.map((t) => t[c].length)));
  // (the curves' words, last, are left-aligned)
  const left = (c: number): boolean => c <= 1 || (r.curve !== undefined && c === header.length - 1);
  for (const t of table) out.push('  ' + t.map((cell, c) => (left(c) ? cell.padEnd(widths[c]) : cell.padStart(widths[c]))).join('   ').trimEnd());
  for (const row of r.rows) if (row.reason !== undefined) out.push(`  ${r.spec.parameter} = ${formatValue(row.value, 10)}: ${row.reason}`);
  for (const w of r.warnings) out.push(`Warning: ${w}`);
  const where = relative(cwd, r.directory) || '.';
  out.push(`Files in ${where.startsWith('..') ? r.directory : where}: ${r.files.join(', ')}, and a run folder per value (${r.rows[0]?.directory ?? ''}, …)`);
  if (r.caution) out.push(`Caution: ${r.caution}`);
  return out.join('\n') + '\n';
}
