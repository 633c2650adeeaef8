/**
 * The worker thread of runs (see run-thread.ts): for each task, prepares the case from its
 * resolved document, runs it with a checkpointer and sends log lines, progress and the result to
 * the main thread; then waits for the next task.
 * The stop request is a flag in shared memory, read between steps and before every
 * factorisation (runCase's `signal`).
 */
import { parentPort } from 'node:worker_threads';
import { prepareCaseObject } from './case.js';
import { Checkpointer } from './checkpoint.js';
import { InputError } from './errors.js';
import type { FolderLock } from './lock.js';
import { type ResumeState, runCase } from './run-case.js';
import { prepareSettleCaseObject } from './settle-case.js';
import { type SettleResume, settleCase } from './settle.js';
import type { ThreadMessage, ThreadTask } from './run-thread.js';

const send = (m: ThreadMessage): void => parentPort!.postMessage(m);

/** One run or time integration; the thread then waits for the next (see run-thread.ts). */
async function run(task: ThreadTask): Promise<void> {
  const flag = new Int32Array(task.stop);
  const signal = {
    get aborted(): boolean {
      return Atomics.load(flag, 0) !== 0;
    },
  };
  const options = {
    label: task.label,
    ...(task.file !== undefined ? { file: task.file } : {}),
    baseDir: task.baseDir,
    ...(task.loadCode !== undefined ? { loadCode: task.loadCode } : {}),
  };
  const log = (level: 'info' | 'warning', message: string): void => send({ type: 'log', level, message });
  // the caller (this process's main thread) holds the folder's lock and releases it
  const held = task.lockHeld ? { lock: { release() {} } as unknown as FolderLock } : {};
  try {
    if (task.kind === 'settle') {
      const prepared = await prepareSettleCaseObject(task.doc, options);
      const result = await settleCase(prepared, {
        outDir: task.outDir,
        ...(task.force ? { force: true } : {}),
        // settleCase reads only `aborted`
        signal: signal as AbortSignal,
        log,
        progress: (info) => send({ type: 'progress', info }),
        ...(task.resume ? { resume: task.resume as SettleResume } : {}),
        ...held,
      });
      send({ type: 'result', result });
      return;
    }
    const prepared = await prepareCaseObject(task.doc, options);
    const policy = task.checkpoint!;
    const checkpointer = new Checkpointer(policy.policy, {
      ...(policy.sequence !== undefined ? { sequence: policy.sequence } : {}),
      ...(policy.points !== undefined ? { points: policy.points } : {}),
    });
    const result = await runCase(prepared, {
      outDir: task.outDir,
      ...(task.force ? { force: true } : {}),
      signal,
      log,
      progress: (info) => send({ type: 'progress', info }),
      checkpoint: checkpointer.hook,
      ...(task.resume ? { resume: task.resume as ResumeState } : {}),
      ...held,
      ...(task.alongside ? { alongside: true } : {}),
      ...(task.restart ? { restart: task.restart } : {}),
      ...(task.cores !== undefined ? { cores: task.cores } : {}),
    });
    send({ type: 'result', result });
  } catch (e) {
    send({ type: 'error', message: e instanceof Error ? e.message : String(e), input: e instanceof InputError });
  }
}

parentPort!.on('message', (task: ThreadTask) => void run(task));
