import type { Command } from 'commander';
import type { CommandContext } from '../io.js';
import { type EntryReport, type JacobianCheckReport, checkJacobian } from '../../problem/check.js';
import type { UnknownLocation } from '../../problem/problem.js';
import { type PreparedCase, prepareCaseObject, readCaseFile } from '../../run/case.js';
import { prepareSettleCaseObject } from '../../run/settle-case.js';
import { checkCurveCase } from '../../continuation/curves/check.js';
import { curveName } from '../../continuation/curves/types.js';
import { InputError } from '../../run/errors.js';
import { formatValue } from '../../run/summary.js';
import { toJson } from '../../run/writers.js';

const shown = 8;

function where(loc: UnknownLocation | undefined): string {
  if (!loc) return '';
  return loc.kind === 'extra' ? ` (${loc.name})` : ` (${loc.field} at node ${loc.node.join(', ')})`;
}

function entryLine(e: EntryReport): string {
  return (
    `  row ${e.row}${where(e.rowLocation)}, column ${e.column}${where(e.columnLocation)}: analytic ${formatValue(e.analytic, 8)}, ` +
    `finite difference ${formatValue(e.finiteDifference, 8)}, relative error ${e.relativeError.toExponential(1)}${e.inPattern ? '' : ' (the pattern has no such entry)'}`
  );
}

function reportLines(r: JacobianCheckReport, parameter: string): string[] {
  const lines: string[] = [];
  const j = r.jacobian;
  lines.push(
    `Jacobian: ${j.passed ? 'agrees' : 'disagrees'} — largest relative error ${j.maxRelativeError.toExponential(1)} over ${r.storedEntries} stored entries` +
      (j.passed ? '' : `; ${j.failureCount} entr${j.failureCount === 1 ? 'y differs' : 'ies differ'}${j.missingCount ? ` (${j.missingCount} missing from the pattern)` : ''}`),
  );
  if (!j.passed) {
    lines.push(`  worst entries:`);
    for (const e of j.failures.slice(0, shown)) lines.push('  ' + entryLine(e));
    if (j.failures.length > shown) lines.push(`    ... and ${j.failureCount - shown} more`);
    if (j.unresolvedRows.length) lines.push(`  rows whose wrong column could not be pinned down: ${j.unresolvedRows.slice(0, 10).join(', ')}`);
  } else if (j.worst.length) {
    lines.push(`  closest to the tolerance:`);
    for (const e of j.worst.slice(0, 3)) lines.push('  ' + entryLine(e));
  }
  for (const p of r.parameters) {
    const mark = p.name === parameter ? ' (the continuation parameter)' : '';
    lines.push(`derivative in ${p.name}${mark}: ${p.passed ? 'agrees' : 'disagrees'} — largest relative error ${p.maxRelativeError.toExponential(1)}`);
    if (!p.passed) {
      for (const e of p.worst.slice(0, shown)) {
        lines.push(`    row ${e.row}${where(e.rowLocation)}: analytic ${formatValue(e.analytic, 8)}, finite difference ${formatValue(e.finiteDifference, 8)}, relative error ${e.relativeError.toExponential(1)}`);
      }
    }
  }
  for (const s of r.secondOrder) {
    lines.push(
      `${s.what}: ${s.passed ? 'agrees' : 'differs'} — relative error ${s.relativeError.toExponential(1)}` +
        (s.passed ? '' : ' (used for branch switching only; rounding limits this comparison on fine grids of stiff operators: repeat the check on a coarser grid to tell a wrong derivative from rounding)'),
    );
  }
  return lines;
}

/** The curve-system line of a curve case (the check itself: src/continuation/curves/check.ts). */
function checkCurveSystem(prepared: PreparedCase): { kind: string; passed: boolean; line: string; 'jacobian-error'?: number; 'solve-error'?: number } {
  const settings = prepared.curve!.settings;
  const kind = curveName(settings.follow);
  const r = checkCurveCase(prepared.problem, prepared.params, settings, prepared.start?.u);
  if ('error' in r) return { kind, passed: false, line: `${kind} system: not checked — ${r.error}` };
  const what =
    settings.follow === 'fold'
      ? 'F = 0 and the bordered null-vector condition'
      : settings.follow === 'hopf'
        ? 'F = 0 and the complex bordered condition for a pair ±iω, ω an unknown'
        : 'the uniform state and the bordered null-vector condition';
  return {
    kind,
    passed: r.passed,
    'jacobian-error': r.jacobianError,
    'solve-error': r.solveError,
    line: `${kind} system (${what}, in ${settings.parameter} and ${settings.free}): ${r.passed ? 'agrees' : 'disagrees'} — linearisation against differences ${r.jacobianError.toExponential(1)}, bordered solve ${r.solveError.toExponential(1)} (relative)`,
  };
}

/** The verdict: the Jacobian and the parameter derivatives (what every Newton step uses). */
export function derivativesAgree(r: JacobianCheckReport): boolean {
  return r.jacobian.passed && r.parameters.every((p) => p.passed);
}

function parseTolerance(text: string | undefined): number {
  if (text === undefined) return 1e-6;
  const t = Number(text);
  if (!(t > 0 && t < 1)) throw new InputError(`--tolerance: '${text}' is not accepted (accepted: a number between 0 and 1, e.g. 1e-6)`);
  return t;
}

/** `branchline check CASE`: validate a case and compare its derivatives with finite differences. */
export function registerCheck(program: Command, { io, setExit }: CommandContext): void {
  program
    .command('check')
    .description("check a case file and compare the model's Jacobian and parameter derivatives with finite differences at the start point")
    .argument('<case>', 'case file (YAML or JSON)')
    .option('--tolerance <t>', 'largest accepted relative error per entry (default 1e-6)')
    .option('--json', 'print the full comparison as JSON on stdout')
    .addHelpText(
      'after',
      `
The comparison is made at the case's start parameter values and the model's initial state,
perturbed a little so that no term vanishes by accident; every stored Jacobian entry (and any
entry the sparsity pattern lacks) and the derivative in every parameter are compared with
central differences, and the worst entries are named by row, column and grid node.
Second derivatives, when the model supplies them, are compared too and reported (they serve
branch switching only and do not decide the exit code). For a curve case (continuation.follow)
the augmented system is checked as well: its linearisation against central differences, and
its bordered solve against that linearisation, at the start state.
Exit codes: 0 the Jacobian and parameter derivatives agree; 1 they do not (or the model breaks
its contract); 2 the case file is bad.`,
    )
    .action(async (file: string, opts: { tolerance?: string; json?: boolean }) => {
      const tolerance = parseTolerance(opts.tolerance);
      // a case for settle (no continuation: section) is checked as well as one for run
      const { raw, opts: readOptions } = readCaseFile(file);
      const withContinuation = raw !== null && typeof raw === 'object' && (raw as Record<string, unknown>).continuation !== undefined;
      const prepared = withContinuation ? await prepareCaseObject(raw, readOptions) : await prepareSettleCaseObject(raw, readOptions);
      const { problem, params } = prepared;
      const parameter = 'settings' in prepared ? prepared.settings.parameter : '';
      const d = problem.describe();
      let report: JacobianCheckReport;
      try {
        report = checkJacobian(problem, { parameters: params, tolerance });
      } catch (e) {
        // the model breaks the Problem contract (lengths, pattern, non-finite values)
        io.err(`branchline: ${file}: ${e instanceof Error ? e.message.split('\n')[0] : String(e)}\n`);
        setExit(1);
        return;
      }
      // curve runs: the augmented system's linearisation too (src/continuation/curves/check.ts)
      const curve = 'curve' in prepared && prepared.curve ? checkCurveSystem(prepared) : undefined;
      const agree = derivativesAgree(report) && (curve?.passed ?? true);
      if (opts.json) {
        io.out(toJson({ case: prepared.case.name, 'case-file': prepared.file ?? null, parameters: params, agree, report, ...(curve ? { curve } : {}) }));
      } else {
        const lines = [
          `Case ${prepared.case.name}: ${d.summary}`,
          `  ${problem.size} unknowns; checked at ${Object.entries(params)
            .map(([k, v]) => `${k} = ${formatValue(v, 10)}`)
            .join(', ')} and the initial state (slightly perturbed), tolerance ${formatValue(tolerance, 3)}`,
          ...reportLines(report, parameter),
          ...(curve ? [curve.line] : []),
          ...(curve && !curve.passed && derivativesAgree(report)
            ? [`The ${curve.kind} system disagrees with finite differences although the model's derivatives agree: its second derivatives (F_uu, F_up) are the suspects, or the start state is too close to a second singularity.`]
            : []),
          derivativesAgree(report)
            ? 'The Jacobian and the parameter derivatives agree with finite differences.'
            : 'The derivatives disagree with finite differences: fix the entries named above (a wrong Jacobian slows Newton down or stops it, and misplaces folds and branch points).',
        ];
        io.out(lines.join('\n') + '\n');
      }
      setExit(agree ? 0 : 1);
    });
}
