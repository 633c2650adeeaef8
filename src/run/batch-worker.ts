/**
 * Worker process of a batch (`branchline run A.yaml B.yaml ... --jobs N`): runs one case, sent
 * by the batch over the IPC channel, and reports progress, log lines and the result back.
 *
 * SIGINT and SIGTERM (and the batch going away) stop the run cleanly: the current step is
 * finished, a checkpoint written and run.json marked `stopped`. The batch decides about leaving
 * at once (it kills its workers); a worker never exits half-way on a signal of its own.
 */
import { dirname } from 'node:path';
import { InputError } from './errors.js';
import { prepareCase, prepareCaseObject } from './case.js';
import { runSession, type WorkerMessage, type WorkerStart } from './batch.js';
import { type ProgressView, logView } from './progress.js';

const send = (m: WorkerMessage): void => {
  if (process.connected) process.send!(m);
};

const controller = new AbortController();
const stop = (): void => controller.abort();
process.on('SIGINT', stop);
process.on('SIGTERM', stop);
process.on('disconnect', stop);

const view: ProgressView = logView(
  (level, message) => send({ type: 'log', level, message }),
  (info) => send({ type: 'progress', info }),
);

async function work(m: WorkerStart): Promise<number> {
  try {
    const prepared = m.doc
      ? await prepareCaseObject(m.doc, { label: m.label, file: m.file, baseDir: m.baseDir ?? dirname(m.file), ...(m.loadCode !== undefined ? { loadCode: m.loadCode } : {}) })
      : await prepareCase(m.file, { label: m.label });
    const result = await runSession(prepared, { outDir: m.outDir, force: m.force, signal: controller.signal, view, name: prepared.case.name });
    send({ type: 'result', result });
    return result.status === 'finished' ? 0 : 1;
  } catch (e) {
    const input = e instanceof InputError;
    send({ type: 'error', message: e instanceof Error ? e.message.split('\n')[0] : String(e), input });
    return input ? 2 : 1;
  }
}

process.once('message', (m: WorkerStart) => {
  void work(m).then((code) => {
    process.off('disconnect', stop);
    process.exitCode = code;
    process.disconnect?.();
  });
});
