/**
 * One grid of a refinement study, run or resumed like any run (src/run/batch.ts: checkpoints as
 * its case asks, its folder's lock held while it writes), in the study's process or in a worker
 * process (./worker.ts). A grid whose run was stopped or killed is resumed from its checkpoint
 * (or started over when it had none yet).
 */
import { prepareResume, runSession } from '../run/batch.js';
import { type PreparedCase, prepareCaseObject } from '../run/case.js';
import { logView } from '../run/progress.js';
import type { RunLog } from '../run/run-events.js';

/** What a grid needs: a fresh run of its case document, or the resumption of its run folder. */
export type GridJob = (
  | { kind: 'run'; doc: Record<string, unknown>; label: string; baseDir: string; file?: string; outDir: string }
  | { kind: 'resume'; outDir: string }
) & {
  /** The one code model the grid's case may load: the study's, as the user allowed it (src/run/resume-code.ts). */
  loadCode?: string;
};

/** Run or resume one grid (InputError when its folder cannot be used; numerical trouble lands in its run.json). */
export async function runGridJob(job: GridJob, o: { signal?: AbortSignal; log: RunLog; prepared?: PreparedCase }): Promise<void> {
  const view = logView(o.log);
  const signal = o.signal ? { signal: o.signal } : {};
  if (job.kind === 'run') {
    const prepared = o.prepared ?? (await prepareCaseObject(job.doc, { label: job.label, baseDir: job.baseDir, ...(job.file ? { file: job.file } : {}), ...(job.loadCode !== undefined ? { loadCode: job.loadCode } : {}) }));
    // the grid folder is the study's: files the user put in it stay
    await runSession(prepared, { outDir: job.outDir, ...signal, view, name: prepared.case.name, alongside: true });
    return;
  }
  const { prepared, outDir, plan, lock } = await prepareResume(job.outDir, { code: job.loadCode !== undefined ? { recorded: job.loadCode } : {} });
  try {
    await runSession(prepared, { outDir, ...signal, view, name: prepared.case.name, resume: plan, lock });
  } finally {
    lock.release();
  }
}
