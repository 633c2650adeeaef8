/**
 * Reading the files users and run folders hand us: case files, code models, `start.solution`,
 * run.json, points.json, refine.json, checkpoints, branch CSVs and `.npy` solutions.
 *
 * Only regular files are read (a symbolic link is followed, and what it points to must be a
 * regular file): `/dev/zero` or `/dev/urandom` would grow the process until it is killed, and a
 * FIFO would block for ever. The file is opened without blocking (a FIFO opens at once), checked
 * with fstat on the open descriptor (no race with a rename in between), and never read past a
 * limit stated in the message — also when the file grows while it is read.
 *
 * Errors are plain Errors naming the file; the callers add the field or the command.
 */
import { closeSync, constants, fstatSync, openSync, readSync, type Stats } from 'node:fs';

const MiB = 1024 ** 2;

/** Case files: a long expression model is a few kilobytes. */
export const caseFileLimit = 1 * MiB;
/** Code models (a JavaScript module). */
export const codeModelLimit = 16 * MiB;
/** run.json, points.json, refine.json. */
export const jsonFileLimit = 64 * MiB;
/** Branch CSV files read back whole (plots): the longest string JavaScript holds is about 512 MiB. */
export const csvFileLimit = 512 * MiB;
/** Checkpoints: the engine state of the largest grids we accept. */
export const checkpointFileLimit = 2048 * MiB;
/** `.npy` files whose grid is not known in advance (a run's own solutions, when plotting). */
export const npyFileLimit = 2048 * MiB;
/** Room for a `.npy` header besides the data (the format pads the header to 64 bytes; 64 KiB is plenty). */
export const npyHeaderAllowance = 64 * 1024;

/** `2.5 GiB`, `64 MiB`, `12 KiB`, `300 bytes`. */
export function sizeText(bytes: number): string {
  if (bytes >= 1024 ** 3) return `${Number((bytes / 1024 ** 3).toFixed(1))} GiB`;
  if (bytes >= MiB) return `${Number((bytes / MiB).toFixed(1))} MiB`;
  if (bytes >= 1024) return `${Number((bytes / 1024).toFixed(1))} KiB`;
  return `${bytes} bytes`;
}

function kind(st: Stats): string {
  if (st.isDirectory()) return 'a folder';
  if (st.isCharacterDevice()) return 'a character device';
  if (st.isBlockDevice()) return 'a block device';
  if (st.isFIFO()) return 'a FIFO (named pipe)';
  if (st.isSocket()) return 'a socket';
  return 'an odd file';
}

/** An error about a file, with the system's error code when there is one (ENOENT, EACCES...). */
export class FileReadError extends Error {
  override name = 'FileReadError';
  constructor(
    readonly path: string,
    /** What is wrong, without the path (`no such file`, `a FIFO (named pipe), not a regular file ...`). */
    readonly reason: string,
    readonly code?: string,
  ) {
    super(`${path}: ${reason}`);
  }
}

/** Open `path` for reading without blocking and check that it is a regular file; the caller closes it. */
function openRegular(path: string): { fd: number; st: Stats } {
  let fd: number;
  try {
    fd = openSync(path, constants.O_RDONLY | constants.O_NONBLOCK | constants.O_NOCTTY);
  } catch (e) {
    throw readError(path, e);
  }
  const st = fstatSync(fd);
  if (!st.isFile()) {
    closeSync(fd);
    throw new FileReadError(path, `${kind(st)}, not a regular file (accepted: a regular file)`);
  }
  return { fd, st };
}

function readError(path: string, e: unknown): FileReadError {
  const code = (e as NodeJS.ErrnoException).code;
  return new FileReadError(path, code === 'ENOENT' ? 'no such file' : `cannot be read (${code ?? (e as Error).message})`, code);
}

/**
 * The bytes of the regular file `path`, at most `limit` of them. `what` names the file's role in
 * messages (`a case file`, `a checkpoint`). FileReadError when the path is missing, not a regular
 * file, or longer than `limit`.
 */
export function readRegularFile(path: string, limit: number, what: string): Buffer {
  const { fd, st } = openRegular(path);
  try {
    const tooLong = (): FileReadError => new FileReadError(path, `larger than the ${sizeText(limit)} accepted for ${what}`);
    if (st.size > limit) throw tooLong();
    // read to the end (the size can change under us), never past the limit
    const chunks: Buffer[] = [];
    let total = 0;
    for (;;) {
      const chunk = Buffer.allocUnsafe(Math.min(Math.max(st.size - total, 64 * 1024), limit + 1 - total));
      let got: number;
      try {
        got = readSync(fd, chunk, 0, chunk.length, null);
      } catch (e) {
        throw readError(path, e);
      }
      if (got === 0) break;
      chunks.push(got === chunk.length ? chunk : chunk.subarray(0, got));
      total += got;
      if (total > limit) throw tooLong();
    }
    return chunks.length === 1 ? chunks[0] : Buffer.concat(chunks, total);
  } finally {
    closeSync(fd);
  }
}

/** The text (UTF-8) of a regular file of at most `limit` bytes (see readRegularFile). */
export function readTextFile(path: string, limit: number, what: string): string {
  return readRegularFile(path, limit, what).toString('utf8');
}

/** The first `bytes` bytes of a regular file (fewer when it is shorter); FileReadError as readRegularFile. */
export function readFileStart(path: string, bytes: number): Buffer {
  const { fd } = openRegular(path);
  try {
    const out = Buffer.alloc(bytes);
    let total = 0;
    while (total < bytes) {
      const got = readSync(fd, out, total, bytes - total, null);
      if (got === 0) break;
      total += got;
    }
    return out.subarray(0, total);
  } finally {
    closeSync(fd);
  }
}

/** Why `path` cannot be read (missing, unreadable, not a regular file), or undefined when it can. */
export function notRegularFile(path: string): string | undefined {
  try {
    closeSync(openRegular(path).fd);
    return undefined;
  } catch (e) {
    return (e as Error).message;
  }
}
