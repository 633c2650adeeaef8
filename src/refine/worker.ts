/**
 * Worker process of a refinement study (`refine --jobs N`): receives one grid's task over the
 * IPC channel (the case document, its base folder and the run folder), runs it with runCase and
 * exits. The parent reads the results from the run folder. SIGINT/SIGTERM finish the current step
 * and write the files (status `stopped`), as the `run` command does.
 */
import { prepareCaseObject } from '../run/case.js';
import { runCase } from '../run/run-case.js';

interface Task {
  doc: Record<string, unknown>;
  label: string;
  baseDir: string;
  outDir: string;
}

const controller = new AbortController();
const stop = (): void => controller.abort();
process.on('SIGINT', stop);
process.on('SIGTERM', stop);

function send(message: unknown): Promise<void> {
  return new Promise((done) => {
    if (!process.send) return done();
    process.send(message, undefined, {}, () => done());
  });
}

process.once('message', (m: unknown) => {
  void (async () => {
    const task = m as Task;
    let code = 0;
    try {
      const prepared = await prepareCaseObject(task.doc, { label: task.label, baseDir: task.baseDir });
      await runCase(prepared, {
        outDir: task.outDir,
        signal: controller.signal,
        log: (level, message) => {
          if (level === 'warning') void send({ type: 'log', level, message });
        },
      });
    } catch (e) {
      code = 1;
      await send({ type: 'error', message: e instanceof Error ? e.message : String(e) });
    }
    process.disconnect?.();
    process.exitCode = code;
  })();
});
