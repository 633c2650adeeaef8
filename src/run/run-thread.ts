/**
 * A run in a worker thread, so that the main thread stays free for signals while the numerics
 * work: a factorisation of a large 3D grid takes minutes, and in one thread SIGINT and SIGTERM
 * would wait for it (the event loop is blocked). Here the main thread keeps the signal handlers,
 * the progress display and the stop protocol; the thread prepares the case again from its
 * resolved document (problems hold functions and cannot be sent), runs `runCase` with a
 * checkpointer, and sends log lines, progress and the result back.
 *
 * The stop protocol: a stop request sets a flag in a SharedArrayBuffer. The thread reads it
 * between steps (the run stops there, as before) and before every factorisation (the step in
 * progress is abandoned and the run stops at the last step it finished; its checkpoint is the
 * last sync point either way, so a resumed run still repeats the uninterrupted one exactly).
 * A second Ctrl-C leaves at once (the CLI exits; the thread goes with the process).
 *
 * The thread runs the same code on the same data as a run in this thread: results and files are
 * the same, bit for bit. Time integrations (`settle`) go the same way (settleCaseInThread): their
 * stop request is read between steps.
 */
import { existsSync, rmSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { Worker } from 'node:worker_threads';
import { type PreparedCase, caseDocument, ownCodeModel } from './case.js';
import type { CheckpointPolicy } from './checkpoint.js';
import { InputError } from './errors.js';
import { onLeaveAtOnce } from './leave.js';
import { type FolderLock, lockFile, readLock } from './lock.js';
import { readRunRecord } from './run-directory.js';
import { writeJsonAtomic } from './writers.js';
import type { RunLog } from './run-events.js';
import type { ProgressInfo } from './run-hooks.js';
import type { ResumeState, RunResult } from './run-case.js';
import { type PreparedSettleCase, settleCaseDocument } from './settle-case.js';
import type { SettleProgress, SettleResult, SettleResume } from './settle.js';

export interface ThreadRunOptions {
  outDir: string;
  force?: boolean;
  signal?: AbortSignal;
  log: RunLog;
  progress: (p: ProgressInfo) => void;
  /** The checkpointer's policy and, resuming, where its numbering goes on from. */
  checkpoint: { policy: CheckpointPolicy; sequence?: number; points?: number };
  resume?: ResumeState;
  /** The folder's lock when the caller holds it (see RunCaseOptions.lock). */
  lock?: FolderLock;
  alongside?: boolean;
  restart?: { started: string; resumes: string[] };
  /** Processor cores the run may use (RunCaseOptions.cores). */
  cores?: number;
}

/** What the thread receives per run (structured-cloned; the stop flag is shared). */
export interface ThreadTask {
  /** A continuation run (runCase) or a time integration (settleCase). */
  kind: 'run' | 'settle';
  doc: Record<string, unknown>;
  label: string;
  file?: string;
  baseDir: string;
  loadCode?: string;
  outDir: string;
  force: boolean;
  /** Runs only: the checkpointer's policy (an integration writes its own checkpoints). */
  checkpoint?: ThreadRunOptions['checkpoint'];
  resume?: ResumeState | SettleResume;
  /** The caller holds the folder's lock (this process: the thread must not take it again). */
  lockHeld: boolean;
  alongside?: boolean;
  restart?: { started: string; resumes: string[] };
  cores?: number;
  /** Int32 flag: 0 go on, 1 stop requested. */
  stop: SharedArrayBuffer;
}

export type ThreadMessage =
  | { type: 'log'; level: 'info' | 'warning'; message: string }
  | { type: 'progress'; info: ProgressInfo | SettleProgress }
  | { type: 'result'; result: RunResult | SettleResult }
  | { type: 'error'; message: string; input: boolean };

/**
 * Threads waiting for their next run (starting one loads the numerical modules: about half a
 * second); unreferenced while idle, so they never keep the process alive.
 */
const idle: Worker[] = [];

function takeThread(): Worker {
  for (let w = idle.pop(); w; w = idle.pop()) {
    if (w.threadId >= 0) {
      w.ref();
      return w;
    }
  }
  // the thread runs a file: an --input-type flag of the process (node --input-type=module -e ...) is not for it
  return new Worker(threadScript(), { execArgv: process.execArgv.filter((a) => !a.startsWith('--input-type')) });
}

function returnThread(w: Worker): void {
  w.removeAllListeners('message');
  w.removeAllListeners('error');
  w.removeAllListeners('exit');
  w.on('error', () => {});
  w.on('exit', () => {
    const i = idle.indexOf(w);
    if (i >= 0) idle.splice(i, 1);
  });
  w.unref();
  idle.push(w);
}

/** Run (or resume) a prepared case in a worker thread; see the header. */
export function runCaseInThread(prepared: PreparedCase, o: ThreadRunOptions): Promise<RunResult> {
  return inThread<RunResult, ProgressInfo>(
    {
      kind: 'run',
      ...caseTask(prepared, caseDocument(prepared.case)),
      outDir: o.outDir,
      force: o.force === true,
      checkpoint: o.checkpoint,
      ...(o.resume ? { resume: o.resume } : {}),
      lockHeld: o.lock !== undefined,
      ...(o.alongside ? { alongside: true } : {}),
      ...(o.restart ? { restart: o.restart } : {}),
      ...(o.cores !== undefined ? { cores: o.cores } : {}),
    },
    o,
  );
}

export interface ThreadSettleOptions {
  outDir: string;
  force?: boolean;
  signal?: AbortSignal;
  log: RunLog;
  progress: (p: SettleProgress) => void;
  resume?: SettleResume;
  /** The folder's lock when the caller holds it. */
  lock?: FolderLock;
}

/** Integrate (or resume) a prepared settle case in a worker thread; see the header. */
export function settleCaseInThread(prepared: PreparedSettleCase, o: ThreadSettleOptions): Promise<SettleResult> {
  return inThread<SettleResult, SettleProgress>(
    {
      kind: 'settle',
      ...caseTask(prepared, settleCaseDocument(prepared.case)),
      outDir: o.outDir,
      force: o.force === true,
      ...(o.resume ? { resume: o.resume } : {}),
      lockHeld: o.lock !== undefined,
    },
    o,
  );
}

/** The case part of a task: its resolved document `doc` (problems hold functions and cannot be sent). */
function caseTask(prepared: PreparedCase | PreparedSettleCase, doc: Record<string, unknown>): Pick<ThreadTask, 'doc' | 'label' | 'file' | 'baseDir' | 'loadCode'> {
  return {
    doc,
    label: prepared.label,
    ...(prepared.file !== undefined ? { file: prepared.file } : {}),
    baseDir: prepared.baseDir,
    // the case was checked here with the same rule: only its own code model may load
    ...ownCodeModel(prepared.case),
  };
}

/** Send `body` to a thread; its log lines and progress (of type P) come back to `o` until its result (R). */
function inThread<R, P>(body: Omit<ThreadTask, 'stop'>, o: { signal?: AbortSignal; log: RunLog; progress: (p: P) => void; lock?: FolderLock }): Promise<R> {
  const stop = new SharedArrayBuffer(4);
  const flag = new Int32Array(stop);
  const task: ThreadTask = { ...body, stop };
  const onAbort = (): void => {
    Atomics.store(flag, 0, 1);
  };
  if (o.signal?.aborted) onAbort();
  o.signal?.addEventListener('abort', onAbort);
  // leaving at once (a second Ctrl-C): the thread may be deep in a factorisation and cannot answer,
  // so this thread marks the run stopped (it resumes from its last checkpoint) and frees the folder
  const unregister = onLeaveAtOnce((reason) => leaveRunFolder(body.outDir, reason, o.lock));
  return new Promise<R>((done, fail) => {
    let settled = false;
    const worker = takeThread();
    worker.on('message', (m: ThreadMessage) => {
      switch (m.type) {
        case 'log':
          o.log(m.level, m.message);
          break;
        case 'progress':
          o.progress(m.info as P);
          break;
        case 'result':
          settled = true;
          returnThread(worker);
          done(m.result as R);
          break;
        case 'error':
          settled = true;
          returnThread(worker);
          fail(m.input ? new InputError(m.message) : new Error(m.message));
          break;
      }
    });
    worker.on('error', (e) => {
      if (settled) return;
      settled = true;
      fail(e);
    });
    worker.on('exit', (code) => {
      if (settled) return;
      settled = true;
      fail(new Error(`the run's thread ended (exit code ${code}) before the run did`));
    });
    worker.postMessage(task);
  }).finally(() => {
    unregister();
    o.signal?.removeEventListener('abort', onAbort);
  });
}

/** A run left at once: run.json `stopped` with the reason (when it still says running), the folder's lock released. */
function leaveRunFolder(dir: string, reason: string, lock: FolderLock | undefined): void {
  const run = readRunRecord(dir);
  if (run && run.status !== 'finished' && run.status !== 'failed') {
    // as the run's own record would say it: stopped, no writer process any more
    const { process: _writer, ...rest } = run;
    writeJsonAtomic(join(dir, 'run.json'), { ...rest, status: 'stopped', note: reason });
  }
  if (lock) lock.release();
  else if (readLock(dir)?.writer?.pid === process.pid) rmSync(join(dir, lockFile), { force: true });
}

/** The compiled thread entry (dist/ when running from the TypeScript sources, e.g. in tests). */
function threadScript(): string {
  const here = dirname(fileURLToPath(import.meta.url));
  const sibling = join(here, 'run-thread-worker.js');
  if (existsSync(sibling)) return sibling;
  const built = resolve(here, '../../dist/src/run/run-thread-worker.js');
  if (existsSync(built)) return built;
  throw new Error(`the run thread's program is missing (${built}); run \`npm run build\` in the package folder`);
}
