/**
 * Worker process of a refinement study (`refine --jobs N`): receives one grid's job over the IPC
 * channel (a fresh run of its case document, or the resumption of its run folder; ./grid-run.ts),
 * runs it and exits. The parent reads the results from the run folder. SIGINT/SIGTERM, and the
 * parent going away, finish the current step and write the files (checkpoint, status `stopped`),
 * as the `run` command does; a signal that arrives before the run started ends the worker without
 * a run. The signal handlers are installed before the numerical modules load (they take a
 * moment), so no signal finds the worker unprepared.
 */
import type { GridJob } from './grid-run.js';

const controller = new AbortController();
const stop = (): void => controller.abort();
process.on('SIGINT', stop);
process.on('SIGTERM', stop);
process.on('disconnect', stop);

function send(message: unknown): Promise<void> {
  return new Promise((done) => {
    if (!process.send || !process.connected) return done();
    process.send(message, undefined, {}, () => done());
  });
}

process.once('message', (m: unknown) => {
  void (async () => {
    const job = m as GridJob;
    let code = 0;
    try {
      const { runGridJob } = await import('./grid-run.js');
      if (!controller.signal.aborted) {
        await runGridJob(job, {
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
    process.off('disconnect', stop);
    process.disconnect?.();
    process.exitCode = code;
  })();
});
