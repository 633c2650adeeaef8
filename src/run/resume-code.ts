/**
 * Which code model a resumed run may load. A run folder is data (it travels between colleagues,
 * and its checkpoint's checksum detects damage, not intent): its stored case is never allowed to
 * import a module by itself. A run of a code model resumes only when
 *
 *  - the user passes the case file that names the module (`resume DIR --case FILE`): the module
 *    is the one that file names, and the run must have been made with it; or
 *  - the user asks for the module the run names (`resume DIR --load-code-model`), which is shown
 *    (its path) before it is loaded; or
 *  - the run is a Slurm task's, resumed by the task: the module is the one the user's command
 *    named when it submitted the job, as the job record holds it (slurm/job.json).
 *
 * Runs and time integrations (`settle`) resume under the same rule.
 *
 * The checkpoint's case and run.json's case must name the same model (a checkpoint replaced by
 * hand shows here). `start: {run: DIR}` and `plot DIR` never build a run's problem, so they never
 * load code at all.
 */
import { dirname, join } from 'node:path';
import { type PrepareObjectOptions, codeModelPath, readCaseFile, showValue } from './case.js';
import type { CheckpointDocument } from './checkpoint.js';
import { InputError } from './errors.js';

export interface CodeModelChoice {
  /** The case file the user passed (`--case`). */
  caseFile?: string;
  /** `--load-code-model`: load the module the run names, after `notice` has shown its path. */
  loadCodeModel?: boolean;
  /**
   * The code model the user's original command named, as its job's files record it (a Slurm
   * task resuming its run): loaded when the run names exactly this module, no other.
   */
  recorded?: string;
  notice?: (text: string) => void;
}

/**
 * The code model the stored case may load (PrepareObjectOptions.loadCode): undefined for a
 * built-in model; InputError (one line) when the run's module may not be loaded.
 */
export async function resumeCodeModel(
  dirGiven: string,
  stored: { model?: unknown },
  runJsonCase: { model?: unknown } | undefined,
  baseDir: string,
  choice: CodeModelChoice,
): Promise<string | undefined> {
  const model = typeof stored.model === 'string' ? stored.model.trim() : stored.model;
  const inRun = runJsonCase?.model;
  if (typeof inRun === 'string' && typeof model === 'string' && inRun.trim() !== model) {
    throw new InputError(`${dirGiven}: cannot resume: the checkpoint names the model ${showValue(model)} but run.json names ${showValue(inRun)} (was one of them replaced?)`);
  }
  const recorded = codeModelPath(model, baseDir);
  if (choice.caseFile !== undefined) {
    // the user named this file: its code model may load (the file is read, not run: a run's case
    // and a time integration's are both accepted here, and are checked in full when resumed)
    const { raw, opts } = readCaseFile(choice.caseFile);
    const given = (raw as { model?: unknown } | null)?.model;
    const named = codeModelPath(given, opts.baseDir) ?? (typeof given === 'string' ? given.trim() : given);
    const want = recorded ?? model;
    if (named !== want) {
      throw new InputError(`${dirGiven}: cannot resume: the run was made with the model ${showValue(want)}, but ${choice.caseFile} names ${showValue(named)}`);
    }
    return recorded;
  }
  if (recorded === undefined) return undefined;
  if (choice.recorded !== undefined) {
    if (choice.recorded === recorded) return recorded;
    throw new InputError(`${dirGiven}: cannot resume: the run uses the code model ${recorded}, but the command that started it named ${showValue(choice.recorded)}`);
  }
  if (choice.loadCodeModel) {
    choice.notice?.(`loading the code model ${recorded}, as the run's checkpoint names it (--load-code-model)`);
    return recorded;
  }
  throw new InputError(
    `${dirGiven}: cannot resume: the run uses the code model ${recorded}, and a run folder never loads code by itself; pass the case file that names it (--case FILE), or --load-code-model to load that module`,
  );
}

/**
 * The options under which a resume reads back the case its checkpoint stored (for a run and a
 * time integration alike): the case file it was made from, its folder for relative paths, and the
 * one code model the user allowed (resumeCodeModel).
 */
export async function storedCaseOptions(
  dirGiven: string,
  dir: string,
  run: Record<string, unknown>,
  found: { document: CheckpointDocument; file: string },
  choice: CodeModelChoice,
): Promise<PrepareObjectOptions> {
  const c = found.document;
  const caseFile = c.run.caseFile;
  const baseDir = caseFile ? dirname(caseFile) : dir;
  const loadCode = await resumeCodeModel(dirGiven, c.case as { model?: unknown }, run.case as { model?: unknown } | undefined, baseDir, choice);
  return {
    label: `${join(dirGiven, found.file)} (case ${caseFile ?? 'unknown'})`,
    ...(caseFile ? { file: caseFile } : {}),
    baseDir,
    ...(loadCode ? { loadCode } : {}),
  };
}
