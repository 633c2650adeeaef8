/**
 * Output folders before anything is written: whether a folder can be created and written, and
 * why not, in words (a read-only file system, no permission, a symbolic link to nothing, a file
 * in the way) — so that `run`, `resume` and `refine` refuse such a folder up front with exit
 * code 2 instead of failing half-way. Also the creation of a folder, with the same causes named.
 *
 * The test is `access(W_OK | X_OK)` on the folder or, when it does not exist yet, on its nearest
 * existing parent: it reports a read-only mount (EROFS) for every user, root included, and a
 * folder the user may not write (EACCES) for everyone but root (whom the mode bits do not stop).
 */
import { accessSync, constants, lstatSync, mkdirSync, readlinkSync, rmdirSync, statSync } from 'node:fs';
import { dirname } from 'node:path';
import { InputError } from './errors.js';

function code(e: unknown): string | undefined {
  return (e as NodeJS.ErrnoException).code;
}

/** The cause of an errno in words, for a folder `where`. */
export function causeText(e: unknown, where: string): string {
  switch (code(e)) {
    case 'EROFS':
      return `${where} is on a read-only file system`;
    case 'EACCES':
    case 'EPERM':
      return `no permission to write in ${where}${ownerText(where)}`;
    case 'ENOSPC':
      return `the file system of ${where} is full`;
    case 'EDQUOT':
      return `the disk quota for ${where} is used up`;
    case 'ENOTDIR':
      return `${where} is a file, not a folder`;
    case 'ENAMETOOLONG':
      return `the path ${where} is too long`;
    case 'ELOOP':
      return `${where} is a loop of symbolic links`;
    default:
      return `${where}: ${code(e) ?? (e as Error).message}`;
  }
}

function ownerText(where: string): string {
  try {
    const s = statSync(where);
    return ` (owned by user ${s.uid}, mode ${(s.mode & 0o777).toString(8)}; this process runs as user ${process.getuid?.() ?? 'unknown'})`;
  } catch {
    return '';
  }
}

/**
 * Why the folder `path` cannot be created or written (undefined when it can). `what` names it in
 * the message (`output folder`, `study folder`, `run folder`).
 */
export function folderWriteProblem(path: string, what = 'output folder'): string | undefined {
  // the folder itself, or its nearest existing parent
  let p = path;
  for (;;) {
    let isLink = false;
    try {
      isLink = lstatSync(p).isSymbolicLink();
    } catch (e) {
      if (code(e) === 'ENOENT' && dirname(p) !== p) {
        p = dirname(p);
        continue;
      }
      if (code(e) === 'ENOTDIR') return `${what} ${path} cannot be created: ${firstFile(p)} is a file, not a folder`;
      return `${what} ${path} cannot be used: ${causeText(e, p)}`;
    }
    if (isLink) {
      try {
        statSync(p);
      } catch (e) {
        let target = '?';
        try {
          target = readlinkSync(p);
        } catch {
          /* unreadable */
        }
        if (code(e) === 'ENOENT') return `${what} ${path} cannot be created: ${p} is a symbolic link to ${target}, which does not exist`;
        return `${what} ${path} cannot be used: ${causeText(e, p)}`;
      }
    }
    break;
  }
  if (!statSync(p).isDirectory()) {
    return p === path ? `${what} ${path} exists and is a file, not a folder` : `${what} ${path} cannot be created: ${p} is a file, not a folder`;
  }
  try {
    accessSync(p, constants.W_OK | constants.X_OK);
  } catch (e) {
    return `${what} ${path} cannot be ${p === path ? 'written' : 'created'}: ${causeText(e, p)}`;
  }
  return undefined;
}

/** The first existing non-folder on the way to `p`. */
function firstFile(p: string): string {
  let q = p;
  while (dirname(q) !== q) {
    try {
      if (!statSync(q).isDirectory()) return q;
    } catch {
      /* not there: look higher */
    }
    q = dirname(q);
  }
  return p;
}

/**
 * Create the folder `path` (and its parents) unless it exists; InputError naming the cause when
 * it cannot be created or written. Returns the first folder created here, if any (so that a
 * refusal that follows can remove what was made with `removeIfEmpty`).
 */
export function makeFolder(path: string, what = 'output folder'): string | undefined {
  const problem = folderWriteProblem(path, what);
  if (problem) throw new InputError(problem);
  try {
    return mkdirSync(path, { recursive: true });
  } catch (e) {
    throw new InputError(`${what} ${path} cannot be created: ${causeText(e, path)}`);
  }
}

/** Remove `path` and its parents up to `made` (what makeFolder created) while they are empty. */
export function removeIfEmpty(path: string, made: string = path): void {
  for (let p = path; ; p = dirname(p)) {
    try {
      rmdirSync(p);
    } catch {
      return; // not empty, or gone
    }
    if (p === made || dirname(p) === p) return;
  }
}
