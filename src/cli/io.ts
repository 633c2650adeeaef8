import { printable } from '../run/errors.js';

/** Output channels of the CLI (stdout for results, stderr for logs), replaceable in tests. */
export interface Io {
  out: (s: string) => void;
  err: (s: string) => void;
}

/**
 * The process's streams. Control characters are shown as escapes (`printable`): values from case
 * files, run folders and code models reach these lines and must not act on the user's terminal.
 */
export const processIo: Io = { out: (s) => process.stdout.write(printable(s)), err: (s) => process.stderr.write(printable(s)) };

/** What every command registration receives. */
export interface CommandContext {
  io: Io;
  /** Set the process exit code (0 ok, 1 a run failed or stopped, 2 bad input). */
  setExit: (code: number) => void;
}
