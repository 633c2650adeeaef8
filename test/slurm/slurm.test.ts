/**
 * Runs on a real Slurm (Debian's slurm-wlm and munge, started on this machine by
 * tools/slurm/local-slurm.sh; CI starts it in .ci/run): the built binary submits real job arrays
 * with sbatch, watches them with squeue and scontrol, and the tests cancel and signal tasks with
 * the real scancel. Nothing stands in for the scheduler.
 *
 *  - a three-grid refinement study through Slurm equals the one computed here, number for number
 *    (every grid's files, refine.csv, refine.json but times, refine.svg, the printed table), and
 *    its extrapolated fold agrees with the exact 1D Bratu fold within its error estimate;
 *  - a sweep whose tasks are cancelled mid-run (scancel) and signalled as Slurm does before a
 *    time limit (SIGUSR2) is reported with the scheduler's words, resubmitted, and ends with the
 *    same files as the sweep run here;
 *  - a task holds its run folder's lock while it writes (the lock names its Slurm job) and
 *    releases it when it stops; resubmitted, it leaves alone a folder held by a writer on another
 *    node (one in a Slurm job still running, or one outside Slurm), touching nothing and saying
 *    who holds it, and takes the lock over once the scheduler says that writer's job has ended,
 *    resuming to the same files as a run here;
 *  - a task's memory estimate is what sbatch receives as --mem (scontrol shows it), and --memory
 *    replaces it;
 *  - a bad partition is refused with one line, before anything is written;
 *  - a code model runs on Slurm only as the submitting command named it: job.json records the
 *    module, the task loads that one (also when it resumes its run), `collect` asks for
 *    --load-code-model, and a forged job record loads nothing.
 *
 * Without a reachable Slurm these tests are skipped, saying why in their title (CI sets
 * BRANCHLINE_SLURM_REQUIRED=1 so that they fail instead).
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { hostname, tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { runSession } from '../../src/run/batch.js';
import { prepareCase } from '../../src/run/case.js';
import { lockFile } from '../../src/run/lock.js';
import { parseRecord } from '../../src/slurm/commands.js';
import { jobFolder, readJob, readTaskResult, taskMemoryMiB } from '../../src/slurm/job.js';
import { slurm } from './cluster.js';
import { filesBelow, runRecordWithoutTimes } from '../cli/same-files.js';

const bin = resolve('bin/branchline.js');
const tmp = mkdtempSync(join(tmpdir(), 'branchline-slurm-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

const env = { ...process.env, BRANCHLINE_SLURM_POLL_SECONDS: '1' };

function cli(args: string[]): { code: number; out: string; err: string } {
  const r = spawnSync(process.execPath, [bin, ...args], { cwd: tmp, env, encoding: 'utf8', timeout: 600_000 });
  return { code: r.status ?? -1, out: r.stdout, err: r.stderr };
}

function sh(command: string, args: string[]): string {
  const r = spawnSync(command, args, { encoding: 'utf8' });
  if (r.status !== 0) throw new Error(`${command} ${args.join(' ')}: ${r.stderr}`);
  return r.stdout;
}

const sleep = (ms: number): Promise<void> => new Promise((r) => setTimeout(r, ms));

async function until(what: string, ok: () => boolean, seconds = 300): Promise<void> {
  const end = Date.now() + seconds * 1000;
  while (!ok()) {
    if (Date.now() > end) throw new Error(`timed out waiting for ${what}`);
    await sleep(200);
  }
}

const files = filesBelow;

/** run.json without what may differ between a run here and on a cluster (times, resumes). */
const runRecord = (dir: string): Record<string, unknown> => runRecordWithoutTimes(join(dir, 'run.json'));

/** Two run folders hold the same results: every file byte for byte but run.json's times. */
function expectSameRun(here: string, there: string): void {
  expect(files(there)).toEqual(files(here));
  for (const f of files(here)) {
    if (f === 'run.json') expect(runRecord(there)).toEqual(runRecord(here));
    else expect(readFileSync(join(there, f)).equals(readFileSync(join(here, f))), `${f} differs`).toBe(true);
  }
}

function jobOf(collection: string, submission = -1): string {
  const job = readJob(collection);
  return job.submissions.at(submission)!.job;
}

/**
 * An invented damp pile cooled through its faces: long enough (400 to 600 points on a 64 × 64
 * grid, with eigenvalues: about ten seconds per task on an idle machine, against progress written
 * every two seconds) to be caught mid-run; checkpoints every 5 points.
 */
function pileCase(name: string): string {
  return `name: ${name}
model: bratu
boundary: robin
grid: {intervals: [64, 64]}
parameters: {lambda: 0.2, biot: 2}
continuation:
  parameter: lambda
  bounds: [0, 10]
  step: {initial: 0.01, min: 1.0e-8, max: 0.01}
  max-points: 2000
  stop-when: [{monitor: max, above: 4}]
stability: {eigenvalues: 2}
checkpoint: {every-points: 5}
`;
}

/** Points a task has computed, as its progress file says (0 before the first write). */
function progressOf(collection: string, task: number): number {
  try {
    return (JSON.parse(readFileSync(join(collection, 'slurm', 'progress', `${task}.json`), 'utf8')) as { points: number }).points;
  } catch {
    return 0;
  }
}

describe.skipIf(!slurm.ready)(`runs sent to Slurm (${slurm.title})`, () => {
  it('refuses a bad partition with one line naming it, before anything is written', () => {
    const out = join(tmp, 'bad-partition');
    const r = cli(['refine', resolve('test/fixtures/run/bratu-1d.yaml'), '--grids', '16,32,64', '--out', out, '--slurm', '--partition', 'no-such-partition']);
    expect(r.code).toBe(2);
    const lines = r.err.trim().split('\n');
    expect(lines).toHaveLength(1);
    expect(lines[0]).toMatch(/^branchline: Slurm refused the job array: .*partition.*no-such-partition/i);
    expect(lines[0]).toMatch(/partitions here: local/);
    expect(existsSync(out)).toBe(false);
  });

  it('passes our memory estimate to --mem (and --memory replaces it)', async () => {
    const caseFile = join(tmp, 'memory.yaml');
    // a 2D grid large enough that the estimate is above its floor
    writeFileSync(
      caseFile,
      `name: memory-check
model: bratu
grid: {intervals: [160, 160]}
parameters: {lambda: 0.5}
continuation: {parameter: lambda, bounds: [0, 10], step: {initial: 0.5}, max-points: 3}
stability: {eigenvalues: 3}
`,
    );
    const expected = taskMemoryMiB(await prepareCase(caseFile));
    expect(expected).toBeGreaterThan(192);
    const out = join(tmp, 'memory');
    // held in the queue (sbatch --hold): what the scheduler was asked is all this test needs
    const r = cli(['run', caseFile, '--out', out, '--slurm', '--no-wait', '--time-limit', '10', '--scheduler-option=--hold']);
    expect(r.code, r.err).toBe(0);
    const asked = (): number => {
      const record = parseRecord(sh('scontrol', ['show', 'job', '-o', jobOf(out)]).split('\n')[0]);
      // scontrol shows memory in M (or G when whole gigabytes)
      const m = record.MinMemoryNode;
      return m.endsWith('G') ? Number(m.slice(0, -1)) * 1024 : Number(m.replace(/M$/, ''));
    };
    expect(asked()).toBe(expected);
    expect(readFileSync(join(out, 'slurm', 'job-1.sh'), 'utf8')).toContain(`#SBATCH --mem=${expected}M`);
    expect(readJob(out).tasks[0].memoryMiB).toBe(expected);
    // a job still queued keeps the folder: a second submission is refused with the way out
    const busy = cli(['run', caseFile, '--out', out, '--slurm', '--no-wait', '--force']);
    expect(busy.code).toBe(2);
    expect(busy.err).toMatch(new RegExp(`still queued or running \\(job ${jobOf(out)}: 1 task\\); .*scancel ${jobOf(out)}`));
    sh('scancel', [jobOf(out)]);
    await until('the held job to leave the queue', () => sh('squeue', ['-h', '-j', jobOf(out)]).trim() === '');
    const again = cli(['run', caseFile, '--out', out, '--slurm', '--no-wait', '--memory', '1.5G', '--force', '--scheduler-option=--hold']);
    expect(again.code, again.err).toBe(0);
    expect(asked()).toBe(1536);
    sh('scancel', [jobOf(out)]);
  });

  it('a three-grid refinement study through Slurm equals the one computed here, number for number', () => {
    const caseFile = resolve('test/fixtures/run/bratu-1d.yaml');
    const here = join(tmp, 'refine-here');
    const there = join(tmp, 'refine-slurm');
    const a = cli(['refine', caseFile, '--grids', '16,32,64', '--out', here, '--quiet']);
    expect(a.code, a.err).toBe(0);
    const b = cli(['refine', caseFile, '--grids', '16,32,64', '--out', there, '--slurm', '--time-limit', '10']);
    expect(b.code, b.err).toBe(0);
    // the printed table and analysis are the same (the folder names differ)
    const table = (s: string): string => s.replace(/^Files in .*$/m, '');
    expect(table(b.out)).toBe(table(a.out));
    expect(b.err).toMatch(/submitted 3 tasks to Slurm as job array \d+/);
    for (const f of ['refine.csv', 'refine.svg']) expect(readFileSync(join(there, f), 'utf8')).toBe(readFileSync(join(here, f), 'utf8'));
    const study = (dir: string): Record<string, unknown> => {
      const j = JSON.parse(readFileSync(join(dir, 'refine.json'), 'utf8')) as { runs: Record<string, unknown>[] };
      for (const r of j.runs) delete r.seconds;
      return j;
    };
    expect(study(there)).toEqual(study(here));
    for (const g of ['grid-16', 'grid-32', 'grid-64']) expectSameRun(join(here, g), join(there, g));
    // collecting again (from the folders and job.json alone) gives the same study
    const again = cli(['collect', there, '--no-wait', '--quiet']);
    expect(again.code, again.err).toBe(0);
    expect(table(again.out)).toBe(table(a.out));
    expect(study(there)).toEqual(study(here));
    // every task ended COMPLETED (scontrol: accounting is off on the local Slurm)
    const job = readJob(there);
    expect(Object.values(job.states).map((s) => s.state)).toEqual(['COMPLETED', 'COMPLETED', 'COMPLETED']);
    expect(readFileSync(join(there, 'slurm', 'job-1.sh'), 'utf8')).toMatch(/#SBATCH --signal=B:USR2@60\n/);
    // outside check: the 1D Bratu fold λ* = 3.513830719125 (exact: (θ/4)·tanh(θ/4) = 1 with
    // λ = 8 (θ/4)² / cosh²(θ/4); Bratu 1914) lies within the extrapolation's error estimate
    const j = JSON.parse(readFileSync(join(there, 'refine.json'), 'utf8')) as { extrapolated: number; 'error-estimate': number };
    expect(Math.abs(j.extrapolated - 3.513830719125)).toBeLessThanOrEqual(j['error-estimate']);
  }, 600_000);

  it('a sweep whose tasks are cancelled and signalled mid-run is resubmitted from the checkpoints to the same files as here', async () => {
    const caseFile = join(tmp, 'pile.yaml');
    writeFileSync(caseFile, pileCase('pile'));
    const there = join(tmp, 'sweep-slurm');
    const r = cli(['run', caseFile, '--sweep', 'biot=1,4', '--out', there, '--slurm', '--no-wait', '--time-limit', '30']);
    expect(r.code, r.err).toBe(0);
    expect(r.out).toMatch(/Collect the results with: branchline collect /);
    const job = jobOf(there);
    const progress = (t: number): number => progressOf(there, t);
    // task 0: the signal Slurm sends before the time limit (--signal=B:USR2@...), sent now
    await until('task 0 to compute its first points', () => progress(0) >= 3);
    sh('scancel', ['--signal=USR2', '--batch', `${job}_0`]);
    // task 1: cancelled
    await until('task 1 to compute its first points', () => progress(1) >= 3);
    sh('scancel', [`${job}_1`]);
    await until('the job to leave the queue', () => sh('squeue', ['-h', '-j', job]).trim() === '');

    const looked = cli(['collect', there, '--no-wait']);
    expect(looked.code).toBe(1);
    expect(looked.out).toMatch(/biot = 1: stopped before its time limit on Slurm's signal; its checkpoint is kept/);
    expect(looked.out).toMatch(/biot = 4: cancelled \(scancel or the administrator\); it stopped cleanly and its checkpoint is kept \(Slurm: CANCELLED/);
    expect(looked.out).toMatch(/To resubmit the 2 unfinished from their checkpoints: branchline collect .* --resubmit/);
    for (const [t, stop] of [[0, 'time-limit'], [1, 'terminated']] as const) {
      const saved = readTaskResult(there, t)!;
      expect(saved.stop).toBe(stop);
      expect(saved.result?.status).toBe('stopped');
      const run = JSON.parse(readFileSync(join(there, t === 0 ? 'biot-1' : 'biot-4', 'run.json'), 'utf8')) as { status: string; counts: { points: number } };
      expect(run.status).toBe('stopped');
      // mid-run: points were written, and not all of them
      expect(run.counts.points).toBeGreaterThan(0);
    }

    const resumed = cli(['collect', there, '--resubmit']);
    expect(resumed.code, resumed.err).toBe(0);
    expect(resumed.err).toMatch(/submitted 2 tasks to Slurm as job array \d+ \(tasks 0-1;/);
    expect(readJob(there).submissions).toHaveLength(2);
    for (const t of [0, 1]) expect(readFileSync(join(there, 'slurm', 'logs', `${jobOf(there)}_${t}.txt`), 'utf8')).toMatch(/resuming from checkpoint/);

    // the same sweep here, in two worker processes
    const here = join(tmp, 'sweep-here');
    const local = cli(['run', caseFile, '--sweep', 'biot=1,4', '--out', here, '--jobs', '2', '--quiet']);
    expect(local.code, local.err).toBe(0);
    expect(resumed.out.replace(/^Files in .*$/m, '')).toContain(local.out.replace(/^Files in .*$/m, '').split('\n').slice(0, 4).join('\n'));
    for (const f of ['sweep.csv', 'sweep.svg']) expect(readFileSync(join(there, f), 'utf8')).toBe(readFileSync(join(here, f), 'utf8'));
    for (const v of ['biot-1', 'biot-4']) {
      expectSameRun(join(here, v), join(there, v));
      expect((JSON.parse(readFileSync(join(there, v, 'run.json'), 'utf8')) as { resumed?: string[] }).resumed).toHaveLength(1);
    }
  }, 900_000);

  it('a code model runs on Slurm only as the submitting command named it; a forged job record loads nothing', async () => {
    const model = resolve('test/fixtures/code-model.mjs');
    const caseFile = join(tmp, 'sine.yaml');
    writeFileSync(caseFile, `name: sine\nmodel: ${model}\ngrid: {intervals: [20]}\ncontinuation: {parameter: lambda, bounds: [0, 30], max-points: 40}\ncheckpoint: {every-points: 1}\n`);
    const marker = join(tmp, 'evil-was-imported');
    const evil = join(tmp, 'evil.mjs');
    writeFileSync(evil, `import { appendFileSync } from 'node:fs';\nappendFileSync(${JSON.stringify(marker)}, 'imported\\n');\nexport default function () { throw new Error('evil'); }\n`);

    // the user's command names the module: the task loads it (the one job.json records)
    const there = join(tmp, 'sine-slurm');
    const r = cli(['run', caseFile, '--out', there, '--slurm', '--time-limit', '10', '--quiet']);
    expect(r.code, r.err).toBe(0);
    expect(readJob(there).tasks[0].codeModel).toBe(model);
    const here = join(tmp, 'sine-here');
    expect(cli(['run', caseFile, '--out', here, '--quiet']).code).toBe(0);
    expect(readFileSync(join(there, 'sine', 'branches/1.csv'), 'utf8')).toBe(readFileSync(join(here, 'branches/1.csv'), 'utf8'));
    // collect reads a folder: the job's module loads only when asked for, its path shown first
    const refused = cli(['collect', there, '--no-wait', '--quiet']);
    expect(refused.code).toBe(2);
    expect(refused.err).toMatch(/sine-slurm: the job's cases use the code model '.*test\/fixtures\/code-model\.mjs', and a folder never loads code by itself; pass --load-code-model/);
    const asked = cli(['collect', there, '--no-wait', '--quiet', '--load-code-model']);
    expect(asked.code, asked.err).toBe(0);
    expect(asked.err).toMatch(/loading the code model '.*test\/fixtures\/code-model\.mjs', as the job's cases name it/);

    // a task resuming its run loads the module the job records (held job: the task is started here by hand, as the job script would)
    const held = join(tmp, 'sine-held');
    expect(cli(['run', caseFile, '--out', held, '--slurm', '--no-wait', '--scheduler-option=--hold', '--quiet']).code).toBe(0);
    sh('scancel', [jobOf(held)]);
    await until('the held job to leave the queue', () => sh('squeue', ['-h', '-j', jobOf(held)]).trim() === '');
    const prepared = await prepareCase(caseFile);
    const controller = new AbortController();
    const view = { start() {}, log() {}, end() {}, close() {}, update: (_n: string | undefined, p: { points: number }) => p.points >= 5 && controller.abort() };
    const stopped = await runSession(prepared, { outDir: join(held, 'sine'), signal: controller.signal, view, name: 'sine' });
    expect(stopped.status).toBe('stopped');
    const task = (dir: string): { code: number; out: string; err: string } => {
      const t = spawnSync(process.execPath, [bin, 'task', jobFolder(dir), '--index', '0'], { cwd: tmp, env, encoding: 'utf8', timeout: 300_000 });
      return { code: t.status ?? -1, out: t.stdout, err: t.stderr };
    };
    const resumed = task(held);
    expect(resumed.code, resumed.out + resumed.err).toBe(0);
    expect(resumed.out).toMatch(/resuming from checkpoint/);
    expect(readFileSync(join(held, 'sine', 'branches/1.csv'), 'utf8')).toBe(readFileSync(join(here, 'branches/1.csv'), 'utf8'));

    // forged job records: the case names another module, with and without a matching codeModel
    const forge = (name: string, codeModel: string | undefined): string => {
      const dir = join(tmp, name);
      expect(cli(['run', caseFile, '--out', dir, '--slurm', '--no-wait', '--scheduler-option=--hold', '--quiet']).code).toBe(0);
      sh('scancel', [jobOf(dir)]);
      const job = readJob(dir);
      job.tasks[0].doc = { ...job.tasks[0].doc, model: evil };
      if (codeModel === undefined) delete job.tasks[0].codeModel;
      else job.tasks[0].codeModel = codeModel;
      writeFileSync(join(jobFolder(dir), 'job.json'), JSON.stringify(job));
      return dir;
    };
    const noRecord = forge('sine-forged-a', undefined);
    const otherRecord = forge('sine-forged-b', model);
    const both = forge('sine-forged-c', evil);
    for (const dir of [noRecord, otherRecord]) {
      const t = task(dir);
      expect(t.code).toBe(1);
      expect(t.out).toMatch(/model: the code model .*evil\.mjs is not loaded: a case read back from a folder never runs code the user did not name/);
    }
    // a resubmission would run the recorded module: collect asks first
    await until('the forged jobs to leave the queue', () => [both].every((d) => sh('squeue', ['-h', '-j', jobOf(d)]).trim() === ''));
    const again = cli(['collect', both, '--resubmit', '--no-wait']);
    expect(again.code).toBe(2);
    expect(again.err).toMatch(/the job's cases use the code model '.*evil\.mjs'.*pass --load-code-model/);
    expect(readJob(both).submissions).toHaveLength(1);
    expect(existsSync(marker)).toBe(false);

    // the job record's setup lines and sbatch options are shell commands and scheduler input: a
    // resubmission runs them only with --run-setup (a forged record runs nothing by itself)
    const setupForged = join(tmp, 'sine-forged-setup');
    expect(cli(['run', caseFile, '--out', setupForged, '--slurm', '--no-wait', '--scheduler-option=--hold', '--quiet']).code).toBe(0);
    sh('scancel', [jobOf(setupForged)]);
    await until('the job with forged setup lines to leave the queue', () => sh('squeue', ['-h', '-j', jobOf(setupForged)]).trim() === '');
    const record = readJob(setupForged);
    record.submissions[0].settings.setup = [`touch ${marker}`];
    writeFileSync(join(jobFolder(setupForged), 'job.json'), JSON.stringify(record));
    const refusedSetup = cli(['collect', setupForged, '--resubmit', '--no-wait', '--load-code-model']);
    expect(refusedSetup.code).toBe(2);
    expect(refusedSetup.err).toMatch(/resubmitting would run what the job folder stores \(setup line 'touch .*', sbatch option '--hold'\), and a folder never runs commands by itself; pass --run-setup/);
    expect(readJob(setupForged).submissions).toHaveLength(1);
    expect(existsSync(marker)).toBe(false);
  }, 600_000);

  it('a resumed task holds its folder’s lock: a writer on another node is left alone until the scheduler says its job has ended', async () => {
    const caseFile = join(tmp, 'held.yaml');
    writeFileSync(caseFile, pileCase('held'));
    const there = join(tmp, 'held-slurm');
    const dir = join(there, 'held');
    const r = cli(['run', caseFile, '--out', there, '--slurm', '--no-wait', '--time-limit', '30']);
    expect(r.code, r.err).toBe(0);
    const job = jobOf(there);
    await until('the task to compute its first points', () => progressOf(there, 0) >= 3);
    // while it writes, the task holds the folder's lock, naming its Slurm job (an array task's own id)
    const lock = JSON.parse(readFileSync(join(dir, lockFile), 'utf8')) as Record<string, unknown>;
    expect(lock).toMatchObject({ host: hostname(), purpose: `slurm task ${job}_0` });
    expect(lock['slurm-job']).toMatch(/^\d+$/);
    sh('scancel', ['--signal=USR2', '--batch', `${job}_0`]);
    await until('the job to leave the queue', () => sh('squeue', ['-h', '-j', job]).trim() === '');
    expect(JSON.parse(readFileSync(join(dir, 'run.json'), 'utf8'))).toMatchObject({ status: 'stopped' });
    expect(existsSync(join(dir, lockFile)), 'the stopped task released its lock').toBe(false);

    const contents = (): Map<string, string> => new Map(files(dir).map((f) => [f, readFileSync(join(dir, f)).toString('base64')]));
    const before = contents();
    // a writer on another node, in a Slurm job that still runs (a job that only sleeps)
    const sleeper = sh('sbatch', ['--parsable', '--time=10', '--mem=20', '--output=/dev/null', '--wrap', 'sleep 600']).trim().split(';')[0];
    try {
      await until('the sleeping job to run', () => sh('squeue', ['-h', '-j', sleeper, '-o', '%T']).trim() === 'RUNNING');
      const foreign = (extra: Record<string, string>): void =>
        writeFileSync(join(dir, lockFile), JSON.stringify({ pid: 4242, host: 'node-elsewhere.example', boot: 'b', 'process-start': '1', purpose: 'resume', since: '2026-01-01T00:00:00.000Z', ...extra }) + '\n');
      // … and one outside Slurm (a user's resume on the login node): neither can be judged from here
      for (const [holder, words] of [[{ 'slurm-job': sleeper }, ` in Slurm job ${sleeper}`], [{}, '']] as const) {
        foreign(holder);
        const placed = contents();
        const refused = cli(['collect', there, '--resubmit']);
        expect(refused.code, refused.err).toBe(1);
        expect(refused.out + refused.err).toMatch(new RegExp(`the task left its run folder alone: .*held: is being written by process 4242 \\(resume, since 2026-01-01T00:00:00\\.000Z\\) on host node-elsewhere\\.example${words}, which cannot be checked from here; the task leaves the folder alone`));
        expect(readTaskResult(there, 0)).toMatchObject({ held: true });
        // nothing touched: every file, and the other writer's lock, as they were
        expect(contents()).toEqual(placed);
        placed.delete(lockFile);
        expect(placed).toEqual(before);
      }
      // the writer's job ends (here: cancelled): its lock is stale, and the task takes it over
      foreign({ 'slurm-job': sleeper });
    } finally {
      sh('scancel', [sleeper]);
    }
    await until('the sleeping job to leave the queue', () => sh('squeue', ['-h', '-j', sleeper]).trim() === '');
    const resumed = cli(['collect', there, '--resubmit']);
    expect(resumed.code, resumed.out + resumed.err).toBe(0);
    expect(readFileSync(join(there, 'slurm', 'logs', `${jobOf(there)}_0.txt`), 'utf8')).toMatch(/resuming from checkpoint/);
    expect(existsSync(join(dir, lockFile)), 'the finished task released its lock').toBe(false);
    const here = join(tmp, 'held-here');
    const local = cli(['run', caseFile, '--out', here, '--quiet']);
    expect(local.code, local.err).toBe(0);
    expectSameRun(here, dir);
  }, 900_000);
});
