/**
 * What a Slurm submission asks for, and the job script that asks for it.
 *
 * One job array per submission: every task runs `branchline task FOLDER` on its own run folder
 * (the array index is the task number, so a resubmission of tasks 1 and 4 is `--array=1,4`).
 * The script carries, as `#SBATCH` lines: the array, the memory per task, one CPU, the time
 * limit, partition and account when given, a signal before the time limit
 * (`--signal=B:USR2@SECONDS`: the task checkpoints and stops on it, so a resubmission continues
 * where it was), the log file per task, then the user's extra sbatch options; then the user's
 * setup lines (e.g. `module load nodejs`), then `exec` of this very program with this very Node.js
 * (absolute paths: the program must be on the shared file system or at the same place on the
 * nodes). With `exec` the task is the batch shell itself, so Slurm's signals reach it.
 */
import { InputError } from '../run/errors.js';

/** What the user asks of the scheduler (command-line options, plus the case's setup lines). */
export interface SlurmSettings {
  partition?: string;
  /** Slurm's notation (`90`, `2:00:00`, `1-12`), as given. */
  timeLimit?: string;
  /** Memory per task in MiB; default: our estimate of the largest task. */
  memoryMiB?: number;
  account?: string;
  /** Extra sbatch options, one per entry (`--qos=long`). */
  schedulerOptions: string[];
  /** Lines run before the task starts (environment modules, exports). */
  setup: string[];
  /** Seconds before the time limit at which tasks are told to checkpoint and stop (default: see stopMargin). */
  stopMargin?: number;
}

/** The signal Slurm sends before the time limit (SIGUSR1 is Node's debugger signal). */
export const warningSignal = 'USR2';

/** Seconds of a Slurm time limit: `M`, `M:S`, `H:M:S`, `D-H`, `D-H:M`, `D-H:M:S`; null for none. */
export function timeLimitSeconds(text: string): number | null {
  const t = text.trim().toLowerCase();
  if (t === 'infinite' || t === 'unlimited') return null;
  let m = /^(\d+)-(\d+)(?::(\d+)(?::(\d+))?)?$/.exec(t);
  if (m) return Number(m[1]) * 86400 + Number(m[2]) * 3600 + Number(m[3] ?? 0) * 60 + Number(m[4] ?? 0);
  m = /^(\d+)(?::(\d+)(?::(\d+))?)?$/.exec(t);
  if (m) {
    if (m[3] !== undefined) return Number(m[1]) * 3600 + Number(m[2]) * 60 + Number(m[3]);
    if (m[2] !== undefined) return Number(m[1]) * 60 + Number(m[2]);
    return Number(m[1]) * 60;
  }
  throw new InputError(
    `--time-limit '${text}' is not accepted (accepted: Slurm's notation: minutes, MM:SS, HH:MM:SS, D-HH, D-HH:MM or D-HH:MM:SS, e.g. 90 or 2:00:00 or 1-12)`,
  );
}

/** MiB of `4096`, `4096M`, `4G`, `1.5GiB`, `512MB` (a bare number is MiB, as for sbatch). */
export function memoryMiB(text: string): number {
  const m = /^\s*(\d+(?:\.\d+)?)\s*([kmgt]?)(i?b)?\s*$/i.exec(text);
  const units: Record<string, number> = { k: 1 / 1024, '': 1, m: 1, g: 1024, t: 1024 * 1024 };
  if (!m || Number(m[1]) <= 0) throw new InputError(`--memory '${text}' is not accepted (accepted: an amount per task such as 4096M, 4G or 1.5G; a bare number is MiB)`);
  return Math.ceil(Number(m[1]) * units[m[2].toLowerCase()]);
}

/** Check an extra sbatch option given on the command line. */
export function checkSchedulerOption(text: string): string {
  const t = text.trim();
  if (!/^--?[A-Za-z]/.test(t) || /[\r\n]/.test(t)) {
    throw new InputError(`--scheduler-option '${text}' is not accepted (accepted: one sbatch option per use, e.g. --scheduler-option=--qos=long)`);
  }
  if (/^--?(array|a|output|o|error|e|signal|parsable|wrap|chdir|D)(=|\s|$)/.test(t)) {
    throw new InputError(`--scheduler-option '${text}': branchline sets this sbatch option itself (the array, log files, signal and folder belong to the job)`);
  }
  return t;
}

/** Check a setup line (one shell line run before each task). */
export function checkSetupLine(text: string, where = '--setup'): string {
  if (/[\r\n]/.test(text) || text.trim() === '') throw new InputError(`${where} '${text}' is not accepted (accepted: one non-empty shell line per entry, e.g. "module load nodejs/20")`);
  return text.trim();
}

/**
 * Seconds before the time limit at which the warning signal comes: what the user asked, else
 * five minutes, but at most a tenth of the limit (at least 30 s) and never more than half of it.
 */
export function stopMargin(settings: SlurmSettings): number {
  if (settings.stopMargin !== undefined) return settings.stopMargin;
  const limit = settings.timeLimit !== undefined ? timeLimitSeconds(settings.timeLimit) : null;
  if (limit === null) return 300;
  return Math.max(1, Math.floor(Math.min(300, Math.max(30, limit / 10), limit / 2)));
}

/** `0-2,5,7-8` from task numbers. */
export function taskRanges(tasks: readonly number[]): string {
  const sorted = [...new Set(tasks)].sort((a, b) => a - b);
  const parts: string[] = [];
  for (let i = 0; i < sorted.length; ) {
    let j = i;
    while (j + 1 < sorted.length && sorted[j + 1] === sorted[j] + 1) j++;
    parts.push(j > i ? `${sorted[i]}-${sorted[j]}` : `${sorted[i]}`);
    i = j + 1;
  }
  return parts.join(',');
}

/** A word safe in a shell line (single-quoted). */
export function shellQuote(s: string): string {
  return `'${s.replace(/'/g, `'\\''`)}'`;
}

export interface ScriptInput {
  /** Job name shown by squeue. */
  name: string;
  tasks: readonly number[];
  memoryMiB: number;
  settings: SlurmSettings;
  /** The job folder (absolute): the task reads its job there. */
  folder: string;
  /** Absolute paths of Node.js and of the branchline entry script. */
  node: string;
  entry: string;
}

/** The job script (sbatch is run in the job folder, so the log paths are relative to it). */
export function jobScript(o: ScriptInput): string {
  const s = o.settings;
  const name = o.name.replace(/[^A-Za-z0-9._-]/g, '-').slice(0, 60) || 'branchline';
  const lines = [
    '#!/bin/bash',
    '# A branchline job array: each task runs one case on its own run folder (written by branchline).',
    `#SBATCH --job-name=${name}`,
    `#SBATCH --array=${taskRanges(o.tasks)}`,
    '#SBATCH --ntasks=1',
    '#SBATCH --cpus-per-task=1',
    `#SBATCH --mem=${o.memoryMiB}M`,
    ...(s.timeLimit !== undefined ? [`#SBATCH --time=${s.timeLimit.trim()}`] : []),
    ...(s.partition !== undefined ? [`#SBATCH --partition=${s.partition}`] : []),
    ...(s.account !== undefined ? [`#SBATCH --account=${s.account}`] : []),
    `#SBATCH --signal=B:${warningSignal}@${stopMargin(s)}`,
    '#SBATCH --output=logs/%A_%a.txt',
    '#SBATCH --open-mode=append',
    ...s.schedulerOptions.map((x) => `#SBATCH ${x}`),
    'set -e',
    ...s.setup,
    `exec ${shellQuote(o.node)} ${shellQuote(o.entry)} task ${shellQuote(o.folder)}`,
    '',
  ];
  return lines.join('\n');
}
