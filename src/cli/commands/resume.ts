import { existsSync } from 'node:fs';
import { join, resolve } from 'node:path';
import type { Command } from 'commander';
import { formatStudySummary, resumeStudy } from '../../refine/study.js';
import type { CommandContext } from '../io.js';
import { type ResumePlan, outcomeOf, prepareResume, runSession } from '../../run/batch.js';
import type { PreparedCase } from '../../run/case.js';
import type { FolderLock } from '../../run/lock.js';
import { InputError } from '../../run/errors.js';
import { progressView } from '../../run/progress.js';
import { formatSummary } from '../../run/summary.js';
import { toJson } from '../../run/writers.js';
import { jsonSummary } from '../../run/batch.js';
import { studyLog, studySignals } from './refine.js';
import { coresHelp, onTerminal, parseCores, resumeHint, stopOnSignals } from './run.js';
import { resumeSettle } from './settle.js';
import { resumeFind } from './find-states.js';
import { runKind } from '../../run/start.js';

/** `branchline resume DIR`: continue a stopped or killed run from its last checkpoint. */
export function registerResume(program: Command, { io, setExit }: CommandContext): void {
  program
    .command('resume')
    .description('continue a stopped or killed run (or time integration, or search for steady states) from its last checkpoint, in its own folder; or a refinement study (its unfinished grids, then the analysis)')
    .argument('<dir>', 'the run folder (holding run.json and checkpoint.bin), or a study folder (holding refine.json)')
    .option('--force', 'take the folder over from a writer on another host that cannot be checked from here (never from a live process on this machine)')
    .option('--case <file>', 'the case file the run was made from: the code model it names is loaded (a run folder alone never loads code)')
    .option('--load-code-model', "load the code model the run's checkpoint names (its path is printed first)")
    .option('--cores <n>', coresHelp)
    .option('--quiet', 'no progress and no log lines on stderr, only warnings')
    .option('--json', 'print a machine-readable summary (JSON) on stdout instead of the text summary')
    .addHelpText(
      'after',
      `
The branch files are cut back to the last checkpoint (checkpoint.bin, or checkpoint.previous.bin
when the newest one is damaged) and the run goes on from there; it ends with the same files as a
run that was never interrupted. A checkpoint that is incomplete or damaged is never read.
A run folder is data: a run (or study) of a code model resumes only with --case FILE (the case
file naming the module) or --load-code-model.
Ctrl-C or SIGTERM: the current step is finished, a checkpoint written, the run marked stopped.
A run that ended before its first checkpoint starts over from the case recorded in run.json.
A refinement study: finished grids are kept, stopped or killed ones resume from their
checkpoints, grids not started yet run; then refine.csv, refine.json and refine.svg are redone.
A search for steady states (find-states) goes on with the solve after its last checkpoint, or
with the trace under way from that trace's checkpoint; its state files must hold the
checkpoint's states exactly.
Exit codes: 0 the run finished; 1 it failed or was stopped again; 2 the folder holds no run,
a finished run, a run another process is writing, or no usable checkpoint.`,
    )
    .action(async (dirGiven: string, opts: { force?: boolean; case?: string; loadCodeModel?: boolean; quiet?: boolean; json?: boolean; cores?: string }) => {
      const code = {
        ...(opts.case !== undefined ? { caseFile: opts.case } : {}),
        loadCodeModel: opts.loadCodeModel === true,
        notice: (text: string) => io.err(`branchline: ${text}\n`),
      };
      const abs = resolve(dirGiven);
      if (existsSync(join(abs, 'refine.json')) && !existsSync(join(abs, 'run.json'))) {
        // a refinement study: its unfinished grids go on, then the analysis is redone
        const stop = studySignals(io);
        try {
          const result = await resumeStudy(dirGiven, { signal: stop.signal, log: studyLog(io, opts.quiet === true), ...(opts.force ? { force: true } : {}), code });
          io.out(formatStudySummary(result));
          setExit(result.status === 'finished' ? 0 : 1);
        } finally {
          stop.release();
        }
        return;
      }
      if (runKind(dirGiven) === 'settle') return resumeSettle(dirGiven, opts, { io, setExit }, code);
      if (runKind(dirGiven) === 'find-states') return resumeFind(dirGiven, opts, { io, setExit }, code);
      const { prepared, outDir, plan, lock } = await prepareResume(dirGiven, { force: opts.force === true, code });
      try {
        await resumeHere(prepared, outDir, plan, lock, dirGiven, opts);
      } finally {
        lock.release();
      }
    });

  async function resumeHere(prepared: PreparedCase, outDir: string, plan: ResumePlan, lock: FolderLock, dirGiven: string, opts: { quiet?: boolean; json?: boolean; cores?: string }): Promise<void> {
    const view = progressView({ tty: onTerminal(io), quiet: opts.quiet === true, write: io.err, showNames: false });
    for (const s of plan.skipped) view.log(undefined, 'warning', `${s}; using ${plan.file}`);
    const c = plan.checkpoint;
    if (c) view.log(undefined, 'info', `resuming ${prepared.case.name} (was ${plan.previousStatus}) from ${plan.file} written ${c.written}: ${c.ledger.points} points on ${c.ledger.branches.length} branch${c.ledger.branches.length === 1 ? '' : 'es'}`);
    else view.log(undefined, 'info', `starting ${prepared.case.name} over from the case recorded in run.json (was ${plan.previousStatus}; it ended before its first checkpoint)`);
    const stop = stopOnSignals(io, () => view);
    let result;
    try {
      result = await runSession(prepared, { outDir, signal: stop.signal, view, name: prepared.case.name, resume: plan, lock, cores: parseCores(opts.cores) });
    } catch (e) {
      // the files disagree with the checkpoint (a branch file cut short or replaced by hand)
      if (e instanceof InputError) throw e;
      throw new InputError(`${dirGiven}: cannot resume: ${e instanceof Error ? e.message : String(e)}`);
    } finally {
      view.close();
      stop.release();
    }
    const outcome = outcomeOf({ prepared, outDir }, result);
    if (opts.json) io.out(toJson(jsonSummary([outcome])));
    else io.out(formatSummary(result, prepared) + resumeHint(outcome));
    setExit(result.status === 'finished' ? 0 : 1);
  }
}
