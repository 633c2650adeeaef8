/**
 * The `branchline` command line. Thin: parses arguments, calls the library, prints. No numerics.
 * Exit codes: 0 ok, 1 a run failed, 2 bad input.
 */
import { Command, CommanderError } from 'commander';
import { plateDemo } from '../run/linear-demo.js';

export class InputError extends Error {
  override name = 'InputError';
}

function buildProgram(): Command {
  const program = new Command();
  program
    .name('branchline')
    .description('Trace steady states of discretised PDEs through folds and branch points, with stability.')
    .exitOverride()
    .configureOutput({ writeErr: (s) => process.stderr.write(s) });

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
      process.stdout.write(
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

/** Run the CLI; returns the exit code. */
export async function main(argv: string[]): Promise<number> {
  const program = buildProgram();
  try {
    await program.parseAsync(argv);
    return 0;
  } catch (e) {
    if (e instanceof CommanderError) {
      return e.exitCode === 0 ? 0 : 2;
    }
    if (e instanceof InputError) {
      process.stderr.write(`branchline: ${e.message}\n`);
      return 2;
    }
    const message = e instanceof Error ? e.message : String(e);
    process.stderr.write(`branchline: ${message}\n`);
    return 1;
  }
}
