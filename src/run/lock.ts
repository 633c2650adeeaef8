/**
 * One writer per folder: an exclusive lock file, `writer.lock`, in a run folder or a refinement
 * study folder, held by the process that writes the folder (`run`, `run --force`, `resume`,
 * `refine`, a batch or study worker) from before it touches anything until it has written its
 * last file.
 *
 * Taking the lock is one atomic step: the writer's identity is written to a temporary file that
 * is then hard-linked to `writer.lock` (link fails when the name exists, so exactly one of any
 * number of processes racing for the folder wins, and the lock never exists half-written); on
 * file systems without hard links, `open(O_CREAT | O_EXCL)` is used instead.
 *
 * The identity (JSON): pid, host name, the machine's boot id and the process's start time (both
 * from /proc on Linux), what the writer does and since when. A lock whose writer is gone is stale
 * and is taken over: the writer is judged alive only when the host is this machine, the boot id
 * is this boot's, a process with that pid exists and it started at the recorded time — so a pid
 * reused after a crash or a reboot is not mistaken for the writer. A lock of another host cannot
 * be judged from here: it is honoured unless the user says otherwise (`resume --force`), or
 * unless the caller can judge it another way: a writer that ran inside a Slurm job records the
 * job's id, and a Slurm task asks the scheduler whether that job has ended (src/slurm/task.ts).
 *
 * Taking over a stale lock goes through a second lock (`writer.lock.break`) so that two processes
 * that both find the same stale lock cannot both remove it and then each take a fresh one (the
 * second would remove the first's live lock).
 *
 * Why not an npm locking package: the well-kept ones judge staleness by the lock's age (its mtime
 * refreshed by a timer), and a writer busy in one long factorisation cannot refresh it in time.
 */
import { closeSync, linkSync, openSync, readFileSync, statSync, unlinkSync, writeSync } from 'node:fs';
import { hostname } from 'node:os';
import { join } from 'node:path';
import { InputError } from './errors.js';

export const lockFile = 'writer.lock';

/** Who holds a lock (the lock file's content). */
export interface WriterIdentity {
  pid: number;
  host: string;
  /** /proc/sys/kernel/random/boot_id of the writer's machine (null where unknown). */
  boot: string | null;
  /** The process's start time in clock ticks since boot (/proc/<pid>/stat field 22; null where unknown). */
  'process-start': string | null;
  /** What the writer does (`run`, `resume`, `refine`, …). */
  purpose: string;
  /** When it took the lock (ISO time). */
  since: string;
  /** The Slurm job the writer ran in ($SLURM_JOB_ID; absent outside Slurm). */
  'slurm-job'?: string;
}

/** Whether a lock's writer is alive: 'alive', 'dead', or 'unknown' (another machine). */
export type Liveness = 'alive' | 'dead' | 'unknown';

let bootCache: string | null | undefined;
function bootId(): string | null {
  if (bootCache === undefined) {
    try {
      bootCache = readFileSync('/proc/sys/kernel/random/boot_id', 'utf8').trim() || null;
    } catch {
      bootCache = null;
    }
  }
  return bootCache;
}

/** A process's start time (clock ticks since boot) from /proc/<pid>/stat; null where unknown or gone. */
export function processStart(pid: number): string | null {
  let text: string;
  try {
    text = readFileSync(`/proc/${pid}/stat`, 'utf8');
  } catch {
    return null;
  }
  // the command name (field 2) is in parentheses and may hold spaces and parentheses itself
  const rest = text.slice(text.lastIndexOf(')') + 2).split(' ');
  // rest[0] is field 3 (state): field 22 (starttime) is rest[19]
  return rest[19] ?? null;
}

function pidExists(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (e) {
    return (e as NodeJS.ErrnoException).code === 'EPERM';
  }
}

let selfCache: Omit<WriterIdentity, 'purpose' | 'since'> | undefined;
/** This process's identity (without purpose and time). */
export function selfIdentity(): Omit<WriterIdentity, 'purpose' | 'since'> {
  const job = process.env.SLURM_JOB_ID;
  selfCache ??= { pid: process.pid, host: hostname(), boot: bootId(), 'process-start': processStart(process.pid), ...(job && /^\d+$/.test(job) ? { 'slurm-job': job } : {}) };
  return selfCache;
}

/** Whether the writer a lock names is alive (see the header). */
export function liveness(w: WriterIdentity): Liveness {
  if (w.host !== hostname()) return 'unknown';
  const boot = bootId();
  if (w.boot !== null && boot !== null && w.boot !== boot) return 'dead';
  if (!pidExists(w.pid)) return 'dead';
  if (w['process-start'] !== null) {
    const start = processStart(w.pid);
    if (start !== null && start !== w['process-start']) return 'dead';
  }
  return 'alive';
}

function parseIdentity(text: string): WriterIdentity | undefined {
  try {
    const v = JSON.parse(text) as Partial<WriterIdentity>;
    if (!v || typeof v !== 'object' || !Number.isInteger(v.pid) || typeof v.host !== 'string') return undefined;
    return {
      pid: v.pid!,
      host: v.host,
      boot: typeof v.boot === 'string' ? v.boot : null,
      'process-start': typeof v['process-start'] === 'string' ? v['process-start'] : null,
      purpose: typeof v.purpose === 'string' ? v.purpose : 'unknown',
      since: typeof v.since === 'string' ? v.since : 'unknown',
      ...(typeof v['slurm-job'] === 'string' && /^\d+$/.test(v['slurm-job']) ? { 'slurm-job': v['slurm-job'] } : {}),
    };
  } catch {
    return undefined;
  }
}

/** The holder of `dir`'s lock as the file says, or undefined when there is no lock file. */
export function readLock(dir: string): { text: string; writer: WriterIdentity | undefined } | undefined {
  let text: string;
  try {
    text = readFileSync(join(dir, lockFile), 'utf8');
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code === 'ENOENT' || (e as NodeJS.ErrnoException).code === 'ENOTDIR') return undefined;
    throw e;
  }
  return { text, writer: parseIdentity(text) };
}

/** The live (or unjudgeable) writer holding `dir`, if any: what the up-front checks refuse. */
export function lockHolder(dir: string): { writer: WriterIdentity; liveness: Exclude<Liveness, 'dead'> } | undefined {
  const lock = readLock(dir);
  if (!lock?.writer) return undefined;
  const l = liveness(lock.writer);
  if (l === 'dead') return undefined;
  if (l === 'alive' && lock.writer.pid === process.pid) return undefined;
  return { writer: lock.writer, liveness: l };
}

/** The holder in words: `process 1234 (resume, since 2024-…) on this machine` / `… on host h`. */
export function holderText(w: WriterIdentity, l: Liveness): string {
  const job = w['slurm-job'] !== undefined ? ` in Slurm job ${w['slurm-job']}` : '';
  return `process ${w.pid} (${w.purpose}, since ${w.since}) ${l === 'unknown' ? `on host ${w.host}${job}, which cannot be checked from here` : `on this machine${job}`}`;
}

/** The folder is held by another writer (an InputError: exit 2, nothing touched). */
export class LockedError extends InputError {
  override name = 'LockedError';
  constructor(
    message: string,
    readonly writer: WriterIdentity,
    readonly liveness: Liveness,
  ) {
    super(message);
  }
}

let tempCounter = 0;

/** An unreadable lock younger than this is being written (only without hard links); older, stale. */
const unreadableGraceMs = 5000;

/** The lock file's modification time (ms); 0 when it is gone. */
function lockAge(path: string): number {
  try {
    return statSync(path).mtimeMs;
  } catch {
    return 0;
  }
}

function sleepSync(ms: number): void {
  Atomics.wait(new Int32Array(new SharedArrayBuffer(4)), 0, 0, ms);
}

/** Create `path` holding `text` only if it does not exist; false when it exists. */
function createExclusive(path: string, text: string): boolean {
  const tmp = `${path}.${process.pid}.${++tempCounter}.tmp`;
  let fd = openSync(tmp, 'wx');
  try {
    writeSync(fd, text);
  } finally {
    closeSync(fd);
  }
  try {
    linkSync(tmp, path);
    return true;
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    if (code === 'EEXIST') return false;
    if (code !== 'EPERM' && code !== 'ENOTSUP' && code !== 'EOPNOTSUPP' && code !== 'ENOSYS' && code !== 'EXDEV') throw e;
    // no hard links here: O_EXCL create (a reader may see the file empty for an instant)
    try {
      fd = openSync(path, 'wx');
    } catch (e2) {
      if ((e2 as NodeJS.ErrnoException).code === 'EEXIST') return false;
      throw e2;
    }
    try {
      writeSync(fd, text);
    } finally {
      closeSync(fd);
    }
    return true;
  } finally {
    try {
      unlinkSync(tmp);
    } catch {
      /* already gone */
    }
  }
}

export interface LockOptions {
  /** What the writer does (shown to a process that finds the folder held). */
  purpose: string;
  /**
   * Take over a lock whose writer runs on another host (it cannot be checked from here): always
   * (true), never (false, the default), or when this judge says that writer is gone.
   */
  takeOverForeign?: boolean | ((w: WriterIdentity) => boolean);
  /** The folder, as the user named it (for messages); default the path. */
  label?: string;
}

/** An exclusive lock on a folder, held by this process until `release()`. */
export class FolderLock {
  private released = false;
  private constructor(
    readonly dir: string,
    readonly path: string,
    private readonly text: string,
  ) {}

  /**
   * Take `dir`'s lock (the folder must exist). A stale lock (dead writer) is taken over; a live
   * writer, or one on another host without `takeOverForeign`, makes this throw LockedError.
   */
  static acquire(dir: string, options: LockOptions): FolderLock {
    const path = join(dir, lockFile);
    const me: WriterIdentity = { ...selfIdentity(), purpose: options.purpose, since: new Date().toISOString() };
    const text = JSON.stringify(me) + '\n';
    for (let attempt = 0; attempt < 400; attempt++) {
      if (createExclusive(path, text)) return new FolderLock(dir, path, text);
      const found = readLock(dir);
      if (!found) continue; // released meanwhile: try again
      const w = found.writer;
      const label = options.label ?? dir;
      if (w) {
        const l = liveness(w);
        if (l === 'alive') {
          const mine = w.pid === process.pid ? ' (this same process)' : '';
          throw new LockedError(`${label}: is being written by ${holderText(w, l)}${mine}; wait for it to end or stop it first`, w, l);
        }
        const takeOver = typeof options.takeOverForeign === 'function' ? options.takeOverForeign(w) : options.takeOverForeign === true;
        if (l === 'unknown' && !takeOver) {
          throw new LockedError(`${label}: is being written by ${holderText(w, l)}; if that process is gone, pass --force to take the folder over`, w, l);
        }
      } else if (Date.now() - lockAge(path) < unreadableGraceMs) {
        // unreadable: being written this instant (file systems without hard links), or left
        // half-written by a process killed while creating it — stale only once it is old
        sleepSync(20);
        continue;
      }
      // stale: its writer is gone (another process may be taking it over this instant: a pause)
      if (!breakStale(dir, found.text)) sleepSync(5);
    }
    throw new InputError(`${options.label ?? dir}: could not take the folder's lock (${path}): other processes keep taking it`);
  }

  /** Remove the lock (only if it is still ours). */
  release(): void {
    if (this.released) return;
    this.released = true;
    if (!this.held()) return;
    try {
      unlinkSync(this.path);
    } catch {
      /* already gone */
    }
  }

  /** Whether the lock file still holds this process's identity. */
  held(): boolean {
    try {
      return readFileSync(this.path, 'utf8') === this.text;
    } catch {
      return false;
    }
  }
}

/**
 * Remove a stale lock whose content was `staleText`, under the break lock, and only if it still
 * holds exactly that content (another process may have taken the folder over meanwhile).
 */
function breakStale(dir: string, staleText: string): boolean {
  const breakPath = join(dir, lockFile + '.break');
  const me = JSON.stringify({ ...selfIdentity(), purpose: 'taking over a stale lock', since: new Date().toISOString() }) + '\n';
  if (!createExclusive(breakPath, me)) {
    // another process is breaking it; if that process died while doing so, its break lock is stale
    let text: string;
    try {
      text = readFileSync(breakPath, 'utf8');
    } catch {
      return false;
    }
    const w = parseIdentity(text);
    if (w && liveness(w) !== 'dead') return false;
    // a dead breaker (or an unreadable break lock): remove it if unchanged, then retry from the top
    try {
      if (readFileSync(breakPath, 'utf8') === text) unlinkSync(breakPath);
    } catch {
      /* gone */
    }
    return false;
  }
  try {
    let now: string | undefined;
    try {
      now = readFileSync(join(dir, lockFile), 'utf8');
    } catch {
      now = undefined;
    }
    if (now === staleText) unlinkSync(join(dir, lockFile));
  } finally {
    try {
      unlinkSync(breakPath);
    } catch {
      /* gone */
    }
  }
  return true;
}

/** Whether `name` (in a locked folder) is a file of the locking itself (never the user's, never the run's). */
export function isLockFile(name: string): boolean {
  return name === lockFile || name === `${lockFile}.break` || /^writer\.lock(\.break)?\.\d+\.\d+\.tmp$/.test(name);
}
