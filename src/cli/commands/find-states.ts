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
import { type PreparedFindCase, prepareFindCase } from '../../run/find-states-case.js';
import { type FindOptions, findDirectory, findStates } from '../../run/find-states.js';
import { prepareFindResume } from '../../run/find-states-resume.js';
import { findJson, formatFindSummary } from '../../run/find-states-summary.js';
import type { CodeModelChoice } from '../../run/resume-code.js';
import { logView } from '../../run/progress.js';
import { toJson } from '../../run/writers.js';
import { resumeHint, stopOnSignals } from './run.js';

/**
 * Run (or resume) a search here, with the stop signals of runs (run.ts `stopOnSignals`): the first
 * SIGINT/SIGTERM ends the current solve (or the current step of a trace), writes the checkpoint
 * and stops with every state kept; a second leaves at once (exit 130), run.json marked stopped.
 */
async function findSession(prepared: PreparedFindCase, outDir: string, options: Omit<FindOptions, 'outDir' | 'signal' | 'log'>, quiet: boolean, json: boolean, { io, setExit }: CommandContext): Promise<void> {
  const say = (level: 'info' | 'warning', message: string): void => {
    if (level === 'warning' || !quiet) io.err(`branchline: ${level === 'warning' ? 'warning: ' : ''}${message}\n`);
  };
  const view = logView(say);
  const stop = stopOnSignals(io, () => view);
  try {
    const result = await findStates(prepared, {
      ...options,
      outDir,
      signal: stop.signal,
      log: say,
    });
    io.out(json ? toJson(findJson(result)) : formatFindSummary(result, prepared) + resumeHint({ status: result.status, directory: outDir }));
    setExit(result.status === 'finished' && result.states.length > 0 ? 0 : 1);
  } finally {
    stop.release();
  }
}

/** `branchline resume DIR` for a search for steady states (called by the resume command). */
export async function resumeFind(dirGiven: string, opts: { force?: boolean; quiet?: boolean; json?: boolean }, context: CommandContext, code: CodeModelChoice = {}): Promise<void> {
  const plan = await prepareFindResume(dirGiven, { force: opts.force === true, code });
  try {
    const r = plan.resume;
    if (!opts.quiet) {
      for (const s of r?.skipped ?? []) context.io.err(`branchline: warning: ${s}; using ${r!.file}\n`);
      if (r) {
        const search = (r.checkpoint.engine as { search: { states: unknown[]; solves: unknown[]; done: boolean } }).search;
        context.io.err(`branchline: resuming the search ${plan.prepared.case.name} (was ${r.previousStatus}) from ${r.file} written ${r.checkpoint.written}: ${search.solves.length} solves, ${search.states.length} states${search.done ? ', the search done' : ''}${r.trace ? `; the trace of state ${r.trace.state} (${r.trace.direction}) goes on from its checkpoint` : ''}\n`);
      } else context.io.err(`branchline: starting the search ${plan.prepared.case.name} over from the case recorded in run.json (was ${plan.restart!.previousStatus}; it ended before its first checkpoint)\n`);
    }
    await findSession(plan.prepared, plan.outDir, { lock: plan.lock, ...(plan.resume ? { resume: plan.resume } : {}), ...(plan.restart ? { restart: plan.restart } : {}) }, opts.quiet === true, opts.json === true, context);
  } catch (e) {
    // the files disagree with the checkpoint (a file cut short or replaced by hand)
    if (e instanceof InputError) throw e;
    throw new InputError(`${dirGiven}: cannot resume: ${e instanceof Error ? e.message : String(e)}`);
  } finally {
    plan.resume?.trace?.lock.release();
    plan.lock.release();
  }
}

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
Checkpoints: after every solve and every trace (checkpoint.bin; a trace keeps its own);
Ctrl-C or SIGTERM ends the current solve and stops (again: leave at once); branchline resume DIR
goes on and ends with the files of a search never interrupted.
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
      await findSession(prepared, outDir, { force: opts.force === true, trace }, opts.quiet === true, opts.json === true, { io, setExit });
    });
}
