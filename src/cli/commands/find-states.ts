/**
 * `branchline find-states CASE`: several steady states at the case's parameters by deflated
 * Newton from the case's guesses (src/run/find-states.ts); optionally each state traced as a
 * branch. Thin: no numerics here.
 */
import type { Command } from 'commander';
import type { CommandContext } from '../io.js';
import { outputFolderProblem } from '../../run/batch.js';
import { ownCodeModel, prepareCaseObject } from '../../run/case.js';
import { InputError } from '../../run/errors.js';
import { prepareFindCase } from '../../run/find-states-case.js';
import { findDirectory, findStates } from '../../run/find-states.js';
import { findJson, formatFindSummary } from '../../run/find-states-summary.js';
import { toJson } from '../../run/writers.js';
import { onStopSignals } from './run.js';

export function registerFindStates(program: Command, { io, setExit }: CommandContext): void {
  program
    .command('find-states')
    .description('find several steady states at the case\'s parameter values by deflated Newton from its guesses (search: section); writes each state, a table and pictures; --trace follows every state as a branch, all in one diagram')
    .argument('<case>', 'a case file (YAML or JSON), with search: {guesses: [...]} (each guess as initial: takes it)')
    .option('--out <dir>', "output folder (default: the case's output.directory, else runs/<case name>)")
    .option('--force', 'replace an earlier run in a non-empty output folder (only a folder holding a branchline run)')
    .option('--trace', "trace every state found in both directions with the case's continuation: section (as search: {trace: true})")
    .option('--quiet', 'no log lines on stderr, only warnings')
    .option('--json', 'print a machine-readable summary (JSON) on stdout instead of the text summary')
    .addHelpText(
      'after',
      `
Method: deflated Newton (Farrell, Birkisson & Funke 2015). Newton's method on
G(u) = η(u) F(u), η(u) = Π_i (1/d(u, r_i)^p + σ) over the states r_i found so far
(search.deflation: power p, default 1.5; shift σ, default 1; d the root-mean-square distance,
modulo translation along periodic axes unless translation: false). Each guess is solved again
after every new state; the search ends when every guess fails with every state deflated, or at
search.max-states or search.max-solves.
Files: run.json, states.csv (one row per state: monitors, stability, how many solves ended at
it), solves.csv (one row per solve), solutions/state-K.npy, plots/state-K.svg; with --trace
traces/state-K-increase/ and traces/state-K-decrease/ (complete runs) and diagram.svg.
Exit codes: 0 finished with at least one state; 1 no state found, failed or stopped; 2 bad input.`,
    )
    .action(async (file: string, opts: { out?: string; force?: boolean; trace?: boolean; quiet?: boolean; json?: boolean }) => {
      const prepared = await prepareFindCase(file);
      const trace = opts.trace === true || prepared.case.search.trace;
      if (trace && prepared.case.continuation === undefined) throw new InputError(`${prepared.label}: --trace needs a continuation: section (the parameter, bounds and steps of the traces)`);
      if (trace) {
        // the traces' case is checked before anything is written (a bad continuation: is one line)
        await prepareCaseObject({ ...prepared.raw, search: undefined }, { label: prepared.label, baseDir: prepared.baseDir, ...ownCodeModel(prepared.case) });
      }
      const outDir = findDirectory(prepared, opts.out);
      const folder = outputFolderProblem(outDir, opts.force === true);
      if (folder) throw new InputError(folder);
      const controller = new AbortController();
      const release = onStopSignals((signal) => {
        io.err(`branchline: ${signal}: finishing the current solve and stopping\n`);
        controller.abort();
      });
      try {
        const result = await findStates(prepared, {
          outDir,
          force: opts.force === true,
          trace,
          signal: controller.signal,
          log: (level, message) => {
            if (level === 'warning' || !opts.quiet) io.err(`branchline: ${level === 'warning' ? 'warning: ' : ''}${message}\n`);
          },
        });
        io.out(opts.json ? toJson(findJson(result)) : formatFindSummary(result, prepared));
        setExit(result.status === 'finished' && result.states.length > 0 ? 0 : 1);
      } finally {
        release();
      }
    });
}
