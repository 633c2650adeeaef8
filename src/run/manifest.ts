/**
 * The files a run wrote: run.json's `files` (the manifest), kept so that replacing a run
 * (`run --force`), starting a run over and resuming remove exactly what a run wrote and nothing
 * the user put in the folder (notes, figures, their own CSVs).
 *
 * Entries are paths relative to the run folder, in our naming scheme only:
 *
 *   run.json, points.json, points.csv, diagram.svg, checkpoint.bin, checkpoint.previous.bin
 *   branches/<id>.csv
 *   solutions/<name>.npy                 a special point's (or a point's) state
 *   solutions/branch-<id>-point-*.npy    every point's state of one branch (output.solutions: all;
 *                                        `*` stands for a point number)
 *   monitors.csv, monitors.svg, solutions/final.npy, plots/initial.svg, plots/final.svg,
 *   snapshots/time-*.npy                 a time integration's (`settle`; `*` stands for a time)
 *
 * and, derived: plots/<name>.svg for every solution file, and the temporary files of the atomic
 * writes of any of them (`.<file>.<pid>.<n>.tmp` beside it). A file is added to the manifest, and
 * run.json rewritten, before the file is created, so that at every instant the manifest covers
 * every file of the run. An entry outside the scheme (a forged or edited run.json naming a user's
 * file, or a path leaving the folder) makes the manifest unusable: nothing is removed by it.
 */
import { existsSync, lstatSync, readdirSync, rmdirSync, rmSync } from 'node:fs';
import { join } from 'node:path';

/** File names of checkpoints (checkpoint.ts writes them). */
export const checkpointFile = 'checkpoint.bin';
export const previousCheckpointFile = 'checkpoint.previous.bin';

/** Files every run has (or may have) under fixed names. */
export const fixedRunFiles = ['run.json', 'points.json', 'points.csv', 'diagram.svg', checkpointFile, previousCheckpointFile] as const;

/** Files a time integration (`settle`) has under fixed names, besides run.json and the checkpoints. */
const fixedSettleFiles = ['monitors.csv', 'monitors.svg', 'solutions/final.npy', 'plots/initial.svg', 'plots/final.svg', 'snapshots/time-*.npy'];

/**
 * Files a search for steady states (`find-states`) has, besides run.json and diagram.svg: its
 * tables, its states, and the run folders of its traces (`traces/state-*`: every file a run
 * writes, inside traces/state-<K>-increase/ and traces/state-<K>-decrease/).
 */
const fixedFindFiles = ['states.csv', 'solves.csv', 'solutions/state-*.npy', 'traces/state-*'];
const stateFile = /^solutions\/state-\d+\.npy$/;
const traceFile = /^traces\/state-\d+-(?:increase|decrease)\/(.+)$/;

/** Sub-folders a run writes into. */
const runFolders = ['branches', 'solutions', 'plots', 'snapshots', 'traces'] as const;

const snapshotFile = /^snapshots\/time-(-?inf|nan|[-+0-9.e]+)\.npy$/;

const solutionName = /^branch-\d+-[a-z]+(?:-[a-z]+)*-\d+$/;
const branchFile = /^branches\/\d+\.csv$/;
const solutionFile = /^solutions\/([^/]+)\.npy$/;
const pointFamily = /^solutions\/branch-(\d+)-point-\*\.npy$/;

/** Whether `entry` is a name a run writes (see the header); a manifest with any other entry is unusable. */
export function isRunFileEntry(entry: string): boolean {
  if ((fixedRunFiles as readonly string[]).includes(entry) || fixedSettleFiles.includes(entry) || fixedFindFiles.includes(entry)) return true;
  if (branchFile.test(entry) || pointFamily.test(entry)) return true;
  const s = solutionFile.exec(entry);
  return s !== null && solutionName.test(s[1]);
}

/** Inside a trace's run folder: a run's plots and the temporary files of its atomic writes. */
function traceExtra(inner: string): boolean {
  const plot = /^plots\/([^/]+)\.svg$/.exec(inner);
  if (plot) return solutionName.test(plot[1]);
  const slash = inner.lastIndexOf('/');
  const tmp = /^\.(.+)\.\d+\.\d+\.tmp$/.exec(inner.slice(slash + 1));
  return tmp !== null && !tmp[1].startsWith('.') && isRunFileEntry(inner.slice(0, slash + 1) + tmp[1]);
}

/** Whether a file name in plots/ is one a run draws (`<solution name>.svg`), not a user's figure. */
export function isRunPlotName(name: string): boolean {
  return name.endsWith('.svg') && solutionName.test(name.slice(0, -4));
}

export class Manifest {
  private readonly entries: string[];
  private readonly families: RegExp[] = [];

  constructor(entries: readonly string[] = fixedRunFiles) {
    this.entries = [];
    for (const e of entries) this.add(e);
  }

  /** The entries, in the order they were added (run.json `files`). */
  list(): string[] {
    return this.entries.slice();
  }

  /** Add an entry; true when it was not there yet (run.json must then be rewritten before the file is created). */
  add(entry: string): boolean {
    if (!isRunFileEntry(entry)) throw new Error(`not a file name a run writes: ${entry}`);
    if (this.entries.includes(entry)) return false;
    this.entries.push(entry);
    const f = pointFamily.exec(entry);
    if (f) this.families.push(new RegExp(`^solutions/branch-${f[1]}-point-\\d+\\.npy$`));
    return true;
  }

  /** Whether the file `rel` (relative to the run folder) is one the run wrote. */
  covers(rel: string): boolean {
    if (this.entries.includes(rel)) return true;
    if (this.families.some((r) => r.test(rel))) return true;
    if (snapshotFile.test(rel) && this.entries.includes('snapshots/time-*.npy')) return true;
    if (stateFile.test(rel) && this.entries.includes('solutions/state-*.npy')) return true;
    // a file of a trace's run folder, by the names a run writes (its own solutions and plots included)
    const trace = traceFile.exec(rel);
    if (trace && this.entries.includes('traces/state-*')) return isRunFileEntry(trace[1]) || /^branches\/\d+\.csv$/.test(trace[1]) || traceExtra(trace[1]);
    const slash = rel.lastIndexOf('/');
    const folder = slash < 0 ? '' : rel.slice(0, slash + 1);
    const base = rel.slice(slash + 1);
    // plots/<name>.svg of a solution of the run
    const plot = /^plots\/([^/]+)\.svg$/.exec(rel);
    if (plot && this.covers(`solutions/${plot[1]}.npy`)) return true;
    // a temporary file of an atomic write of one of the run's files
    const tmp = /^\.(.+)\.\d+\.\d+\.tmp$/.exec(base);
    if (tmp && !tmp[1].startsWith('.') && this.covers(folder + tmp[1])) return true;
    return false;
  }
}

/** The manifest of the run in `dir` (run.json `files`), or why there is none usable. */
export function readManifest(run: Record<string, unknown>): Manifest | string {
  const files = run.files;
  if (!Array.isArray(files)) return 'its run.json lists no files (not written by this version of branchline, or not a run)';
  const bad = files.find((f) => typeof f !== 'string' || !isRunFileEntry(f));
  if (bad !== undefined) return `its run.json lists ${JSON.stringify(bad)}, which is not a file a run writes (edited or not a run)`;
  return new Manifest(files as string[]);
}

/** A manifest of every name in the scheme (runs written before run.json had `files`), for resuming them. */
export function schemeManifest(dir: string): Manifest {
  const m = new Manifest();
  for (const folder of ['branches', 'solutions'] as const) {
    let names: string[] = [];
    try {
      names = readdirSync(join(dir, folder));
    } catch {
      /* none */
    }
    for (const n of names) if (isRunFileEntry(`${folder}/${n}`)) m.add(`${folder}/${n}`);
  }
  return m;
}

/** Every file below `dir` (relative paths, folders descended, symbolic links not followed). */
function filesBelow(dir: string, rel = ''): string[] {
  const out: string[] = [];
  let names: string[];
  try {
    names = readdirSync(join(dir, rel));
  } catch {
    return out;
  }
  for (const n of names.sort()) {
    const r = rel ? `${rel}/${n}` : n;
    let isDir = false;
    try {
      isDir = lstatSync(join(dir, r)).isDirectory();
    } catch {
      continue;
    }
    if (isDir) {
      const inner = filesBelow(dir, r);
      out.push(...(inner.length ? inner : [`${r}/`]));
    } else out.push(r);
  }
  return out;
}

/**
 * Remove from `dir` every file the manifest covers (and the run's sub-folders when they end up
 * empty); `ignore` names files left alone silently (the lock). Returns what was kept: the user's
 * files, relative to the folder.
 */
export function removeRunFiles(dir: string, manifest: Manifest, ignore: (rel: string) => boolean = () => false): string[] {
  const kept: string[] = [];
  for (const rel of filesBelow(dir)) {
    if (ignore(rel)) continue;
    if (!rel.endsWith('/') && manifest.covers(rel)) rmSync(join(dir, rel), { force: true });
    else kept.push(rel);
  }
  // a search's trace folders, emptied: their sub-folders, then themselves
  if (existsSync(join(dir, 'traces'))) {
    for (const t of readdirSync(join(dir, 'traces'))) {
      if (!/^state-\d+-(?:increase|decrease)$/.test(t)) continue;
      for (const f of [...runFolders, '']) {
        try {
          const p = join(dir, 'traces', t, f);
          if (existsSync(p) && readdirSync(p).length === 0) rmdirSync(p);
        } catch {
          /* not empty or gone */
        }
      }
    }
  }
  for (const f of runFolders) {
    try {
      if (existsSync(join(dir, f)) && readdirSync(join(dir, f)).length === 0) rmdirSync(join(dir, f));
    } catch {
      /* not empty or gone */
    }
  }
  return kept.filter((k) => !(k.endsWith('/') && runFolders.some((f) => k === `${f}/`)));
}

/** A list of kept files in words (at most `most` named). */
export function keptText(kept: readonly string[], most = 6): string {
  const shown = kept.slice(0, most).join(', ');
  return kept.length > most ? `${shown} and ${kept.length - most} more` : shown;
}

/** What --force says when it replaced an earlier run or study and left the user's files in place. */
export function keptMessage(kept: readonly string[], what: 'run' | 'study'): string {
  return `replaced the earlier ${what}; kept ${kept.length} file${kept.length === 1 ? '' : 's'} it did not write: ${keptText(kept)}`;
}
