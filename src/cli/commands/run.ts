import type { Command } from 'commander';
import type { CommandContext } from '../io.js';
import { prepareCase } from '../../run/case.js';
import { outputDirectory, runCase } from '../../run/run-case.js';
import { formatSummary } from '../../run/summary.js';

/** `branchline run CASE`: trace a case and write its run directory. */
export function registerRun(program: Command, { io, setExit }: CommandContext): void {
  program
    .command('run')
    .description('trace the steady states of a case file and write a run directory (run.json, points.json, branches/*.csv, solutions/*.npy)')
    .argument('<case>', 'case file (YAML or JSON)')
    .option('--out <dir>', "output folder (default: the case's output.directory, else runs/<case name>)")
    .option('--force', 'replace an earlier run in a non-empty output folder (only a folder holding a branchline run)')
    .option('--quiet', 'no progress log lines on stderr')
    .action(async (file: string, opts: { out?: string; force?: boolean; quiet?: boolean }) => {
      // everything is checked (and the problem built) before the output folder is touched
      const prepared = await prepareCase(file);
      const controller = new AbortController();
      let interrupts = 0;
      const onSignal = (signal: NodeJS.Signals): void => {
        interrupts++;
        if (interrupts > 1) {
          io.err(`branchline: second ${signal}: leaving at once\n`);
          process.exit(130);
        }
        io.err(`branchline: ${signal}: finishing the current step and writing the files (again to leave at once)\n`);
        controller.abort();
      };
      process.on('SIGINT', onSignal);
      process.on('SIGTERM', onSignal);
      try {
        const result = await runCase(prepared, {
          outDir: outputDirectory(prepared, opts.out),
          ...(opts.force ? { force: true } : {}),
          signal: controller.signal,
          log: opts.quiet
            ? (level, message) => {
                if (level === 'warning') io.err(`branchline: warning: ${message}\n`);
              }
            : (level, message) => io.err(`branchline: ${level === 'warning' ? 'warning: ' : ''}${message}\n`),
        });
        io.out(formatSummary(result, prepared));
        setExit(result.status === 'finished' ? 0 : 1);
      } finally {
        process.off('SIGINT', onSignal);
        process.off('SIGTERM', onSignal);
      }
    });

}
