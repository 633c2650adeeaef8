/** Helpers of the command-line tests: the CLI in this process, or the built binary in a real child process. */
import { type ChildProcess, spawn } from 'node:child_process';
import { existsSync, readFileSync, readdirSync, statSync, writeFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { main } from '../../src/cli/main.js';

export const bin = resolve('bin/branchline.js');

export interface Ended {
  code: number | null;
  signal: NodeJS.Signals | null;
  out: string;
  err: string;
}

/** Start the built binary with `args`; `ended` resolves with its exit code or signal and its output. */
export function start(args: string[], options: { shell?: string; uid?: number; gid?: number } = {}): { child: ChildProcess; ended: Promise<Ended> } {
  const as = options.uid !== undefined ? { uid: options.uid, gid: options.gid ?? options.uid } : {};
  const child = options.shell
    ? spawn('bash', ['-c', `${options.shell}; exec "$0" "$@"`, process.execPath, bin, ...args], { stdio: ['ignore', 'pipe', 'pipe'], ...as })
    : spawn(process.execPath, [bin, ...args], { stdio: ['ignore', 'pipe', 'pipe'], ...as });
  let out = '';
  let err = '';
  child.stdout!.on('data', (d: Buffer) => (out += d.toString()));
  child.stderr!.on('data', (d: Buffer) => (err += d.toString()));
  const ended = new Promise<Ended>((done) => child.on('exit', (code, signal) => done({ code, signal, out, err })));
  return { child, ended };
}

/** The CLI in this process. */
export async function cli(...args: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = '';
  let err = '';
  const code = await main(['node', 'branchline', ...args], { out: (s) => (out += s), err: (s) => (err += s) });
  return { code, out, err };
}

export const json = (file: string): Record<string, any> => JSON.parse(readFileSync(file, 'utf8'));
export const sleep = (ms: number): Promise<void> => new Promise((r) => setTimeout(r, ms));

/** `write(name, text)`: writes the file `name` in `dir` and returns its path. */
export function writerIn(dir: string): (name: string, text: string) => string {
  return (name, text) => {
    const f = join(dir, name);
    writeFileSync(f, text);
    return f;
  };
}

/** Bytes in a run folder's branch files so far (how far a run has got, read while it runs). */
export function csvBytes(dir: string): number {
  const b = join(dir, 'branches');
  if (!existsSync(b)) return 0;
  let total = 0;
  for (const f of readdirSync(b)) {
    try {
      total += statSync(join(b, f)).size;
    } catch {
      /* removed meanwhile */
    }
  }
  return total;
}

/** A smaller size of switchingCase for tests that run it many times. */
export const smallSwitching = { intervals: 32, maxPoints: 40 };

/**
 * A small 1D case that exercises what a resume must carry: branch switching (the queue of
 * branches), stability (eigen-solver warm starts), special points and their solutions.
 */
export function switchingCase(name: string, checkpoint = '{every-points: 3, every-seconds: 60}', size: { intervals: number; maxPoints: number } = { intervals: 64, maxPoints: 80 }): string {
  return `name: ${name}
model: allen-cahn
grid: {intervals: [${size.intervals}]}
parameters: {lambda: 1}
continuation:
  parameter: lambda
  bounds: [0, 45]
  step: {initial: 0.5, min: 1.0e-8, max: 1}
  max-points: ${size.maxPoints}
  branch-switching: {depth: 1}
stability: {eigenvalues: 2}
checkpoint: ${checkpoint}
`;
}

/**
 * Two stop signals that arrive within one step, as two Ctrl-C presses do during a long one: the
 * process is paused, receives SIGINT and SIGTERM (two of one kind would merge while pending), and
 * goes on — its handlers then see both, the second while the first is still being honoured.
 */
export function twoSignalsAtOnce(child: ChildProcess): void {
  child.kill('SIGSTOP');
  child.kill('SIGINT');
  child.kill('SIGTERM');
  child.kill('SIGCONT');
}
