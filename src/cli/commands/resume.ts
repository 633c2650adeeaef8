import type { Command } from 'commander';
import type { CommandContext } from '../io.js';
import { outcomeOf, prepareResume, runSession } from '../../run/batch.js';
import { InputError } from '../../run/errors.js';
import { progressView } from '../../run/progress.js';
import { formatSummary } from '../../run/summary.js';
import { toJson } from '../../run/writers.js';
import { jsonSummary } from '../../run/batch.js';
import { onTerminal, resumeHint, stopOnSignals } from './run.js';
import { resumeSettle } from './settle.js';
import { runKind } from '../../run/start.js';

/** `branchline resume DIR`: continue a stopped or killed run from its last checkpoint. */
export function registerResume(program: Command, { io, setExit }: CommandContext): void {
  program
    .command('resume')
    .description('continue a stopped or killed run (or time integration) from its last checkpoint, in its own folder')
    .argument('<dir>', 'the run folder (holding run.json and checkpoint.bin)')
    .option('--force', 'resume even though run.json names a live process as the run\'s writer (when that process is not branchline)')
    .option('--quiet', 'no progress and no log lines on stderr, only warnings')
    .option('--json', 'print a machine-readable summary (JSON) on stdout instead of the text summary')
    .addHelpText(
      'after',
      `
The branch files are cut back to the last checkpoint (checkpoint.bin, or checkpoint.previous.bin
when the newest one is damaged) and the run goes on from there; it ends with the same files as a
run that was never interrupted. A checkpoint that is incomplete or damaged is never read.
Ctrl-C or SIGTERM: the current step is finished, a checkpoint written, the run marked stopped.
Exit codes: 0 the run finished; 1 it failed or was stopped again; 2 the folder holds no run,
a finished run, or no usable checkpoint.`,
    )
    .action(async (dirGiven: string, opts: { force?: boolean; quiet?: boolean; json?: boolean }) => {
      if (runKind(dirGiven) === 'settle') return resumeSettle(dirGiven, opts, { io, setExit });
      const { prepared, outDir, plan } = await prepareResume(dirGiven, { force: opts.force === true });
      const view = progressView({ tty: onTerminal(io), quiet: opts.quiet === true, write: io.err, showNames: false });
      for (const s of plan.skipped) view.log(undefined, 'warning', `${s}; using ${plan.file}`);
      const c = plan.checkpoint;
      view.log(undefined, 'info', `resuming ${prepared.case.name} (was ${plan.previousStatus}) from ${plan.file} written ${c.written}: ${c.ledger.points} points on ${c.ledger.branches.length} branch${c.ledger.branches.length === 1 ? '' : 'es'}`);
      const stop = stopOnSignals(io, () => view);
      let result;
      try {
        result = await runSession(prepared, { outDir, signal: stop.signal, view, name: prepared.case.name, resume: plan });
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
    });
}
