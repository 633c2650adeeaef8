/**
 * The folder of a refinement study, so that a study survives a kill -9 at any moment:
 *
 *  - refine.json exists from the start (status `running`): the study's plan (the case document,
 *    its file and folder, the grids, the point, the branch, the expected order, the jobs) and
 *    each grid's folder; the final refine.json adds the analysis and keeps the plan;
 *  - the folder's lock (src/run/lock.ts) is held by the process running the study, and each grid
 *    run holds its own folder's lock;
 *  - `--force` replaces an earlier study, finished or half-written (any refine.json of ours):
 *    refine.csv, refine.json, refine.svg and, in the grid folders refine.json names, exactly the
 *    files of each grid's run (its manifest); the user's files stay and are named;
 *  - `resume DIR` reads the plan back (`readStudyPlan`).
 */
import { existsSync, readFileSync, readdirSync, rmSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { InputError } from '../run/errors.js';
import { FolderLock, isLockFile } from '../run/lock.js';
import { removeRunFiles } from '../run/manifest.js';
import { runManifest } from '../run/run-case.js';
import { type PointSpec, parsePointSpec, pointSpecText } from '../run/start.js';
import { writeJsonAtomic } from '../run/writers.js';
import { folderEntries } from '../run/run-directory.js';
import { removeIfEmpty } from '../run/folders.js';

export const studyFormat = 'branchline refinement';
export const studyFormatVersion = 1;

/** What a study was asked to do (refine.json `plan`): enough to run it again or resume it. */
export interface StudyPlan {
  /** The case document of the study (every grid's case is this with its own grid). */
  case: Record<string, unknown>;
  caseFile: string | null;
  /** The folder relative paths of the case are taken from. */
  baseFolder: string;
  grids: number[];
  /** The special point asked for (null: the first fold). */
  point: PointSpec | null;
  branch: number;
  /**
   * Whether the branch was asked for (--branch). A curve study without it analyses the curve that
   * holds the point (src/refine/study.ts), on every grid and after a resume alike.
   */
  branchGiven: boolean;
  expectedOrder: number | null;
  jobs: number;
  /** Each grid's intervals per axis and its folder (relative to the study folder). */
  runs: { grid: number; intervals: number[]; directory: string }[];
}

export function planJson(p: StudyPlan): Record<string, unknown> {
  return {
    case: p.case,
    'case-file': p.caseFile,
    'base-folder': p.baseFolder,
    grids: p.grids,
    point: p.point ? pointSpecText(p.point) : null,
    branch: p.branch,
    'branch-given': p.branchGiven,
    'expected-order': p.expectedOrder,
    jobs: p.jobs,
  };
}

const gridFolder = /^grid-\d+(x\d+)*$/;

/** refine.json of `dir` when it is a study's, else undefined. */
export function readStudyJson(dir: string): Record<string, unknown> | undefined {
  try {
    const doc = JSON.parse(readFileSync(join(dir, 'refine.json'), 'utf8')) as Record<string, unknown>;
    return doc && typeof doc === 'object' && doc.format === studyFormat ? doc : undefined;
  } catch {
    return undefined;
  }
}

/** The grid folders a study's refine.json names (only names of our scheme). */
function studyGridFolders(doc: Record<string, unknown>): string[] {
  const runs = Array.isArray(doc.runs) ? (doc.runs as { directory?: unknown }[]) : [];
  return runs.map((r) => r.directory).filter((d): d is string => typeof d === 'string' && gridFolder.test(d));
}

/** The plan of the study in `dir` (InputError naming what is missing when it cannot be read). */
export function readStudyPlan(dir: string, label: string): { plan: StudyPlan; doc: Record<string, unknown> } {
  const doc = readStudyJson(dir);
  if (!doc) throw new InputError(`${label}: holds no refinement study (no readable refine.json of ours)`);
  const p = doc.plan as Record<string, unknown> | undefined;
  const bad = (what: string): never => {
    throw new InputError(`${label}: cannot resume the study: refine.json ${what}`);
  };
  if (!p || typeof p !== 'object') bad('has no plan (written by an earlier version)');
  if (!p!.case || typeof p!.case !== 'object') bad('plan has no case');
  const grids = p!.grids;
  if (!Array.isArray(grids) || !grids.every((g) => Number.isInteger(g))) bad('plan has no grids');
  const point = p!.point === null ? null : typeof p!.point === 'string' ? parsePointSpec(p!.point) : undefined;
  if (point === undefined) bad('plan names no point');
  const runs = (Array.isArray(doc.runs) ? doc.runs : []) as { grid?: unknown; intervals?: unknown; directory?: unknown }[];
  const plannedRuns = runs.map((r) => ({ grid: Number(r.grid), intervals: Array.isArray(r.intervals) ? (r.intervals as number[]) : [], directory: String(r.directory) }));
  if (plannedRuns.length !== (grids as number[]).length || plannedRuns.some((r) => !gridFolder.test(r.directory))) bad('names no grid folders');
  const expected = p!['expected-order'];
  return {
    doc,
    plan: {
      case: p!.case as Record<string, unknown>,
      caseFile: typeof p!['case-file'] === 'string' ? p!['case-file'] : null,
      baseFolder: typeof p!['base-folder'] === 'string' ? p!['base-folder'] : dir,
      grids: grids as number[],
      point: point ?? null,
      branch: Number.isInteger(p!.branch) ? (p!.branch as number) : 1,
      // a plan of an earlier version does not say: branch 1 was then the default
      branchGiven: typeof p!['branch-given'] === 'boolean' ? p!['branch-given'] : Number.isInteger(p!.branch) && p!.branch !== 1,
      expectedOrder: typeof expected === 'number' ? expected : null,
      jobs: Number.isInteger(p!.jobs) && (p!.jobs as number) > 0 ? (p!.jobs as number) : 1,
      runs: plannedRuns,
    },
  };
}

/** refine.json at the start of a study: its plan, every grid pending. */
export function writeStartJson(dir: string, plan: StudyPlan, caseName: string, software: Record<string, unknown>): void {
  writeJsonAtomic(join(dir, 'refine.json'), {
    format: studyFormat,
    'format-version': studyFormatVersion,
    software,
    status: 'running',
    'case-file': plan.caseFile,
    case: caseName,
    plan: planJson(plan),
    runs: plan.runs.map((r) => ({ ...r, status: 'pending' })),
  });
}

/**
 * Prepare the study folder (its lock held): empty or new; with `force`, an earlier study —
 * finished or half-written — is replaced (see the header); anything else is refused.
 * Returns the user's files that were kept.
 */
export function prepareStudyFolder(dir: string, force: boolean): string[] {
  if (!statSync(dir).isDirectory()) throw new InputError(`output folder ${dir} exists and is a file, not a folder`);
  const entries = folderEntries(dir);
  if (entries.length === 0) return [];
  const study = readStudyJson(dir);
  if (!force) {
    throw new InputError(
      `output folder ${dir} is not empty (${study ? 'it holds an earlier refinement study' : `it holds ${entries.length} entries`}); choose another with --out, or pass --force to replace an earlier study`,
    );
  }
  if (!study) throw new InputError(`output folder ${dir} is not empty and holds no earlier refinement study; --force replaces only an earlier study, choose another folder with --out`);
  const grids = studyGridFolders(study);
  // no grid run of the earlier study may still be going (a worker of a killed study, say)
  const locks: FolderLock[] = [];
  try {
    for (const g of grids) if (existsSync(join(dir, g))) locks.push(FolderLock.acquire(join(dir, g), { purpose: 'refine --force', label: join(dir, g) }));
    const kept: string[] = [];
    for (const g of grids) {
      const path = join(dir, g);
      if (!existsSync(path)) continue;
      kept.push(...removeRunFiles(path, runManifest(path), (rel) => isLockFile(rel)).map((k) => `${g}/${k}`));
    }
    for (const e of readdirSync(dir)) {
      if (/^refine\.(csv|svg)$/.test(e) || /^\.refine\.(csv|json|svg)\.\d+\.\d+\.tmp$/.test(e)) rmSync(join(dir, e), { force: true });
    }
    // refine.json last: until it goes, the folder is recognisably a study
    rmSync(join(dir, 'refine.json'), { force: true });
    for (const e of readdirSync(dir)) if (!isLockFile(e) && !/^refine\./.test(e) && !grids.includes(e)) kept.push(statSync(join(dir, e)).isDirectory() ? `${e}/` : e);
    return kept;
  } finally {
    for (const l of locks) l.release();
    for (const g of grids) removeIfEmpty(join(dir, g));
  }
}

