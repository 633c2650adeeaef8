/**
 * The `branchline` command line. Thin: parses arguments, calls the library, prints. No numerics.
 * Exit codes: 0 ok, 1 a run failed (or was stopped before its end), 2 bad input.
 * Results go to stdout; log lines and errors go to stderr, one line each, never a stack trace.
 */
import { Command, CommanderError } from 'commander';
import { InputError, printable } from '../run/errors.js';
import { softwareVersion } from '../run/version.js';
import { commands } from './commands/index.js';
import { type Io, processIo } from './io.js';

export { InputError };

function buildProgram(io: Io, setExit: (code: number) => void): Command {
  const program = new Command();
  program
    .name('branchline')
    .description('Trace steady states of discretised PDEs through folds and branch points, with stability.')
    .version(softwareVersion().version, '--version', 'print the version')
    .exitOverride()
    .configureOutput({ writeErr: io.err, writeOut: io.out });
  for (const register of commands) register(program, { io, setExit });
  return program;
}

/** Run the CLI (argv as in process.argv: node, script, arguments...); returns the exit code. */
export async function main(argv: string[], given: Io = processIo): Promise<number> {
  let code = 0;
  // every line the command prints shows control characters as escapes (processIo does it itself)
  const io: Io = given === processIo ? given : { out: (s) => given.out(printable(s)), err: (s) => given.err(printable(s)) };
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
