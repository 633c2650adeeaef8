/**
 * Executors: who runs a set of independent runs (the cases of a batch, the values of a sweep, the
 * grids of a refinement study). Locally they run in this process or in worker processes
 * (./batch.ts, ../refine/study.ts); a cluster executor (../slurm/) sends them to a scheduler
 * instead. The runs themselves are the same either way: one case document, one run folder.
 *
 * This file holds only the contract, so that the run and refine layers can take any executor
 * without knowing how it works.
 */
import type { PreparedCase } from './case.js';
import type { ProgressView } from './progress.js';
import type { RunResult } from './run-case.js';

/** One independent run: a checked case and the folder it writes. */
export interface RunPiece {
  /** Shown in progress and messages (the case name, `grid-64`, `biot-0.5`). */
  name: string;
  /** The run folder (absolute). */
  outDir: string;
  /** The case in case-file form (resolved, absolute paths): what the run is made from. */
  doc: Record<string, unknown>;
  /** For messages about the case (the file as the user named it). */
  label: string;
  /** Folder that relative paths of the case are taken from. */
  baseDir: string;
  /** The case file, when there is one. */
  file?: string;
  prepared: PreparedCase;
}

/** How one piece went; `submitted`: handed to a scheduler and not waited for. */
export interface PieceOutcome {
  status: 'finished' | 'failed' | 'stopped' | 'not-started' | 'submitted';
  /** Why it failed, stopped or was not started (absent when finished). */
  reason?: string;
  /** The run's result, when the run got as far as writing its files. */
  result?: RunResult;
}

export interface ExecuteOptions {
  /** Stop request: local runs stop cleanly; a cluster executor stops waiting (the jobs go on). */
  signal?: AbortSignal;
  view?: ProgressView;
  log?: (level: 'info' | 'warning', message: string) => void;
}

export interface RunExecutor {
  /** Short words for messages (`this machine`, `Slurm`). */
  readonly where: string;
  /** Checks that can refuse the pieces before anything is written (InputError, one line). */
  check?(pieces: readonly RunPiece[]): void;
  /** Run every piece (or hand it over); one outcome per piece, in order. */
  execute(pieces: readonly RunPiece[], options: ExecuteOptions): Promise<PieceOutcome[]>;
}
