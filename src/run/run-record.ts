/**
 * run.json while a run goes: the document (resolved case, software version, times, status,
 * grid, per-branch stop reasons, counts, timings, caution) built from the run's ledger and
 * status, and written atomically whenever it changes or grows stale.
 *
 * `status` is `running` from the first write until the run ends, then `finished`, `stopped` or
 * `failed` (with `failure`); while it is `running`, `process` names the writer.
 */
import type { Problem } from '../problem/problem.js';
import type { PreparedCase } from './case.js';
import { caseDocument } from './case.js';
import { selfIdentity } from './lock.js';
import type { Manifest } from './manifest.js';
import type { CheckpointWritten } from './run-hooks.js';
import { type ColumnPlan, type RunDirectory, type RunLedger, type RunStatus, runFormat, runFormatVersion } from './run-directory.js';
import { softwareVersion } from './version.js';
import { curveSpecialKinds } from '../continuation/curves/types.js';

/** The head of every run.json (runs and integrations): format, software, status, times, writer, checkpoint. */
export function runHeader(h: { status: RunStatus; failure?: string; note?: string; caseFile: string | null; started: string; resumes: readonly string[]; checkpoint?: object }): Record<string, unknown> {
  return {
    format: runFormat,
    'format-version': runFormatVersion,
    software: { ...softwareVersion(), node: process.version },
    status: h.status,
    ...(h.failure !== undefined ? { failure: h.failure } : {}),
    ...(h.note !== undefined ? { note: h.note } : {}),
    'case-file': h.caseFile,
    started: h.started,
    ended: h.status === 'running' ? null : isoNow(),
    ...(h.resumes.length ? { resumed: [...h.resumes] } : {}),
    // who writes this run while it goes (the folder's lock, writer.lock, holds the same identity)
    ...(h.status === 'running' ? { process: { ...selfIdentity() } } : {}),
    ...(h.checkpoint && h.status !== 'finished' ? { checkpoint: { ...h.checkpoint } } : {}),
  };
}

/** run.json's `problem`: model, summary, fields, axes (h, nodes), unknowns, extras, monitors, layout. */
export function problemDocument(problem: Problem): Record<string, unknown> {
  const description = problem.describe();
  return {
    model: description.model,
    summary: description.summary,
    fields: description.fields,
    axes: description.axes.map((a) => ({ name: a.name, intervals: a.intervals, length: a.length, h: a.h, nodes: a.nodes })),
    unknowns: problem.size,
    'grid-unknowns': problem.gridUnknowns,
    'extra-unknowns': problem.extraUnknowns.map((e) => e.name),
    monitors: Object.fromEntries(problem.monitors.map((m) => [m.name, m.description])),
    ...(description.layout ? { layout: description.layout } : {}),
  };
}

export function isoNow(): string {
  return new Date().toISOString();
}

export class RunRecord {
  status: RunStatus = 'running';
  failure: string | undefined;
  /** The last checkpoint written (or the one a resumed run started from). */
  lastCheckpoint: CheckpointWritten | undefined;
  /** Seconds spent in the continuation in this session. */
  continuationSeconds = 0;
  /** When run.json was last written (ms). */
  lastWritten = 0;
  /** Which sparse LU the continuation uses and why (the engine's `linearSolver()`, once known). */
  linearSolver: { backend: string; requested: string; reason: string } | undefined;
  /** A remark on how the run ended (e.g. left at once), recorded as `note`. */
  note: string | undefined;

  constructor(
    private readonly prepared: PreparedCase,
    private readonly plan: ColumnPlan,
    private readonly ledger: RunLedger,
    private readonly manifest: Manifest,
    readonly times: {
      /** Date.now() when this session began. */
      t0: number;
      /** When the run first started (ISO). */
      started: string;
      /** When it was resumed (ISO), this session included. */
      resumes: string[];
      /** Seconds of work in earlier sessions. */
      previousSeconds: number;
    },
  ) {}

  /** Seconds of work so far, earlier sessions included. */
  seconds(): number {
    return this.times.previousSeconds + (Date.now() - this.times.t0) / 1000;
  }

  /** The run.json document as of now. */
  document(): Record<string, unknown> {
    const { prepared, plan, ledger, status, failure } = this;
    const { problem, params, settings } = prepared;
    const { started, resumes, previousSeconds } = this.times;
    return {
      ...runHeader({ status, ...(failure !== undefined ? { failure } : {}), ...(this.note !== undefined ? { note: this.note } : {}), caseFile: prepared.file ?? null, started, resumes, ...(this.lastCheckpoint ? { checkpoint: this.lastCheckpoint } : {}) }),
      problem: problemDocument(problem),
      'start-parameters': { ...params },
      'continuation-parameter': settings.parameter,
      ...(this.linearSolver ? { 'linear-solver': { ...this.linearSolver } } : {}),
      // curve runs: what the curves follow and the parameter that adjusts along them
      ...(prepared.curve ? { follow: prepared.curve.settings.follow, 'free-parameter': prepared.curve.settings.free } : {}),
      columns: plan.columns,
      branches: ledger.branches.map((b) => ({
        id: b.id,
        depth: b.depth,
        origin: b.origin,
        file: b.file,
        points: b.points,
        ...(b.first !== undefined ? { 'first-value': b.first, 'last-value': b.last } : {}),
        ...(b.stopReason !== undefined ? { 'stop-reason': b.stopReason, 'stop-text': b.stopText, message: b.message } : {}),
        ...(b.follow !== undefined ? { follow: b.follow } : {}),
        ...(b.mode !== undefined ? { mode: b.mode } : {}),
      })),
      counts: {
        branches: ledger.branches.length,
        points: ledger.points,
        folds: ledger.specials.filter((s) => s.kind === 'fold').length,
        'branch-points': ledger.specials.filter((s) => s.kind === 'branch-point').length,
        hopf: ledger.specials.filter((s) => s.kind === 'hopf').length,
        ends: ledger.specials.filter((s) => s.kind === 'end').length,
        solutions: ledger.solutions,
        // codimension-two points of curve runs, by kind
        ...(prepared.curve ? Object.fromEntries(curveSpecialKinds.map((k) => [k, ledger.specials.filter((s) => s.kind === k).length])) : {}),
      },
      timings: {
        'continuation-seconds': previousSeconds + this.continuationSeconds,
        'total-seconds': this.seconds(),
      },
      ...(ledger.warnings.length ? { warnings: ledger.warnings } : {}),
      ...(prepared.caution ? { caution: prepared.caution } : {}),
      case: caseDocument(prepared.case),
      // every file the run wrote (or is about to write): what --force and resume may remove
      files: this.manifest.list(),
    };
  }

  /** Write run.json now. */
  write(dir: RunDirectory): void {
    dir.writeRunJson(this.document());
    this.lastWritten = Date.now();
  }
}
