/**
 * Worker process of a refinement study (`refine --jobs N`): receives one grid's task over the
 * IPC channel (the case document, its base folder and the run folder), runs it with runCase and
 * exits. The parent reads the results from the run folder. SIGINT/SIGTERM finish the current step
 * and write the files (status `stopped`), as the `run` command does; a signal that arrives before
 * the run started ends the worker without a run. The signal handlers are installed before the
 * numerical modules load (they take a moment), so no signal finds the worker unprepared.
 */
interface Task {
  doc: Record<string, unknown>;
  label: string;
  baseDir: string;
  outDir: string;
  /** The one code model the parent allows this case to load (see PrepareObjectOptions.loadCode). */
  loadCode?: string;
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
      const { prepareCaseObject } = await import('../run/case.js');
      const { runCase } = await import('../run/run-case.js');
      const prepared = await prepareCaseObject(task.doc, { label: task.label, baseDir: task.baseDir, ...(task.loadCode ? { loadCode: task.loadCode } : {}) });
      if (!controller.signal.aborted) {
        await runCase(prepared, {
          outDir: task.outDir,
          signal: controller.signal,
          log: (level, message) => {
            if (level === 'warning') void send({ type: 'log', level, message });
          },
        });
      }
    } catch (e) {
      code = 1;
      await send({ type: 'error', message: e instanceof Error ? e.message : String(e) });
    }
    process.disconnect?.();
    process.exitCode = code;
  })();
});
