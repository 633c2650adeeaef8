/**
 * What `branchline settle` prints on stdout when an integration ends: the case, how it ended in
 * words (steady — with the Newton polish and the stability when asked for —, oscillating with its
 * period, still changing, blown up, failed, stopped), the final monitors, the linear-algebra
 * counts, the files, how to trace the state on, and the model's caution. Also the --json form.
 */
import { existsSync, readdirSync } from 'node:fs';
import { join, relative } from 'node:path';
import { stabilityWords } from '../dynamics/stability.js';
import { outcomeText } from '../dynamics/types.js';
import type { PreparedSettleCase } from './settle-case.js';
import type { SettleResult } from './settle.js';
import { formatValue } from './summary.js';

function seconds(s: number): string {
  if (s < 60) return `${s.toFixed(s < 10 ? 2 : 1)} s`;
  const m = Math.floor(s / 60);
  return m < 60 ? `${m} min ${Math.round(s - 60 * m)} s` : `${Math.floor(m / 60)} h ${m % 60} min`;
}

function shownPath(dir: string, cwd: string): string {
  const r = relative(cwd, dir) || '.';
  return r.startsWith('..') ? dir : r;
}

/** The stdout summary (ends with a newline). */
export function formatSettleSummary(result: SettleResult, prepared: PreparedSettleCase, cwd = process.cwd()): string {
  const d = prepared.problem.describe();
  const out: string[] = [];
  out.push(`Case ${prepared.case.name}: ${d.summary}`);
  out.push(
    `  grid ${d.axes.map((a) => a.intervals).join('x')} intervals (h = ${d.axes.map((a) => formatValue(a.h, 6)).join(', ')}), ${prepared.problem.size} unknowns; ` +
      `time integration (variable-step BDF2) from ${prepared.start?.from ?? "the model's initial guess"}, to t = ${formatValue(prepared.time.end, 6)} at most`,
  );
  const counts = result.record.counts as Record<string, number> | undefined;
  const o = result.outcome;
  if (o) out.push(`${outcomeText(o).replace(/^./, (c) => c.toUpperCase())}.`);
  if (result.stability) out.push(`  The steady state is ${stabilityWords(result.stability)}.`);
  if (result.stability?.stable === false) {
    out.push('  The state stayed at this unstable steady state to the limit: start from it with noise on top (start: {run: DIR, point: final}, initial: {noise: ...}) to follow where the dynamics goes.');
  }
  const final = result.record.final as { monitors?: Record<string, number> } | undefined;
  if (final?.monitors) {
    const shown = Object.entries(final.monitors)
      .slice(0, 6)
      .map(([k, v]) => `${k} = ${formatValue(v, 5)}`);
    out.push(`  final state: ${shown.join(', ')}`);
  }
  if (counts) {
    const numeric = counts.factorisations + counts.refactorisations;
    out.push(
      `  ${counts.steps} steps (${counts.rejected} rejected), ${counts['newton-iterations']} Newton iterations, ${numeric} factorisations (${counts.refactorisations} with kept pivots)` +
        (numeric > 0 && counts.steps > 0 ? `: one per ${formatValue(counts.steps / numeric, 3)} steps` : ''),
    );
  }
  out.push(
    result.status === 'finished'
      ? `Finished in ${seconds(result.seconds)}.`
      : result.status === 'stopped'
        ? `Stopped on request after ${seconds(result.seconds)}; the files hold everything computed so far.`
        : `Integration failed after ${seconds(result.seconds)}: ${result.failure ?? 'unknown reason'}`,
  );
  const dir = result.directory;
  const files = ['run.json', 'monitors.csv'];
  if (existsSync(join(dir, 'monitors.svg'))) files.push('monitors.svg');
  const snaps = existsSync(join(dir, 'snapshots')) ? readdirSync(join(dir, 'snapshots')).filter((f) => f.endsWith('.npy')).length : 0;
  if (snaps) files.push(`snapshots/ (${snaps} .npy file${snaps === 1 ? '' : 's'})`);
  if (existsSync(join(dir, 'solutions', 'final.npy'))) files.push('solutions/final.npy');
  const pictures = existsSync(join(dir, 'plots')) ? readdirSync(join(dir, 'plots')).filter((f) => f.endsWith('.svg')).length : 0;
  if (pictures) files.push(`plots/ (${pictures} .svg file${pictures === 1 ? '' : 's'})`);
  out.push(`Files in ${shownPath(dir, cwd)}: ${files.join(', ')}`);
  if (o?.kind === 'steady') out.push(`To trace it in a parameter: start: {run: ${shownPath(dir, cwd)}, point: final} in a case for branchline run.`);
  if (result.status === 'stopped') out.push(`To continue: branchline resume ${shownPath(dir, cwd)}`);
  const warnings = result.record.warnings as string[] | undefined;
  if (warnings?.length) out.push(`${warnings.length} warning${warnings.length === 1 ? '' : 's'} (listed in run.json).`);
  if (prepared.caution) out.push(`Caution: ${prepared.caution}`);
  return out.join('\n') + '\n';
}

/** The --json summary. */
export function settleJson(result: SettleResult, prepared: PreparedSettleCase): Record<string, unknown> {
  return {
    name: prepared.case.name,
    'case-file': prepared.file ?? null,
    directory: result.directory,
    status: result.status,
    ...(result.failure ? { reason: result.failure } : {}),
    ...(result.outcome ? { outcome: { ...result.outcome, text: outcomeText(result.outcome) } } : {}),
    ...(result.record.final ? { final: result.record.final } : {}),
    ...(result.record.counts ? { counts: result.record.counts } : {}),
    seconds: result.seconds,
  };
}
