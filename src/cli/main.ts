/**
 * The `branchline` command line. Thin: parses arguments, calls the library, prints. No numerics.
 * Exit codes: 0 ok, 1 a run failed (or was stopped before its end), 2 bad input.
 * Results go to stdout; log lines and errors go to stderr, one line each, never a stack trace.
 */
import { Command, CommanderError } from 'commander';
import { modelCatalogue, prepareCase } from '../run/case.js';
import { InputError } from '../run/errors.js';
import { plateDemo } from '../run/linear-demo.js';
import { outputDirectory, runCase } from '../run/run-case.js';
import { formatSummary } from '../run/summary.js';
import { softwareVersion } from '../run/version.js';

export { InputError };

interface Io {
  out: (s: string) => void;
  err: (s: string) => void;
}

const processIo: Io = { out: (s) => process.stdout.write(s), err: (s) => process.stderr.write(s) };

function buildProgram(io: Io, setExit: (code: number) => void): Command {
  const program = new Command();
  program
    .name('branchline')
    .description('Trace steady states of discretised PDEs through folds and branch points, with stability.')
    .version(softwareVersion().version, '--version', 'print the version')
    .exitOverride()
    .configureOutput({ writeErr: io.err, writeOut: io.out });

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

  program
    .command('models')
    .description('list the built-in models with their parameters, defaults and case-file keys')
    .action(() => {
      const lines: string[] = ['Models (the id goes in a case file as `model: <id>`; a code model is `model: ./file.mjs`):', ''];
      for (const m of modelCatalogue()) {
        lines.push(`${m.id}  (${m.dimensions.map((d) => `${d}D`).join(', ')})`);
        lines.push(`  ${m.description}`);
        if (m.parameters.length) {
          lines.push(`  parameters: ${m.parameters.map((p) => `${p.name} = ${p.default}`).join(', ')}`);
          for (const p of m.parameters) lines.push(`    ${p.name}: ${p.description}`);
        } else {
          lines.push('  parameters: declared in the case file (parameters: {name: default, ...})');
        }
        for (const o of m.options) {
          lines.push(`  key ${o.name}: ${o.choices ? `${o.choices.join(' | ')} (default ${o.choices[0]}); ` : ''}${o.description}`);
        }
        if (m.caution) lines.push(`  caution: ${m.caution}`);
        lines.push('');
      }
      io.out(lines.join('\n'));
    });

  program
    .command('demo')
    .description('solve a 2D steady heat-conduction demo with the sparse direct solver')
    .option('--intervals <n>', 'grid intervals per axis', '200')
    .action((opts: { intervals: string }) => {
      const intervals = Number(opts.intervals);
      if (!Number.isInteger(intervals) || intervals < 2 || intervals > 2000) {
        throw new InputError(`--intervals: '${opts.intervals}' is not an integer from 2 to 2000`);
      }
      const r = plateDemo(intervals);
      io.out(
        [
          'Steady temperature of a heated square plate (demo scenario: 1 m plate, edges at 0 °C,',
          'conductivity 50 W/(m K), uniform source 10 kW/m³), solved with the sparse LU.',
          `  grid: ${intervals}x${intervals} intervals, ${r.unknowns} unknowns, ${(r.factorEntries / 1e6).toFixed(2)} M entries in the factors`,
          `  centre temperature: ${r.centreTemperature.toFixed(4)} °C`,
          `  relative residual: ${r.relativeResidual.toExponential(2)}`,
          `  time: ${r.seconds.toFixed(2)} s`,
          '',
        ].join('\n'),
      );
    });
  return program;
}

/** Run the CLI (argv as in process.argv: node, script, arguments...); returns the exit code. */
export async function main(argv: string[], io: Io = processIo): Promise<number> {
  let code = 0;
  const program = buildProgram(io, (c) => (code = c));
  try {
    await program.parseAsync(argv);
    return code;
  } catch (e) {
    if (e instanceof CommanderError) {
      return e.exitCode === 0 ? 0 : 2;
    }
    if (e instanceof InputError) {
      io.err(`branchline: ${e.message}\n`);
      return 2;
    }
    const message = e instanceof Error ? e.message : String(e);
    io.err(`branchline: ${message.split('\n')[0]}\n`);
    return 1;
  }
}
