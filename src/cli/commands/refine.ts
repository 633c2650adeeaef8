import type { Command } from 'commander';
import type { CommandContext } from '../io.js';
import { resolve } from 'node:path';
import { caseDocument, prepareCase } from '../../run/case.js';
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

/** `branchline refine CASE --grids 32,64,128`: a grid-refinement study of a special point. */
export function registerRefine(program: Command, { io, setExit }: CommandContext): void {
  const command = program
    .command('refine')
    .description('run a case on a sequence of grids and show that a special point is grid-converged: values, observed order, Richardson-extrapolated value with an error estimate (refine.csv, refine.json, refine.svg)')
    .argument('<case>', 'case file (YAML or JSON)')
    .requiredOption('--grids <list>', 'intervals along the first axis, e.g. 32,64,128 (every axis is scaled alike; any ratios)')
    .option('--point <which>', `the special point: ${pointSpecAccepted} (default: the first fold)`)
    .option('--branch <k>', 'the branch the point lies on (default 1; curve runs: the curve on which the point appears)')
    .option('--jobs <n>', 'grids run side by side in this many processes (default 1)')
    .option('--expected-order <p>', 'formal order of the discretisation, checked against the observed one (default 2; none for code models)')
    .option('--out <dir>', 'study folder (default runs/<case name>-refine)')
    .option('--force', 'replace an earlier study in a non-empty output folder')
    .option('--quiet', 'no progress lines on stderr');
  addClusterOptions(command)
    .addHelpText('after', '\nSlurm (--slurm): the grids go to Slurm as one job array; the study folder (--out) holds the grid runs and the job\'s files (slurm/); `branchline collect DIR` waits for a job submitted with --no-wait and analyses it.')
    .action(async (file: string, opts: ClusterOptions & { grids: string; point?: string; branch?: string; jobs?: string; expectedOrder?: string; out?: string; force?: boolean; quiet?: boolean }) => {
      const grids = wholeNumbers(opts.grids, '--grids');
      let point;
      if (opts.point !== undefined) {
        point = parsePointSpec(opts.point);
        if (!point) throw new InputError(`--point '${opts.point}' is not accepted (accepted: ${pointSpecAccepted})`);
        if (point.kind === 'end') throw new InputError(`--point '${opts.point}': the end of a branch is where it was stopped, not a property of the problem (accepted: fold, branch-point or hopf, with :N; for curve runs also cusp, bogdanov-takens, fold-branch-point, mode-change, mode-crossing)`);
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
      const controller = new AbortController();
      let interrupts = 0;
      const onSignal = (signal: NodeJS.Signals): void => {
        interrupts++;
        if (interrupts > 1) {
          io.err(`branchline: second ${signal}: leaving at once\n`);
          process.exit(130);
        }
        if (executor) io.err(`branchline: ${signal}: no longer waiting; the job goes on in Slurm (collect it later with: branchline collect ${outDir})\n`);
        else io.err(`branchline: ${signal}: finishing the current steps and writing the files (again to leave at once)\n`);
        controller.abort();
      };
      process.on('SIGINT', onSignal);
      process.on('SIGTERM', onSignal);
      try {
        const result = await runStudy(prepared, {
          grids,
          outDir,
          ...(executor ? { executor } : {}),
          ...(point ? { point } : {}),
          ...(branch !== undefined ? { branch } : {}),
          ...(jobs !== undefined ? { jobs } : {}),
          ...(expectedOrder !== undefined ? { expectedOrder } : {}),
          ...(opts.force ? { force: true } : {}),
          signal: controller.signal,
          log: (level, message) => {
            if (level === 'warning' || !opts.quiet) io.err(`branchline: ${level === 'warning' ? 'warning: ' : ''}${message}\n`);
          },
        });
        if (result.status === 'submitted') {
          submittedLines(io, executor?.submission, outDir);
          setExit(0);
        } else {
          io.out(formatStudySummary(result));
          setExit(result.status === 'finished' ? 0 : 1);
        }
      } finally {
        process.off('SIGINT', onSignal);
        process.off('SIGTERM', onSignal);
      }
    });
}
