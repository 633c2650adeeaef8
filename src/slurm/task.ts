/**
 * One task of a job array, on a compute node (`branchline task FOLDER`, started by the job
 * script): the run of task $SLURM_ARRAY_TASK_ID, in its own run folder.
 *
 *  - The task holds the run folder's lock (src/run/lock.ts) from before it reads the folder until
 *    its last file is written: a live writer on this node makes it refuse, and so does a writer on
 *    another node unless that writer ran in a Slurm job that the scheduler says has ended (an
 *    earlier task of this run, killed with its node, by the time limit, by scancel, ...): such a
 *    lock is stale and taken over. A user's `resume` on the login node is never taken over.
 *  - A run folder holding a stopped, failed or killed run with a usable checkpoint is resumed
 *    from it (a resubmission continues where the task was); a folder holding a finished run is
 *    left as it is; otherwise the run starts (replacing only an earlier attempt of our own that
 *    left no checkpoint).
 *  - Slurm's warning signal before the time limit (SIGUSR2, asked for with --signal) and SIGTERM
 *    (scancel, the time limit itself, a preemption) stop the run cleanly: the current step is
 *    finished, a checkpoint written, run.json marked `stopped`.
 *  - Progress goes to the task's log (stdout: plain lines) and to progress/<task>.json in the job
 *    folder, which the waiting command reads; the run's result goes to results/<task>.bin.
 *
 * Exit code 0 when the run finished, 1 otherwise (the outcome is in the files either way).
 */
import { existsSync, readFileSync } from 'node:fs';
import { hostname } from 'node:os';
import { resolve } from 'node:path';
import { prepareResume, runSession } from '../run/batch.js';
import { prepareCaseObject } from '../run/case.js';
import { InputError } from '../run/errors.js';
import { makeFolder, removeIfEmpty } from '../run/folders.js';
import { FolderLock, LockedError, type WriterIdentity, holderText } from '../run/lock.js';
import { folderEntries } from '../run/run-directory.js';
import { type ProgressView, progressView } from '../run/progress.js';
import type { ProgressInfo } from '../run/run-case.js';
import { writeJsonAtomic } from '../run/writers.js';
import { jobEnded } from './commands.js';
import { type TaskResult, progressFile, readJob, writeTaskResult } from './job.js';

export interface TaskOptions {
  /** The job folder (…/slurm) as the job script names it. */
  folder: string;
  /** The array index (default $SLURM_ARRAY_TASK_ID). */
  index?: number;
  signal: AbortSignal;
  /** Why the stop was asked for, when it was. */
  stopCause: () => TaskResult['stop'];
  write: (s: string) => void;
}

/** Seconds between writes of the progress file. */
const progressSeconds = 2;

function hasRun(dir: string): boolean {
  return existsSync(resolve(dir, 'run.json'));
}

function checkpointed(dir: string): boolean {
  return existsSync(resolve(dir, 'checkpoint.bin')) || existsSync(resolve(dir, 'checkpoint.previous.bin'));
}

/**
 * Whether the writer of a lock on another node is gone: it ran in a Slurm job that has ended, or in
 * this very job (requeued: Slurm runs one instance of a job at a time). Writers outside Slurm (a
 * user's resume on the login node) cannot be judged from here: never.
 */
export function slurmWriterGone(w: WriterIdentity): boolean {
  const job = w['slurm-job'];
  if (job === undefined) return false;
  return job === process.env.SLURM_JOB_ID || jobEnded(job);
}

/** Another writer holds the task's run folder (the task touched nothing). */
class FolderHeldError extends InputError {
  override name = 'FolderHeldError';
}

/**
 * Take the run folder's lock (making the folder if need be; a folder made here is removed again on
 * a refusal). A refusal is a FolderHeldError naming the writer.
 */
function lockRunFolder(outDir: string, purpose: string): FolderLock {
  const made = makeFolder(outDir);
  try {
    return FolderLock.acquire(outDir, { purpose, takeOverForeign: slurmWriterGone, label: outDir });
  } catch (e) {
    if (made) removeIfEmpty(outDir, made);
    if (e instanceof LockedError) throw new FolderHeldError(`${outDir}: is being written by ${holderText(e.writer, e.liveness)}; the task leaves the folder alone (resubmit it once that writer has ended)`);
    throw e;
  }
}

export async function runTask(o: TaskOptions): Promise<number> {
  const folder = resolve(o.folder);
  const collection = resolve(folder, '..');
  const index = o.index ?? Number(process.env.SLURM_ARRAY_TASK_ID);
  const jobId = process.env.SLURM_ARRAY_JOB_ID ?? process.env.SLURM_JOB_ID ?? 'local';
  const job = readJob(collection);
  const task = job.tasks[index];
  if (!Number.isInteger(index) || !task) throw new Error(`task ${String(process.env.SLURM_ARRAY_TASK_ID ?? index)} is not a task of the job in ${folder} (it has ${job.tasks.length})`);
  const outDir = resolve(collection, task.directory);
  const base: Omit<TaskResult, 'result' | 'error'> = { job: jobId, task: index, host: hostname() };
  o.write(`branchline task ${index} (${task.name}) on ${hostname()}, job ${jobId}: ${outDir}\n`);

  const plain = progressView({ tty: false, quiet: false, write: o.write, showNames: false });
  let lastWrite = 0;
  let last: ProgressInfo | undefined;
  const saveProgress = (p: ProgressInfo): void => {
    try {
      writeJsonAtomic(progressFile(collection, index), p);
    } catch {
      // progress is a courtesy: a full disk shows up in the run's own files
    }
  };
  const view: ProgressView = {
    start: (n, p, m) => plain.start(n, p, m),
    log: (n, l, m) => plain.log(n, l, m),
    end: (n) => plain.end(n),
    close: () => plain.close(),
    update: (n, p: ProgressInfo) => {
      plain.update(n, p);
      last = p;
      const now = Date.now();
      if (now - lastWrite >= progressSeconds * 1000) {
        lastWrite = now;
        saveProgress(p);
      }
    },
  };

  let lock: FolderLock | undefined;
  try {
    // the folder's lock first: what is read below stays true until the task ends
    lock = lockRunFolder(outDir, `slurm task ${jobId}_${index}`);
    const run = hasRun(outDir) ? (JSON.parse(readFileSync(resolve(outDir, 'run.json'), 'utf8')) as { status?: string }) : undefined;
    if (run?.status === 'finished') {
      o.write('the run has already finished; nothing to do\n');
      return 0;
    }
    let result;
    if (run && checkpointed(outDir)) {
      // the task was here before: continue from its checkpoint, under the lock taken above; the code
      // model (if any) is the one the user's command named, as the job record holds it
      const { prepared, plan } = await prepareResume(outDir, { lock, code: task.codeModel !== undefined ? { recorded: task.codeModel } : {} });
      for (const s of plan.skipped) view.log(undefined, 'warning', `${s}; using ${plan.file}`);
      view.log(undefined, 'info', `resuming from ${plan.file} (${plan.checkpoint?.ledger.points ?? 0} points; the run was ${plan.previousStatus})`);
      result = await runSession(prepared, { outDir, signal: o.signal, view, name: task.name, resume: plan, lock });
    } else {
      const prepared = await prepareCaseObject(task.doc, {
        label: task.label,
        baseDir: task.baseDir,
        ...(task.file !== undefined ? { file: task.file } : {}),
        ...(task.codeModel !== undefined ? { loadCode: task.codeModel } : {}),
      });
      // an earlier attempt that left no checkpoint is replaced (only a run of ours: see RunDirectory.create)
      const earlier = folderEntries(outDir).length > 0;
      result = await runSession(prepared, { outDir, force: earlier, signal: o.signal, view, name: task.name, lock });
    }
    if (last) saveProgress(last);
    const stop = result.status === 'stopped' ? o.stopCause() : undefined;
    writeTaskResult(collection, { ...base, ...(stop ? { stop } : {}), result });
    o.write(`run ${result.status}${result.failure ? `: ${result.failure}` : ''}${stop === 'time-limit' ? ' (Slurm\'s signal before the time limit; resubmit to continue)' : ''}\n`);
    return result.status === 'finished' ? 0 : 1;
  } catch (e) {
    const message = e instanceof Error ? e.message.split('\n')[0] : String(e);
    const stop = o.signal.aborted ? o.stopCause() : undefined;
    writeTaskResult(collection, { ...base, ...(stop ? { stop } : {}), ...(e instanceof FolderHeldError ? { held: true } : {}), error: message });
    o.write(`branchline: ${message}\n`);
    return 1;
  } finally {
    lock?.release();
    view.close();
  }
}
