/**
 * How a task's end is told, for the ends a single-node test Slurm cannot produce on demand (a
 * real time-limit kill, the memory limit of a cgroup, a node failure, a controller that has
 * forgotten the job): the final state recorded in job.json as scontrol or sacct reported it
 * (words from Slurm's squeue(1) "JOB STATE CODES"), the run folder and the task's result give the
 * outcome, its reason in words, and whether a resubmission can help. The scheduler itself is
 * exercised in slurm.test.ts.
 */
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import type { TaskState } from '../../src/slurm/commands.js';
import { type JobRecord, jobFormat, judgeTasks, writeTaskResult } from '../../src/slurm/job.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-judge-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

interface Setup {
  state?: Omit<TaskState, 'job' | 'task'>;
  run?: { status: string; failure?: string };
  checkpoint?: boolean;
  result?: { stop?: 'time-limit' | 'terminated'; status?: 'finished' | 'failed' | 'stopped'; failure?: string; error?: string; held?: boolean };
  log?: string;
}

function judge(s: Setup) {
  const collection = mkdtempSync(join(tmp, 'job-'));
  const slurm = join(collection, 'slurm');
  mkdirSync(join(slurm, 'logs'), { recursive: true });
  mkdirSync(join(slurm, 'results'), { recursive: true });
  const run = join(collection, 'case-a');
  mkdirSync(run);
  if (s.run) writeFileSync(join(run, 'run.json'), JSON.stringify({ format: 'branchline run', ...s.run }));
  if (s.checkpoint) writeFileSync(join(run, 'checkpoint.bin'), 'x');
  if (s.log) writeFileSync(join(slurm, 'logs', '7_0.txt'), s.log);
  const job: JobRecord = {
    format: jobFormat,
    'format-version': 1,
    kind: 'runs',
    created: new Date().toISOString(),
    tasks: [{ index: 0, name: 'case-a', directory: 'case-a', doc: {}, label: 'a.yaml', baseDir: tmp, memoryMiB: 192, parameter: 'lambda', maxPoints: 10 }],
    submissions: [{ job: '7', tasks: [0], submitted: new Date().toISOString(), script: 'job-1.sh', memoryMiB: 192, settings: { schedulerOptions: [], setup: [] } }],
    states: s.state ? { '7_0': { job: '7', task: 0, ...s.state } } : {},
    context: {},
  };
  writeFileSync(join(slurm, 'job.json'), JSON.stringify(job));
  if (s.result) {
    const { stop, error, held, ...r } = s.result;
    writeTaskResult(collection, {
      job: '7',
      task: 0,
      host: 'node1',
      ...(stop ? { stop } : {}),
      ...(error !== undefined ? { error } : {}),
      ...(held ? { held } : {}),
      ...(r.status ? { result: { status: r.status, directory: run, record: {}, ledger: { branches: [], specials: [], points: 0, solutions: 0, warnings: [], csvLengths: {} }, seconds: 1, ...(r.failure ? { failure: r.failure } : {}) } } : {}),
    });
  }
  return judgeTasks(collection)[0];
}

describe('the end of a task, in words', () => {
  it('a task still queued is submitted', () => {
    const o = judge({});
    expect(o.status).toBe('submitted');
    expect(o.resubmit).toBe(false);
  });

  it('a finished run is finished, whatever its task exit', () => {
    const o = judge({ state: { state: 'COMPLETED', exitCode: '0:0' }, run: { status: 'finished' }, result: { status: 'finished' } });
    expect(o.status).toBe('finished');
    expect(o.result?.status).toBe('finished');
    expect(o.resubmit).toBe(false);
  });

  it('a task killed at its time limit is stopped and resubmitted from its checkpoint', () => {
    const o = judge({ state: { state: 'TIMEOUT', reason: 'TimeLimit', exitCode: '0:15' }, run: { status: 'running' }, checkpoint: true });
    expect(o.status).toBe('stopped');
    expect(o.reason).toBe('hit its time limit; its checkpoint is kept (Slurm: TIMEOUT, TimeLimit, exit code 0:15)');
    expect(o.resubmit).toBe(true);
  });

  it('a task that stopped on the warning signal says so', () => {
    const o = judge({ state: { state: 'FAILED', reason: 'NonZeroExitCode', exitCode: '1:0' }, run: { status: 'stopped' }, checkpoint: true, result: { stop: 'time-limit', status: 'stopped' } });
    expect(o.reason).toMatch(/^stopped before its time limit on Slurm's signal; its checkpoint is kept/);
    expect(o.resubmit).toBe(true);
  });

  it('a task out of memory names what it asked for', () => {
    const o = judge({ state: { state: 'OUT_OF_MEMORY', reason: 'OutOfMemory', exitCode: '0:125' }, run: { status: 'running' }, checkpoint: true });
    expect(o.status).toBe('failed');
    expect(o.reason).toMatch(/^ran out of memory \(it asked for 192 MiB; resubmit with a larger --memory\); its checkpoint is kept/);
    expect(o.resubmit).toBe(true);
  });

  it('a node failure or preemption is the cluster ending the task', () => {
    for (const st of ['NODE_FAIL', 'PREEMPTED']) {
      const o = judge({ state: { state: st }, run: { status: 'running' } });
      expect(o.status).toBe('stopped');
      expect(o.reason).toMatch(new RegExp(`^ended by the cluster \\(${st.toLowerCase().replace('_', ' ')}\\); no checkpoint yet: it starts again`));
      expect(o.resubmit).toBe(true);
    }
  });

  it('a run that failed numerically is not resubmitted (it would fail the same way)', () => {
    const o = judge({ state: { state: 'FAILED', reason: 'NonZeroExitCode', exitCode: '1:0' }, run: { status: 'failed', failure: 'branch 1 ended: Newton failed' }, result: { status: 'failed', failure: 'branch 1 ended: Newton failed' } });
    expect(o.status).toBe('failed');
    expect(o.reason).toBe('the run failed: branch 1 ended: Newton failed (Slurm: FAILED, NonZeroExitCode, exit code 1:0)');
    expect(o.resubmit).toBe(false);
  });

  it('a task that found its run folder held by another writer touched nothing and is resubmitted', () => {
    const error = '/c/case-a: is being written by process 812 (resume, since 2026-01-01T00:00:00.000Z) on host login1, which cannot be checked from here; the task leaves the folder alone (resubmit it once that writer has ended)';
    const o = judge({ state: { state: 'FAILED', reason: 'NonZeroExitCode', exitCode: '1:0' }, run: { status: 'stopped' }, checkpoint: true, result: { error, held: true } });
    expect(o.status).toBe('failed');
    expect(o.reason).toBe(`the task left its run folder alone: ${error}; its checkpoint is kept (Slurm: FAILED, NonZeroExitCode, exit code 1:0)`);
    expect(o.resubmit).toBe(true);
    // the same error without `held` is a run that cannot start (not resubmitted)
    expect(judge({ state: { state: 'FAILED', reason: 'NonZeroExitCode', exitCode: '1:0' }, run: { status: 'stopped' }, checkpoint: true, result: { error } }).resubmit).toBe(false);
  });

  it('a task that died before its run started shows the end of its log', () => {
    const o = judge({ state: { state: 'FAILED', reason: 'NonZeroExitCode', exitCode: '127:0' }, log: 'job-1.sh: line 14: module: command not found\n' });
    expect(o.status).toBe('failed');
    expect(o.reason).toBe(
      'the task ended before its run finished: its run never started; the log ends: job-1.sh: line 14: module: command not found; no checkpoint yet: it starts again (Slurm: FAILED, NonZeroExitCode, exit code 127:0)',
    );
    expect(o.resubmit).toBe(true);
  });

  it('a task the controller forgot (no accounting) is judged from its run folder', () => {
    const o = judge({ state: { state: 'UNKNOWN', reason: 'the scheduler no longer knows the task (accounting is off)' }, run: { status: 'running' }, checkpoint: true });
    expect(o.status).toBe('failed');
    expect(o.reason).toMatch(/^the task ended before its run finished: its run ended without finishing; its checkpoint is kept \(Slurm: UNKNOWN, the scheduler no longer knows/);
    expect(o.resubmit).toBe(true);
  });
});
