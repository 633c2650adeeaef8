/**
 * Engine events into files: a branch start opens the branch's CSV, each accepted point appends
 * its row (and its solution file with `output.solutions: all`), each special point writes its
 * solution and rewrites points.json, a branch end closes the CSV; the ledger (branches, special
 * points, counts, CSV byte lengths) follows every write, so a checkpoint taken between steps
 * describes the files exactly.
 */
import type { ContinuationPoint, EngineEvent } from '../continuation/types.js';
import { stopReasonText } from '../continuation/types.js';
import { type CurveEvent, curveOnlyStopText } from '../continuation/curves/types.js';
import { addCriticality, curveBranchRecord, curveSpecialRecord, curveStartWords } from './curve-run.js';
import type { Params } from '../problem/problem.js';
import type { PreparedCase } from './case.js';
import { type BranchRecord, type ColumnPlan, type RunLedger, RunDirectory, hasStability, pointRow, specialRecord } from './run-directory.js';
import type { StopReason } from '../continuation/types.js';

/** Stop reasons that make a run `failed` when they end the first branch. */
export const failureReasons: readonly StopReason[] = ['newton-failed', 'non-finite', 'minimum-step'];

export type RunLog = (level: 'info' | 'warning', message: string) => void;

export class EventWriter {
  private readonly kindCount = new Map<string, number>();
  private stabilityWarned = false;

  constructor(
    private readonly prepared: PreparedCase,
    private readonly dir: RunDirectory,
    private readonly plan: ColumnPlan,
    private readonly ledger: RunLedger,
    private readonly log: RunLog,
    /** Called when a branch starts or ends (run.json is rewritten then). */
    private readonly branchChanged: () => void,
  ) {
    for (const s of ledger.specials) {
      const key = `${s.branch}:${s.kind}`;
      this.kindCount.set(key, (this.kindCount.get(key) ?? 0) + 1);
    }
  }

  /** Parameter values at a point (curve points: the free parameter's value too). */
  private paramsAt(value: number, free?: number): Params {
    const curve = this.prepared.curve;
    return { ...this.prepared.params, [this.prepared.settings.parameter]: value, ...(curve && free !== undefined ? { [curve.settings.free]: free } : {}) };
  }

  private branchOf(id: number): BranchRecord | undefined {
    return this.ledger.branches.find((b) => b.id === id);
  }

  handle(ev: EngineEvent | CurveEvent): void {
    const { prepared, dir, plan, ledger, log } = this;
    const { problem, settings } = prepared;
    const parameter = settings.parameter;
    const solutionsMode = prepared.case.output.solutions;
    switch (ev.type) {
      case 'branch-start': {
        if ('follow' in ev.branch) {
          // a curve run's curve (./curve-run.ts)
          const record = curveBranchRecord(ev.branch, RunDirectory.branchFile(ev.branch.id));
          ledger.branches.push(record);
          dir.openBranch(record.id, plan.columns, ledger);
          log('info', curveStartWords(ev.branch, parameter));
          this.branchChanged();
          break;
        }
        const info = ev.branch;
        const origin: BranchRecord['origin'] =
          info.origin.kind === 'start'
            ? { kind: 'start', direction: settings.direction }
            : { kind: 'branch-point', branch: info.origin.branch, value: info.origin.value };
        if (origin.kind === 'branch-point') {
          const bp = ledger.specials.find((s) => s.kind === 'branch-point' && Array.isArray(s['new-branches']) && (s['new-branches'] as number[]).includes(info.id));
          const d = bp?.['new-branch-direction'];
          if (d === 'increase' || d === 'decrease' || d === 'both') origin.direction = d;
        }
        ledger.branches.push({ id: info.id, depth: info.depth, origin, file: RunDirectory.branchFile(info.id), points: 0 });
        // every point's state of the branch will be written: the family goes to the manifest now
        if (solutionsMode === 'all') dir.claim(`solutions/branch-${info.id}-point-*.npy`);
        dir.openBranch(info.id, plan.columns, ledger);
        log('info', `branch ${info.id} started ${origin.kind === 'start' ? 'from the start point' : `at the branch point ${parameter} = ${origin.value} on branch ${origin.branch}`}`);
        this.branchChanged();
        break;
      }
      case 'point': {
        const p: ContinuationPoint = ev.point;
        dir.appendRow(p.branch, pointRow(plan, problem, p), ledger);
        if (plan.stability && !this.stabilityWarned && !hasStability(p)) {
          this.stabilityWarned = true;
          const w = `stability.eigenvalues = ${prepared.case.stability.eigenvalues}, but the points carry no stability data; the stability columns stay empty`;
          ledger.warnings.push(w);
          log('warning', w);
        }
        if (solutionsMode === 'all') {
          dir.writeSolution(`branch-${p.branch}-point-${p.index}`, problem, p.u, this.paramsAt(p.parameter, (p as { free?: number }).free));
          ledger.solutions++;
        }
        ledger.points++;
        const b = this.branchOf(p.branch);
        if (b) {
          b.points++;
          if (b.first === undefined) b.first = p.parameter;
          b.last = p.parameter;
          addCriticality(b, p.parameter, (p as { tests?: Record<string, number> }).tests);
          // (a branch's first point at a branch point is singular there: its eigenvalue count says nothing)
          if (p.stability && !(p.index === 0 && b.origin.kind === 'branch-point')) {
            const st = (b.stability ??= []);
            const last = st[st.length - 1];
            if (last && last.stable === p.stability.stable && last.unstable === p.stability.unstableCount) last.to = p.parameter;
            else st.push({ from: p.parameter, to: p.parameter, stable: p.stability.stable, unstable: p.stability.unstableCount });
          }
        }
        break;
      }
      case 'special': {
        const s = ev.point;
        const key = `${s.branch}:${s.kind}`;
        const k = (this.kindCount.get(key) ?? 0) + 1;
        this.kindCount.set(key, k);
        let file: string | undefined;
        const free = 'free' in s ? s.free : undefined;
        if (solutionsMode !== 'none') {
          file = dir.writeSolution(`branch-${s.branch}-${s.kind}-${k}`, problem, s.u, this.paramsAt(s.value, free));
          ledger.solutions++;
        }
        const curve = prepared.curve;
        ledger.specials.push(curve && 'free' in s ? curveSpecialRecord(problem, parameter, curve.settings.free, s, file) : specialRecord(problem, parameter, s as Exclude<typeof s, { free: number }>, file));
        dir.writePoints(parameter, ledger.specials);
        if (s.kind !== 'end') {
          const at = curve && free !== undefined ? `${parameter} = ${s.value}, ${curve.settings.free} = ${free}` : `${parameter} = ${s.value}`;
          log('info', `${s.kind.replace(/-/g, ' ')} on ${curve ? 'curve' : 'branch'} ${s.branch} at ${at}`);
        }
        break;
      }
      case 'branch-end': {
        const b = this.branchOf(ev.branch);
        const text = curveOnlyStopText(ev.reason) ?? stopReasonText[ev.reason as keyof typeof stopReasonText];
        if (b) {
          b.stopReason = ev.reason;
          b.stopText = text ?? ev.reason;
          b.message = ev.message;
        }
        dir.closeBranch(ev.branch);
        log(failureReasons.includes(ev.reason as StopReason) ? 'warning' : 'info', `${prepared.curve ? 'curve' : 'branch'} ${ev.branch} ended: ${ev.message || text}`);
        this.branchChanged();
        break;
      }
      case 'log':
        log(ev.level, ev.message);
        if (ev.level === 'warning') ledger.warnings.push(ev.message);
        break;
    }
  }
}
