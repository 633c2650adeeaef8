/**
 * `resume DIR` for a search for steady states (find-states): everything checked before anything
 * is written, with the checks every resume makes (batch.ts `lockForResume`, `resumableCheckpoint`,
 * `checkRecordedLengths`; resume-code.ts for code models; checkpoint.ts for damage), then:
 *
 *  - the checkpoint's case must be the case run.json records (a checkpoint copied from another
 *    search, or one of them edited, shows here);
 *  - the saved search must fit the case's problem and guesses (../deflation/search.ts
 *    `checkSearchState`), and every guess must be, bit for bit, the one the search started from
 *    (a guess file changed since shows here);
 *  - every state file (solutions/state-K.npy) must hold exactly the node array of the checkpoint's
 *    state K: a checkpoint whose states were edited (its checksum made good again), or a state
 *    file edited, is refused;
 *  - solves.csv must hold every row the checkpoint counts;
 *  - the trace under way, if any, goes on from its own checkpoint with the checks of a run's
 *    resume (batch.ts `prepareResume`: its lock taken), its case the one its run.json records; a
 *    trace without a checkpoint is traced again. (A trace's case names its state file by its
 *    absolute path: a search folder moved while a trace was under way resumes only while the
 *    old path still holds it.)
 *
 * A search that ended before its first checkpoint (killed during its first solve) starts over from
 * the case run.json records. InputError (one line) for every refusal, the locks released.
 */
import { existsSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { isDeepStrictEqual } from 'node:util';
import { checkSearchState } from '../deflation/search.js';
import { checkRecordedLengths, checkpointOrRestart, lockForResume, prepareResume } from './batch.js';
import { checkpointFile, previousCheckpointFile } from './checkpoint.js';
import { InputError } from './errors.js';
import { type PreparedFindCase, prepareFindCaseObject } from './find-states-case.js';
import { type FindCheckpoint, type FindResume, guessDigest, solvesFile, stateFile, stateFileBytes, traceFolder } from './find-states.js';
import type { FolderLock } from './lock.js';
import { FileReadError, npyFileLimit, readRegularFile } from './read-file.js';
import { type CodeModelChoice, resumeCodeModel, storedCaseOptions } from './resume-code.js';
import { readRunRecord } from './run-directory.js';

export interface FindResumePlan {
  prepared: PreparedFindCase;
  outDir: string;
  lock: FolderLock;
  /** From a checkpoint ... */
  resume?: FindResume;
  /** ... or started over (no checkpoint was written). */
  restart?: { started: string; resumes: string[]; previousStatus: string };
}

/** Everything `resume DIR` needs for a search, checked (see the header); the caller releases the locks. */
export async function prepareFindResume(dirGiven: string, options: { force?: boolean; code?: CodeModelChoice } = {}): Promise<FindResumePlan> {
  const { dir, run, status, lock } = lockForResume(dirGiven, options);
  let traceLock: FolderLock | undefined;
  try {
    const plan = await checkFindResumable(dirGiven, dir, run, status, options.code ?? {});
    traceLock = plan.resume?.trace?.lock;
    return { ...plan, lock };
  } catch (e) {
    traceLock?.release();
    lock.release();
    throw e;
  }
}

async function checkFindResumable(dirGiven: string, dir: string, run: Record<string, unknown>, status: string, choice: CodeModelChoice): Promise<Omit<FindResumePlan, 'lock'>> {
  const refuse = (what: string): never => {
    throw new InputError(`${dirGiven}: cannot resume: ${what}`);
  };
  const from = checkpointOrRestart(dirGiven, dir, run);
  if ('restart' in from) {
    // killed during its first solve: nothing was kept; start over from the case run.json records
    const baseDir = from.caseFile ? dirname(from.caseFile) : dir;
    const loadCode = await resumeCodeModel(dirGiven, from.case, from.case, baseDir, choice);
    const prepared = await prepareFindCaseObject(from.case, { label: from.label, ...(from.caseFile ? { file: from.caseFile } : {}), baseDir, ...(loadCode ? { loadCode } : {}) });
    return { prepared, outDir: dir, restart: { ...from.restart, previousStatus: status } };
  }
  const found = from.found;
  const c = found.document;
  // the checkpoint belongs to this search: the case run.json records (both written by the search)
  if (!isDeepStrictEqual(JSON.parse(JSON.stringify(c.case)), run.case)) refuse(`the case in ${found.file} is not the case run.json records (was one of them replaced or edited?)`);
  // a code model loads only when the user names it (src/run/resume-code.ts)
  const prepared = await prepareFindCaseObject(c.case, await storedCaseOptions(dirGiven, dir, run, found, choice));
  const saved = c.engine as FindCheckpoint | null;
  if (!saved || typeof saved !== 'object' || !saved.search || !saved.find || !Array.isArray(saved.find.guesses) || !Array.isArray(saved.find.traces) || !Array.isArray(saved.find.warnings)) {
    return refuse(`${found.file} holds no search for steady states`);
  }
  const bad = checkSearchState(saved.search, prepared.problem.size, prepared.guesses.length);
  if (bad) refuse(`the search in ${found.file} ${bad}`);
  prepared.guesses.forEach((g, i) => {
    if (saved.find.guesses[i] !== guessDigest(g)) refuse(`${g.label} is not the guess the search started from (was its file or the model changed?)`);
  });
  if (c.ledger.points !== saved.search.solves.length || typeof c.ledger.csvLengths[solvesFile] !== 'number') refuse(`${found.file} does not count the solves of its search`);
  checkRecordedLengths(dirGiven, dir, c.ledger.csvLengths);
  // every state file holds its state exactly (written before the checkpoint that holds the state)
  for (const s of saved.search.states) {
    let bytes: Buffer;
    try {
      bytes = readRegularFile(join(dir, stateFile(s.id)), npyFileLimit, 'a state file');
    } catch (e) {
      if (!(e instanceof FileReadError)) throw e;
      return refuse(`${stateFile(s.id)} ${e.code === 'ENOENT' ? 'is missing' : `cannot be read (${e.reason})`} (the checkpoint holds state ${s.id})`);
    }
    if (!bytes.equals(stateFileBytes(prepared, s))) refuse(`${stateFile(s.id)} is not state ${s.id} of ${found.file} (was either edited?)`);
  }
  // the traces done, then the one under way
  const traces = saved.find.traces;
  const expected: { state: number; direction: 'increase' | 'decrease' }[] = [];
  if (saved.search.done && saved.find.trace) for (const s of saved.search.states) for (const direction of ['increase', 'decrease'] as const) expected.push({ state: s.id, direction });
  traces.forEach((t, i) => {
    const e = expected[i];
    if (!e || !t || t.state !== e.state || t.direction !== e.direction || t.directory !== traceFolder(e.state, e.direction)) refuse(`${found.file} lists traces this search does not make`);
  });
  const resume: FindResume = { checkpoint: c, file: found.file, skipped: found.skipped, previousStatus: status };
  const next = expected[traces.length];
  if (next) {
    const folder = join(dir, traceFolder(next.state, next.direction));
    const record = readRunRecord(folder);
    const hasCheckpoint = existsSync(join(folder, checkpointFile)) || existsSync(join(folder, previousCheckpointFile));
    if (record && record.status !== 'finished' && hasCheckpoint) {
      // on from the trace's own checkpoint, checked as any run's resume (its lock taken here)
      const given = join(dirGiven, traceFolder(next.state, next.direction));
      const t = await prepareResume(given, { code: choice });
      const stored = t.plan.checkpoint?.case;
      if (stored && !isDeepStrictEqual(JSON.parse(JSON.stringify(stored)), readRunRecord(folder)?.case)) {
        t.lock.release();
        refuse(`the case in ${join(traceFolder(next.state, next.direction), t.plan.file ?? checkpointFile)} is not the case its run.json records (was one of them replaced or edited?)`);
      }
      if (t.plan.checkpoint) resume.trace = { ...next, prepared: t.prepared, plan: t.plan, lock: t.lock };
      else t.lock.release();
    }
  }
  return { prepared, outDir: dir, resume };
}
