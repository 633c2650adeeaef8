/**
 * What the run layer hands to the hooks a run calls while it goes — progress reports, the
 * checkpoint context and what a checkpoint hook reports back — and the sync-point period.
 *
 * Shared by run-case.ts (which calls the hooks) and checkpoint.ts (which implements the
 * checkpoint hook), so that the dependency runs one way: run-case → checkpoint → run-hooks.
 */
import type { RunDirectory, RunLedger } from './run-directory.js';

/**
 * Sync points: the engine starts its linear algebra afresh after each branch's first point and
 * then after every this many points along the branch (syncIndex in src/continuation/engine.ts,
 * between steps; counted per branch so that branches traced side by side in helper threads
 * restart where a run on one core does). Checkpoints are taken only at sync points: a run resumed from one repeats the
 * uninterrupted run bit for bit (kept pivot orders and the eigen solver's random start vectors
 * would otherwise differ in the last digits, and eigenvalues near a collision or located Hopf
 * points magnify such differences up to their tolerances). The cost is one fresh factorisation
 * per sync point (a few per cent at most).
 */
export const syncEvery = 5;

export interface ProgressInfo {
  branch: number;
  /** Point index on the branch. */
  index: number;
  parameter: number;
  step: number;
  /** Points written in this run so far (all branches). */
  points: number;
  maxPoints: number;
}

/** The ledger and engine state at a sync point, with its point count. */
export interface SyncState {
  ledger: RunLedger;
  snapshot: unknown;
  points: number;
}

export interface CheckpointContext {
  /** 'point': points were written since the last call (called between steps); 'stop': the run is stopping on request. */
  reason: 'point' | 'stop';
  /** This moment is a sync point (see `syncEvery`): a checkpoint of it resumes bit for bit. */
  sync: boolean;
  /** The ledger and engine state at the last sync point (for a stop between sync points), with its point count. */
  lastSync?: SyncState;
  directory: RunDirectory;
  /** The run layer's own state (branches, special points, CSV byte lengths): plain, checkpointable. */
  ledger: RunLedger;
  /** Whether the engine can be snapshotted now (between steps). */
  canSnapshot: boolean;
  /** The engine's state (plain object with Float64Arrays). */
  snapshot(): unknown;
  /** The resolved case in case-file form (what a resume reads back). */
  caseDocument: Record<string, unknown>;
  run: {
    started: string;
    /** Seconds of work so far, earlier sessions included. */
    seconds(): number;
    caseFile: string | null;
    /** When the run was resumed before (ISO times). */
    resumes: string[];
  };
}

/** What a checkpoint hook reports when it wrote one (recorded in run.json). */
export interface CheckpointWritten {
  file: string;
  sequence: number;
  written: string;
  points: number;
}
