/**
 * The short summary printed on stdout after a run: what was computed, grouped by branch, in
 * words (special points with their located parameter values and one leading monitor, then why
 * the branch ended), where the files went, and the model's caution when it has one.
 */
import { existsSync, readdirSync } from 'node:fs';
import { join, relative } from 'node:path';
import { stopReasonText } from '../continuation/types.js';
import { curveName, curveOnlyStopText } from '../continuation/curves/types.js';
import type { PreparedCase } from './case.js';
import type { BranchRecord, SpecialRecord } from './run-directory.js';
import type { RunResult } from './run-case.js';

/** At most this many special points are named per branch; the rest are counted. */
const namedPerBranch = 6;

/** `digits` significant digits, trailing zeros dropped; nan/inf spelled out. */
/** Warnings written out in the summary (all of them are in run.json). */
const shownWarnings = 5;

export function formatValue(x: number, digits: number): string {
  if (Number.isNaN(x)) return 'nan';
  if (!Number.isFinite(x)) return x > 0 ? 'inf' : '-inf';
  if (x === 0) return '0';
  const a = Math.abs(x);
  if (a >= 1e-4 && a < 1e9) {
    const t = x.toPrecision(digits);
    return t.includes('.') ? t.replace(/0+$/, '').replace(/\.$/, '') : t;
  }
  const [m, e] = x.toExponential(digits - 1).split('e');
  const mm = m.includes('.') ? m.replace(/0+$/, '').replace(/\.$/, '') : m;
  return `${mm}e${e.replace('+', '')}`;
}

const parameterDigits = 12;
const monitorDigits = 5;

function leadingMonitor(s: SpecialRecord, prepared: PreparedCase): string | undefined {
  // the diagram's monitor first (case key plot.monitor), then the problem's order
  const names = [prepared.case.plot?.monitor, ...prepared.problem.monitors.map((m) => m.name)].filter((n): n is string => typeof n === 'string');
  const name = names.find((n) => s.monitors[n] !== undefined);
  return name === undefined ? undefined : `${name} = ${formatValue(s.monitors[name], monitorDigits)}`;
}

/** `supercritical, l₁ = −0.84` (Hopf points, one- and two-parameter runs). */
function hopfCriticalityWords(s: SpecialRecord): string[] {
  const l1 = s['first-lyapunov-coefficient'];
  if (typeof l1 !== 'number' || !Number.isFinite(l1)) return typeof s.criticality === 'string' ? [`criticality ${s.criticality}`] : [];
  return [`${typeof s.criticality === 'string' && s.criticality !== 'undetermined' ? `${s.criticality}, ` : ''}first Lyapunov coefficient ${formatValue(l1, monitorDigits)}`];
}

function specialText(s: SpecialRecord, prepared: PreparedCase): string {
  const p = prepared.settings.parameter;
  // on curves a point has both parameters
  const free = typeof s['free-parameter'] === 'string' && typeof s.free === 'number' ? `, ${s['free-parameter']} = ${formatValue(s.free, parameterDigits)}` : '';
  const at = `${p} = ${formatValue(s.value, parameterDigits)}${free}`;
  const mon = leadingMonitor(s, prepared);
  const details: string[] = [];
  if (mon) details.push(mon);
  if (s.located === false) details.push('not fully located');
  switch (s.kind) {
    case 'fold':
      return `fold at ${at} (${details.join(', ')})`;
    case 'branch-point': {
      const words: string[] = [];
      if (typeof s.multiplicity === 'number' && s.multiplicity > 1) words.push(`multiplicity ${s.multiplicity}`);
      if (s.type && s.type !== 'unknown') words.push(String(s.type));
      if (s.criticality && s.criticality !== 'undetermined') words.push(String(s.criticality));
      const nb = Array.isArray(s['new-branches']) ? (s['new-branches'] as number[]) : [];
      if (nb.length) words.push(`followed as branch${nb.length > 1 ? 'es' : ''} ${nb.join(', ')}`);
      else if (typeof s.note === 'string') words.push(s.note);
      return `branch point at ${at} (${[...words, ...details].join(', ')})`;
    }
    case 'hopf': {
      const words: string[] = [];
      if (typeof s.frequency === 'number') words.push(`frequency ${formatValue(s.frequency, monitorDigits)}`);
      if (typeof s.period === 'number') words.push(`period ${formatValue(s.period, monitorDigits)}`);
      if (typeof s.crossing === 'string') words.push(s.crossing);
      words.push(...hopfCriticalityWords(s));
      return `Hopf point at ${at} (${[...words, ...details].join(', ')})`;
    }
    case 'zero-hopf':
    case 'bautin':
    case 'double-hopf':
    case 'bogdanov-takens': {
      const name = { 'zero-hopf': 'zero-Hopf point', bautin: 'Bautin point', 'double-hopf': 'double-Hopf point', 'bogdanov-takens': 'Bogdanov–Takens point' }[s.kind];
      const words: string[] = [];
      if (typeof s.frequency === 'number') words.push(s.kind === 'bogdanov-takens' ? 'frequency 0' : `frequency ${formatValue(s.frequency, monitorDigits)}`);
      if (s.kind !== 'bautin' && s.kind !== 'bogdanov-takens') words.push(...hopfCriticalityWords(s));
      return `${name} at ${at}${[...words, ...details].length ? ` (${[...words, ...details].join(', ')})` : ''}`;
    }
    case 'mode-change':
    case 'mode-crossing': {
      const words = Array.isArray(s.mode) && Array.isArray(s['new-mode']) ? [`mode ${(s.mode as number[]).join(', ')} → ${(s['new-mode'] as number[]).join(', ')}`] : [];
      const nb = Array.isArray(s['new-branches']) ? (s['new-branches'] as number[]) : [];
      if (nb.length) words.push(`followed as curve ${nb.join(', ')}`);
      return `${s.kind.replace(/-/g, ' ')} at ${at} (${[...words, ...details].join(', ')})`;
    }
    default:
      return `${s.kind.replace(/-/g, ' ')} at ${at}${details.length ? ` (${details.join(', ')})` : ''}`;
  }
}

function endText(b: BranchRecord, end: SpecialRecord | undefined, prepared: PreparedCase): string {
  const p = prepared.settings.parameter;
  const reason = b.stopReason;
  if (reason === undefined) return 'did not end (the run stopped)';
  switch (reason) {
    case 'parameter-bound':
      return `reached ${p} = ${formatValue(end?.value ?? b.last ?? NaN, parameterDigits)}`;
    case 'monitor-bound': {
      if (end) {
        for (const s of prepared.settings.stopWhen) {
          const v = end.monitors[s.monitor];
          if (v === undefined) continue;
          const last = `last point: ${s.monitor} = ${formatValue(v, monitorDigits)}`;
          if (s.above !== undefined && v >= s.above) return `${s.monitor} went above ${formatValue(s.above, monitorDigits)} (${last})`;
          if (s.below !== undefined && v <= s.below) return `${s.monitor} went below ${formatValue(s.below, monitorDigits)} (${last})`;
        }
      }
      return stopReasonText[reason];
    }
    case 'point-limit':
      return `reached the point limit (${prepared.settings.maxPoints})`;
    case 'mode-change':
      // the special point before says which modes and which curve goes on
      return 'at the mode change';
    case 'bogdanov-takens':
      // the special point before says where
      return 'at the Bogdanov–Takens point, where ω = 0 and the Hopf curve meets the fold curve';
    default: {
      const text = curveOnlyStopText(reason) ?? stopReasonText[reason as keyof typeof stopReasonText] ?? reason;
      return b.message && b.message !== text ? `${text} (${b.message})` : text;
    }
  }
}

function originText(b: BranchRecord, prepared: PreparedCase): string {
  const p = prepared.settings.parameter;
  const mode = b.mode ? `, mode ${b.mode.join(', ')}` : '';
  if (b.follow !== undefined) {
    const what = `${curveName(b.follow)}${mode}`;
    if (b.origin.kind === 'mode-change') return `${what}, from the mode change at ${p} = ${formatValue(b.origin.value, parameterDigits)} on curve ${b.origin.branch}`;
    if (b.origin.kind === 'start' && b.origin.at === 'bogdanov-takens') return `${what}, from the Bogdanov–Takens point, ω growing from 0`;
    return `${what}, ${p} ${b.origin.kind === 'start' && b.origin.direction === 'decrease' ? 'decreasing' : 'increasing'} from the first point`;
  }
  if (b.origin.kind === 'start') return `from the start, ${p} ${b.origin.direction === 'increase' ? 'increasing' : 'decreasing'}`;
  if (b.origin.kind === 'mode-change') return `from the mode change at ${p} = ${formatValue(b.origin.value, parameterDigits)}`;
  const dir = b.origin.direction === 'increase' ? `, ${p} increasing` : b.origin.direction === 'decrease' ? `, ${p} decreasing` : '';
  return `from the branch point at ${p} = ${formatValue(b.origin.value, parameterDigits)} on branch ${b.origin.branch}${dir}`;
}

/** One line per branch, in words. */
export function branchLines(result: RunResult, prepared: PreparedCase): string[] {
  const lines: string[] = [];
  for (const b of result.ledger.branches) {
    const specials = result.ledger.specials.filter((s) => s.branch === b.id && s.kind !== 'end');
    const end = result.ledger.specials.find((s) => s.branch === b.id && s.kind === 'end');
    const parts = [`${b.points} point${b.points === 1 ? '' : 's'}`];
    for (const s of specials.slice(0, namedPerBranch)) parts.push(specialText(s, prepared));
    if (specials.length > namedPerBranch) parts.push(`${specials.length - namedPerBranch} more special points (see points.json)`);
    if (specials.length === 0 && b.points > 0) parts.push(b.follow !== undefined ? 'no codimension-two point' : 'no fold or branch point');
    parts.push(`ended: ${endText(b, end, prepared)}`);
    lines.push(`${b.follow !== undefined ? 'Curve' : 'Branch'} ${b.id} (${originText(b, prepared)}): ${parts.join(', ')}`);
    if (b.stability?.length) lines.push(`  stability: ${stabilityText(b.stability, prepared.settings.parameter)}`);
    if (b.criticality?.length) lines.push(`  criticality: ${criticalityText(b.criticality, prepared.settings.parameter)}`);
  }
  return lines;
}

/** Stretches of equal stability in words, e.g. "stable for lambda 0.05 → 1.888; 1 unstable eigenvalue for lambda 1.888 → 0.004". */
function stabilityText(stretches: NonNullable<BranchRecord['stability']>, parameter: string): string {
  const shown = stretches.slice(0, 6).map((s) => {
    const what = s.stable === true ? 'stable' : s.unstable > 0 ? `${s.unstable} unstable eigenvalue${s.unstable === 1 ? '' : 's'}` : 'stability not certified';
    const range = s.from === s.to ? `at ${parameter} = ${formatValue(s.from, monitorDigits)}` : `for ${parameter} ${formatValue(s.from, monitorDigits)} → ${formatValue(s.to, monitorDigits)}`;
    return `${what} ${range}`;
  });
  if (stretches.length > 6) shown.push(`${stretches.length - 6} more changes (see the CSV)`);
  return shown.join('; ');
}

/** Stretches of equal criticality on a Hopf curve, e.g. "supercritical for k 0.0625 → 0.0352; subcritical for k 0.0352 → 0.02". */
function criticalityText(stretches: NonNullable<BranchRecord['criticality']>, parameter: string): string {
  const shown = stretches.slice(0, 6).map((s) => {
    const range = s.from === s.to ? `at ${parameter} = ${formatValue(s.from, monitorDigits)}` : `for ${parameter} ${formatValue(s.from, monitorDigits)} → ${formatValue(s.to, monitorDigits)}`;
    return `${s.criticality} ${range}`;
  });
  if (stretches.length > 6) shown.push(`${stretches.length - 6} more changes (see the CSV)`);
  return `${shown.join('; ')} (the sign of the first Lyapunov coefficient)`;
}

function seconds(s: number): string {
  if (s < 60) return `${s.toFixed(s < 10 ? 2 : 1)} s`;
  const m = Math.floor(s / 60);
  if (m < 60) return `${m} min ${Math.round(s - 60 * m)} s`;
  return `${Math.floor(m / 60)} h ${m % 60} min`;
}

/** The whole stdout summary (ends with a newline). */
export function formatSummary(result: RunResult, prepared: PreparedCase, cwd = process.cwd()): string {
  const d = prepared.problem.describe();
  const grid = d.axes.map((a) => a.intervals).join('x');
  const h = d.axes.map((a) => formatValue(a.h, 6)).join(', ');
  const out: string[] = [];
  out.push(`Case ${prepared.case.name}: ${d.summary}`);
  const curve = prepared.curve?.settings;
  const what = curve ? `the ${curve.follow === 'hopf' ? 'Hopf points' : curve.follow.replace(/-/g, ' ')} followed in ${curve.parameter} over [${curve.bounds.map((v) => formatValue(v, parameterDigits)).join(', ')}], ${curve.free} free` : `continuation in ${prepared.settings.parameter} over [${prepared.settings.bounds.map((v) => formatValue(v, parameterDigits)).join(', ')}]`;
  out.push(`  grid ${grid} intervals (h = ${h}), ${prepared.problem.size} unknowns; ${what}`);
  out.push(...branchLines(result, prepared));
  const status =
    result.status === 'finished'
      ? `Finished in ${seconds(result.seconds)}.`
      : result.status === 'stopped'
        ? `Stopped on request after ${seconds(result.seconds)}; the files hold everything computed so far.`
        : `Run failed after ${seconds(result.seconds)}: ${result.failure ?? 'unknown reason'}`;
  out.push(status);
  const where = relative(cwd, result.directory) || '.';
  const shown = where.startsWith('..') ? result.directory : where;
  const nBranches = result.ledger.branches.length;
  const files = ['run.json', 'points.json'];
  if (existsSync(join(result.directory, 'points.csv'))) files.push('points.csv');
  if (nBranches) files.push(nBranches === 1 ? `branches/${result.ledger.branches[0].id}.csv` : `branches/ (${nBranches} files)`);
  if (result.ledger.solutions) files.push(`solutions/ (${result.ledger.solutions} .npy file${result.ledger.solutions === 1 ? '' : 's'})`);
  // the pictures drawn at the end of the run (src/run/plots.ts)
  if (existsSync(join(result.directory, 'diagram.svg'))) files.push('diagram.svg');
  const pictures = existsSync(join(result.directory, 'plots')) ? readdirSync(join(result.directory, 'plots')).filter((f) => f.endsWith('.svg')).length : 0;
  if (pictures) files.push(`plots/ (${pictures} .svg file${pictures === 1 ? '' : 's'})`);
  out.push(`Files in ${shown}: ${files.join(', ')}`);
  if (result.ledger.warnings.length) {
    out.push(`${result.ledger.warnings.length} warning${result.ledger.warnings.length === 1 ? '' : 's'} (listed in run.json)${result.ledger.warnings.length > shownWarnings ? `, the first ${shownWarnings}` : ''}:`);
    for (const w of result.ledger.warnings.slice(0, shownWarnings)) out.push(`  ${w}`);
  }
  if (prepared.caution) out.push(`Caution: ${prepared.caution}`);
  return out.join('\n') + '\n';
}
