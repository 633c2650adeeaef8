/**
 * The real Slurm commands, called as a user would call them: `sbatch` (with `--test-only` to have
 * the scheduler check a job before anything is written), `squeue`, `scontrol show job`,
 * `scontrol show config` and, when accounting is on, `sacct`. Their output is parsed here and
 * nowhere else; their refusals become one-line errors.
 *
 * Nothing here stands in for the scheduler: with no Slurm on PATH every call fails with a clear
 * message.
 */
import { spawnSync } from 'node:child_process';
import { InputError, oneLine } from '../run/errors.js';

/** What a Slurm command printed. */
interface Output {
  code: number;
  stdout: string;
  stderr: string;
}

/** Seconds a Slurm command may take before we give up on it (a busy controller answers slowly). */
const commandSeconds = 120;

function call(command: string, args: readonly string[], input?: string, cwd?: string): Output {
  const r = spawnSync(command, args, { encoding: 'utf8', timeout: commandSeconds * 1000, ...(input !== undefined ? { input } : {}), ...(cwd ? { cwd } : {}) });
  if (r.error) {
    const code = (r.error as NodeJS.ErrnoException).code;
    if (code === 'ENOENT') throw new InputError(`${command} not found: running on Slurm needs its commands (sbatch, squeue, scontrol) on PATH`);
    throw new InputError(`${command} could not be run (${code ?? r.error.message})`);
  }
  return { code: r.status ?? 1, stdout: r.stdout ?? '', stderr: r.stderr ?? '' };
}

/** The scheduler's own words from stderr, one line (`sbatch: error:` prefixes dropped). */
export function schedulerMessage(stderr: string): string {
  const lines = stderr
    .split('\n')
    .map((l) => l.replace(/^\s*(sbatch|squeue|scontrol|sacct|srun):\s*(error:\s*)?/i, '').trim())
    .filter((l) => l.length > 0);
  return oneLine([...new Set(lines)].join('; ')) || 'no message';
}

/** Partition names the scheduler knows (for messages). */
export function partitions(): string[] {
  try {
    const r = call('sinfo', ['-h', '-o', '%R']);
    return r.code === 0 ? [...new Set(r.stdout.split('\n').map((s) => s.trim()).filter(Boolean))] : [];
  } catch {
    return [];
  }
}

/**
 * Have the scheduler check a job script without submitting it (`sbatch --test-only`): a bad
 * partition, account, time limit or memory request is refused here, before anything is written.
 */
export function checkJob(script: string, cwd: string): void {
  const r = call('sbatch', ['--test-only'], script, cwd);
  if (r.code === 0) return;
  const message = schedulerMessage(r.stderr);
  let hint = '';
  if (/partition/i.test(message)) {
    const known = partitions();
    if (known.length) hint = ` (partitions here: ${known.join(', ')})`;
  } else if (/node configuration is not available/i.test(message)) {
    hint = ' (no node offers what the job asks for: check --memory and --partition)';
  }
  throw new InputError(`Slurm refused the job array: ${message}${hint}; nothing was submitted`);
}

/** Submit a job script (`sbatch --parsable FILE`); returns the job id. */
export function submit(scriptFile: string, cwd: string): string {
  const r = call('sbatch', ['--parsable', scriptFile], undefined, cwd);
  if (r.code !== 0) throw new InputError(`Slurm refused the job array: ${schedulerMessage(r.stderr)}`);
  const id = r.stdout.trim().split('\n').pop()?.split(';')[0]?.trim() ?? '';
  if (!/^\d+$/.test(id)) throw new InputError(`sbatch printed no job id (it printed ${JSON.stringify(r.stdout.trim())})`);
  return id;
}

// ---------------------------------------------------------------------------------------------
// States

/** One array task as the scheduler reports it. */
export interface TaskState {
  /** The array job's id. */
  job: string;
  task: number;
  /** Slurm's state word: PENDING, RUNNING, COMPLETED, FAILED, CANCELLED, TIMEOUT, OUT_OF_MEMORY, ... */
  state: string;
  /** Slurm's reason (pending reasons, `TimeLimit`, `NonZeroExitCode`, ...), when it gives one. */
  reason?: string;
  /** `code:signal`, for ended tasks. */
  exitCode?: string;
  node?: string;
}

/** Array task ids in Slurm's notation: `3`, `1-4`, `1,3,7-9`, `[2-5%2]`. */
export function expandTaskIds(text: string): number[] {
  const body = text.replace(/^\[|\]$/g, '').replace(/%\d+$/, '');
  const out: number[] = [];
  for (const part of body.split(',')) {
    const m = /^(\d+)(?:-(\d+))?(?::(\d+))?$/.exec(part.trim());
    if (!m) continue;
    const a = Number(m[1]);
    const b = m[2] !== undefined ? Number(m[2]) : a;
    const step = m[3] !== undefined ? Math.max(1, Number(m[3])) : 1;
    for (let i = a; i <= b; i += step) out.push(i);
  }
  return out;
}

/** `Key=value Key2=value two ...` (scontrol's one-line records; values may hold spaces). */
export function parseRecord(line: string): Record<string, string> {
  const out: Record<string, string> = {};
  const re = /(?:^|\s)([A-Za-z][A-Za-z0-9/:_]*)=/g;
  const keys: { key: string; start: number; end: number }[] = [];
  let m: RegExpExecArray | null;
  while ((m = re.exec(line)) !== null) keys.push({ key: m[1], start: m.index, end: re.lastIndex });
  for (let i = 0; i < keys.length; i++) {
    const stop = i + 1 < keys.length ? keys[i + 1].start : line.length;
    out[keys[i].key] = line.slice(keys[i].end, stop).trim();
  }
  return out;
}

/** Tasks of these jobs still known to the queue (pending, running, completing, ...). */
export function queued(jobs: readonly string[]): TaskState[] {
  if (jobs.length === 0) return [];
  const r = call('squeue', ['-h', '-r', '-j', jobs.join(','), '-o', '%i|%T|%r|%N']);
  if (r.code !== 0) {
    // every job has left the controller's memory
    if (/invalid job id/i.test(r.stderr)) return [];
    throw new Error(`squeue failed: ${schedulerMessage(r.stderr)}`);
  }
  const out: TaskState[] = [];
  for (const line of r.stdout.split('\n')) {
    const [id, state, reason, node] = line.trim().split('|');
    const m = /^(\d+)_(\d+|\[.*\])$/.exec(id ?? '');
    if (!m || !state) continue;
    for (const task of expandTaskIds(m[2])) {
      out.push({ job: m[1], task, state, ...(reason && reason !== 'None' ? { reason } : {}), ...(node ? { node } : {}) });
    }
  }
  return out;
}

/** Every task of an array job the controller still remembers (`scontrol show job -o ID`). */
export function shownTasks(job: string): TaskState[] {
  const r = call('scontrol', ['show', 'job', '-o', job]);
  if (r.code !== 0) {
    if (/invalid job id/i.test(r.stderr)) return [];
    throw new Error(`scontrol show job ${job} failed: ${schedulerMessage(r.stderr)}`);
  }
  const out: TaskState[] = [];
  for (const line of r.stdout.split('\n')) {
    if (!line.trim()) continue;
    const rec = parseRecord(line);
    const tasks = rec.ArrayTaskId !== undefined ? expandTaskIds(rec.ArrayTaskId) : [];
    for (const task of tasks) {
      out.push({
        job: rec.ArrayJobId ?? job,
        task,
        state: rec.JobState ?? 'UNKNOWN',
        ...(rec.Reason && rec.Reason !== 'None' ? { reason: rec.Reason } : {}),
        ...(rec.ExitCode ? { exitCode: rec.ExitCode } : {}),
        ...(rec.NodeList && rec.NodeList !== '(null)' ? { node: rec.NodeList } : {}),
      });
    }
  }
  return out;
}

let accountingCache: boolean | undefined;

/** Whether the cluster keeps job accounting (then `sacct` knows jobs after they left the controller). */
export function accountingOn(): boolean {
  if (accountingCache !== undefined) return accountingCache;
  const r = call('scontrol', ['show', 'config']);
  const m = /^AccountingStorageType\s*=\s*(\S+)/m.exec(r.stdout);
  accountingCache = r.code === 0 && m !== null && m[1] !== 'accounting_storage/none';
  return accountingCache;
}

/** Final states from accounting (`sacct`), when it is on; empty otherwise. */
export function accountedTasks(job: string): TaskState[] {
  if (!accountingOn()) return [];
  const r = call('sacct', ['-j', job, '-X', '-n', '-P', '-o', 'JobID,State,ExitCode,NodeList']);
  if (r.code !== 0) return [];
  const out: TaskState[] = [];
  for (const line of r.stdout.split('\n')) {
    const [id, stateText, exitCode, node] = line.trim().split('|');
    const m = /^(\d+)_(\d+)$/.exec(id ?? '');
    if (!m || !stateText) continue;
    // `CANCELLED by 1000`
    const [state, ...rest] = stateText.split(' ');
    out.push({ job: m[1], task: Number(m[2]), state, ...(rest.length ? { reason: rest.join(' ') } : {}), ...(exitCode ? { exitCode } : {}), ...(node && node !== 'None assigned' ? { node } : {}) });
  }
  return out;
}

/** Slurm's states of a job that has ended (its processes are gone or being killed for good). */
const endedStates = new Set(['COMPLETED', 'CANCELLED', 'FAILED', 'TIMEOUT', 'NODE_FAIL', 'PREEMPTED', 'BOOT_FAIL', 'DEADLINE', 'OUT_OF_MEMORY', 'REVOKED']);

/**
 * Whether the job with this id (a plain job id: an array task's own $SLURM_JOB_ID) has ended, as
 * `squeue` says: true when the controller no longer knows it or reports it in a final state;
 * false while it is pending, running, completing, suspended or requeued, and when squeue cannot
 * tell (the caller then treats the job as alive).
 */
export function jobEnded(job: string): boolean {
  if (!/^\d+$/.test(job)) return false;
  let r: Output;
  try {
    r = call('squeue', ['-h', '-t', 'all', '-j', job, '-o', '%A|%T']);
  } catch {
    return false;
  }
  if (r.code !== 0) return /invalid job id/i.test(r.stderr);
  // `-j` with an array's own id lists all of its tasks: keep the line of this job id
  const states = r.stdout
    .split('\n')
    .map((l) => l.trim().split('|'))
    .filter(([id, state]) => id === job && state)
    .map(([, state]) => state);
  return states.every((s) => endedStates.has(s.replace(/\+$/, '')));
}
