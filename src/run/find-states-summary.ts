/**
 * What `branchline find-states` prints on stdout when a search ends: the case, the method (the
 * deflation operator, its power and shift), a table of the states found (monitors, stability,
 * how many solves ended at each), how the solves went, the traces, the files, and the model's
 * caution. Also the --json form.
 */
import { existsSync } from 'node:fs';
import { join, relative } from 'node:path';
import { searchEndText } from '../deflation/search.js';
import type { PreparedFindCase } from './find-states-case.js';
import { type FindResult, methodText } from './find-states.js';
import { formatValue } from './summary.js';

function shownPath(dir: string, cwd: string): string {
  const r = relative(cwd, dir) || '.';
  return r.startsWith('..') ? dir : r;
}

/** Columns of text, right-aligned but the last. */
function table(rows: string[][]): string[] {
  const widths = rows[0].map((_, j) => Math.max(...rows.map((r) => r[j].length)));
  return rows.map((r) => `  ${r.map((c, j) => (j === r.length - 1 ? c : c.padStart(widths[j]))).join('  ')}`.trimEnd());
}

/** The stdout summary (ends with a newline). */
export function formatFindSummary(result: FindResult, prepared: PreparedFindCase, cwd = process.cwd()): string {
  const d = prepared.problem.describe();
  const out: string[] = [];
  const at = Object.entries(prepared.params)
    .map(([k, v]) => `${k} = ${formatValue(v, 6)}`)
    .join(', ');
  out.push(`Case ${prepared.case.name}: ${d.summary}`);
  out.push(`  grid ${d.axes.map((a) => a.intervals).join('x')} intervals (h = ${d.axes.map((a) => formatValue(a.h, 6)).join(', ')}), ${prepared.problem.size} unknowns; steady states at ${at}`);
  out.push(`  ${methodText(prepared)}; ${prepared.guesses.length} guess${prepared.guesses.length === 1 ? '' : 'es'}`);
  const n = result.states.length;
  const failed = result.solves.filter((s) => s.outcome === 'failed').length;
  const repeats = result.solves.filter((s) => s.outcome === 'repeat').length;
  out.push(
    `${n} steady state${n === 1 ? '' : 's'} found in ${result.solves.length} solve${result.solves.length === 1 ? '' : 's'} (${failed} ended without a state${repeats ? `, ${repeats} at a state found before` : ''})` +
      (result.endReason ? `; the search ended: ${searchEndText[result.endReason]}.` : '.'),
  );
  if (n > 0) {
    const monitors = prepared.problem.monitors.map((m) => m.name).slice(0, 4);
    const withStability = prepared.settings.stability !== undefined;
    const rows: string[][] = [['state', ...monitors, ...(withStability ? ['unstable'] : []), 'solves', 'found by']];
    for (const s of result.states) {
      const st = s.stability;
      rows.push([
        String(s.id),
        ...monitors.map((m) => formatValue(s.monitors[m], 5)),
        ...(withStability ? [st ? `${st.unstableCount}${st.neutralCount ? ` (+${st.neutralCount} neutral)` : ''}${st.stable === null ? ' ?' : ''}` : '-'] : []),
        String(s.solves),
        `solve ${s.solve}, guess ${s.guess}`,
      ]);
    }
    out.push(...table(rows));
    if (withStability) out.push('  unstable: eigenvalues with positive real part (0: stable); neutral: zero real part (shifts of a pattern); ?: not certified');
  }
  if (result.traces.length) {
    const ok = result.traces.filter((t) => t.status === 'finished').length;
    const folds = result.traces.reduce((a, t) => a + t.folds, 0);
    const bps = result.traces.reduce((a, t) => a + t.branchPoints, 0);
    out.push(`Traced every state both ways: ${result.traces.length} runs (${ok} finished), ${result.traces.reduce((a, t) => a + t.points, 0)} points, ${folds} folds, ${bps} branch points; all branches in diagram.svg.`);
    for (const t of result.traces.filter((x) => x.status !== 'finished')) out.push(`  state ${t.state} (${t.direction}): ${t.status}${t.failure ? `: ${t.failure}` : ''}`);
  }
  out.push(
    result.status === 'finished'
      ? `Finished in ${formatValue(result.seconds, 3)} s.`
      : result.status === 'stopped'
        ? `Stopped on request after ${formatValue(result.seconds, 3)} s; the files hold the states found so far.`
        : `Failed: ${result.failure ?? 'no reason recorded'}.`,
  );
  const dir = result.directory;
  const files = ['run.json', 'states.csv', 'solves.csv', `solutions/ (${n} .npy files)`, `plots/ (${n} .svg files)`, ...(existsSync(join(dir, 'traces')) ? ['traces/'] : []), ...(existsSync(join(dir, 'diagram.svg')) ? ['diagram.svg'] : [])];
  out.push(`Files in ${shownPath(dir, cwd)}: ${files.join(', ')}`);
  if (n > 0 && !result.traces.length) out.push(`To trace a state: start: {solution: ${shownPath(join(dir, 'solutions', 'state-1.npy'), cwd)}} in a case for branchline run, or search: {trace: true} (or --trace) with a continuation: section.`);
  if (prepared.caution) out.push(`Caution: ${prepared.caution}`);
  return out.join('\n') + '\n';
}

/** The --json summary: run.json's content, with the folder. */
export function findJson(result: FindResult): Record<string, unknown> {
  return { directory: result.directory, ...result.record };
}
