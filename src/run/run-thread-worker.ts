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
import { runCase } from './run-case.js';
import type { ThreadMessage, ThreadTask } from './run-thread.js';

const send = (m: ThreadMessage): void => parentPort!.postMessage(m);

/** One run; the thread then waits for the next (see run-thread.ts). */
async function run(task: ThreadTask): Promise<void> {
  const flag = new Int32Array(task.stop);
  const signal = {
    get aborted(): boolean {
      return Atomics.load(flag, 0) !== 0;
    },
  };
  try {
    const prepared = await prepareCaseObject(task.doc, {
      label: task.label,
      ...(task.file !== undefined ? { file: task.file } : {}),
      baseDir: task.baseDir,
      ...(task.loadCode !== undefined ? { loadCode: task.loadCode } : {}),
    });
    const checkpointer = new Checkpointer(task.checkpoint.policy, {
      ...(task.checkpoint.sequence !== undefined ? { sequence: task.checkpoint.sequence } : {}),
      ...(task.checkpoint.points !== undefined ? { points: task.checkpoint.points } : {}),
    });
    const result = await runCase(prepared, {
      outDir: task.outDir,
      ...(task.force ? { force: true } : {}),
      signal,
      log: (level, message) => send({ type: 'log', level, message }),
      progress: (info) => send({ type: 'progress', info }),
      checkpoint: checkpointer.hook,
      ...(task.resume ? { resume: task.resume } : {}),
    });
    send({ type: 'result', result });
  } catch (e) {
    send({ type: 'error', message: e instanceof Error ? e.message : String(e), input: e instanceof InputError });
  }
}

parentPort!.on('message', (task: ThreadTask) => void run(task));
