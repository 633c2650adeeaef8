import type { Command } from 'commander';
import type { CommandContext, Io } from '../io.js';
import { leaveAtOnce } from '../../run/leave.js';
import { machineCores, parseCores, twoStageSignals } from './run.js';
import { resolve } from 'node:path';
import { caseDocument, prepareCase } from '../../run/case.js';
import { sideBySideUnknowns } from '../../run/branch-helpers.js';
import { InputError } from '../../run/errors.js';
import { parsePointSpec, pointSpecAccepted } from '../../run/start.js';
import { formatStudySummary, runStudy } from '../../refine/study.js';
import { SlurmExecutor } from '../../slurm/job.js';
import { type ClusterOptions, addClusterOptions, clusterSettings, submittedLines } from './cluster.js';

function wholeNumbers(text: string, what: string): number[] {
  const parts = text.split(',').map((s) => s.trim());
  const out = parts.map((s) => Number(s));
  if (parts.some((s) => !/^\d+$/.test(s))) {
    throw new InputError(`${what} '${text}' is not accepted (accepted: whole numbers separated by commas, e.g. 32,64,128)`);
  }
  return out;
}

function positiveInteger(text: string, what: string): number {
  if (!/^\d+$/.test(text.trim()) || Number(text) < 1) throw new InputError(`${what} '${text}' is not accepted (accepted: a whole number of at least 1)`);
  return Number(text);
}

/** Log lines of a study on stderr (warnings only with `quiet`). */
export function studyLog(io: Io, quiet: boolean): (level: 'info' | 'warning', message: string) => void {
  return (level, message) => {
    if (level === 'warning' || !quiet) io.err(`branchline: ${level === 'warning' ? 'warning: ' : ''}${message}\n`);
  };
}

/**
 * SIGINT/SIGTERM during a study: the first finishes the current steps and writes the files (or,
 * `onFirst`, whatever else the first signal does: stop waiting for a scheduler); a second leaves
 * at once, with refine.json and the runs marked `stopped` (resume goes on).
 */
export function studySignals(io: Io, onFirst = 'finishing the current steps and writing the files (again to leave at once)'): { signal: AbortSignal; release: () => void } {
  return twoStageSignals(
    (signal) => io.err(`branchline: ${signal}: ${onFirst}\n`),
    (signal) => {
      io.err(`branchline: second ${signal}: leaving at once; \`branchline resume DIR\` goes on from the checkpoints\n`);
      leaveAtOnce(`left at once on a second ${signal}; resume goes on from the checkpoints`);
      process.exit(130);
    },
  );
}

/** `branchline refine CASE --grids 32,64,128`: a grid-refinement study of a special point. */
export function registerRefine(program: Command, { io, setExit }: CommandContext): void {
  const command = program
    .command('refine')
    .description('run a case on a sequence of grids and show that a special point is grid-converged: values, observed order, Richardson-extrapolated value with an error estimate (refine.csv, refine.json, refine.svg)')
    .argument('<case>', 'case file (YAML or JSON)')
    .requiredOption('--grids <list>', 'intervals along the first axis, e.g. 32,64,128 (every axis is scaled alike; any ratios)')
    .option('--point <which>', `the special point: ${pointSpecAccepted} (default: the first fold)`)
    .option('--branch <k>', 'the branch the point lies on (default 1; curve runs: the curve on which the point appears)')
    .option('--cores <n>', `processor cores the study may use: up to n grids run side by side, each in its own process (default: this machine's cores, ${machineCores()} here, when the second-largest grid has at least ${sideBySideUnknowns} unknowns, else 1; the files are the same for any number)`)
    .option('--jobs <n>', 'grids run side by side in this many processes (overrides --cores)')
    .option('--expected-order <p>', 'formal order of the discretisation, checked against the observed one (default 2; none for code models)')
    .option('--out <dir>', 'study folder (default runs/<case name>-refine)')
    .option('--force', "replace an earlier study (finished, stopped or half-written) in a non-empty output folder: only the study's own files are removed")
    .option('--quiet', 'no progress lines on stderr');
  addClusterOptions(command)
    .addHelpText('after', '\nSlurm (--slurm): the grids go to Slurm as one job array; the study folder (--out) holds the grid runs and the job\'s files (slurm/); `branchline collect DIR` waits for a job submitted with --no-wait and analyses it.')
    .action(async (file: string, opts: ClusterOptions & { grids: string; point?: string; branch?: string; jobs?: string; cores?: string; expectedOrder?: string; out?: string; force?: boolean; quiet?: boolean }) => {
      const grids = wholeNumbers(opts.grids, '--grids');
      let point;
      if (opts.point !== undefined) {
        point = parsePointSpec(opts.point);
        if (!point) throw new InputError(`--point '${opts.point}' is not accepted (accepted: ${pointSpecAccepted})`);
        if (point.kind === 'end') throw new InputError(`--point '${opts.point}': the end of a branch is where it was stopped, not a property of the problem (accepted: fold, branch-point or hopf, with :N; for curve runs also cusp, bogdanov-takens, fold-branch-point, mode-change, mode-crossing, zero-hopf, bautin, double-hopf)`);
      }
      const branch = opts.branch !== undefined ? positiveInteger(opts.branch, '--branch') : undefined;
      const jobs = opts.jobs !== undefined ? positiveInteger(opts.jobs, '--jobs') : undefined;
      let expectedOrder: number | null | undefined;
      if (opts.expectedOrder !== undefined) {
        const t = opts.expectedOrder.trim().toLowerCase();
        expectedOrder = t === 'none' ? null : Number(t);
        if (expectedOrder !== null && !(Number.isFinite(expectedOrder) && expectedOrder > 0)) {
          throw new InputError(`--expected-order '${opts.expectedOrder}' is not accepted (accepted: a positive number, or none)`);
        }
      }
      const prepared = await prepareCase(file);
      const settings = clusterSettings(opts, [prepared]);
      if (settings && jobs !== undefined) throw new InputError('--jobs runs grids side by side on this machine; with --slurm each grid is its own task (leave --jobs out)');
      if (settings && opts.cores !== undefined) throw new InputError('--cores runs grids side by side on this machine; with --slurm each grid is its own task (leave --cores out)');
      // grids side by side (one process each): as many as --cores says, or by default as the
      // machine has where the grids are large enough to share (runStudy decides)
      const cores = settings ? undefined : parseCores(opts.cores);
      const sideBySide = jobs ?? (typeof cores === 'number' ? Math.min(cores, grids.length) : undefined);
      const outDir = opts.out !== undefined ? resolve(opts.out) : resolve('runs', `${prepared.case.name}-refine`);
      const executor = settings
        ? new SlurmExecutor({
            collection: outDir,
            kind: 'refine',
            context: {
              case: caseDocument(prepared.case),
              label: prepared.label,
              baseDir: prepared.baseDir,
              ...(prepared.file !== undefined ? { file: prepared.file } : {}),
              grids,
              ...(point ? { point } : {}),
              ...(branch !== undefined ? { branch } : {}),
              ...(expectedOrder !== undefined ? { 'expected-order': expectedOrder } : {}),
            },
            settings,
            wait: opts.wait !== false,
            force: opts.force === true,
          })
        : undefined;
      const stop = studySignals(io, executor ? `no longer waiting; the job goes on in Slurm (collect it later with: branchline collect ${outDir})` : undefined);
      try {
        const result = await runStudy(prepared, {
          grids,
          outDir,
          ...(executor ? { executor } : {}),
          ...(point ? { point } : {}),
          ...(branch !== undefined ? { branch } : {}),
          ...(sideBySide !== undefined ? { jobs: sideBySide } : cores === 'auto' ? { cores: machineCores() } : {}),
          ...(expectedOrder !== undefined ? { expectedOrder } : {}),
          ...(opts.force ? { force: true } : {}),
          signal: stop.signal,
          log: studyLog(io, opts.quiet === true),
        });
        if (result.status === 'submitted') {
          submittedLines(io, executor?.submission, outDir);
          setExit(0);
        } else {
          io.out(formatStudySummary(result));
          setExit(result.status === 'finished' ? 0 : 1);
        }
      } finally {
        stop.release();
      }
    });
}
