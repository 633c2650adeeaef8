/** Output channels of the CLI (stdout for results, stderr for logs), replaceable in tests. */
export interface Io {
  out: (s: string) => void;
  err: (s: string) => void;
}

export const processIo: Io = { out: (s) => process.stdout.write(s), err: (s) => process.stderr.write(s) };

/** What every command registration receives. */
export interface CommandContext {
  io: Io;
  /** Set the process exit code (0 ok, 1 a run failed or stopped, 2 bad input). */
  setExit: (code: number) => void;
}
