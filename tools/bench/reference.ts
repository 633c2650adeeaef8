/**
 * The outside reference: the same continuation written with SciPy (tools/bench/reference/
 * arclength_scipy.py — splu on the bordered matrix at every Newton iteration, ARPACK shift-invert
 * for the eigenvalues), run in the same benchmark invocation as a whole `branchline run` of the
 * same case, and the ratio of their seconds per step (ours / reference; below 1 means we are faster).
 *
 * Both sides are timed as whole runs divided by the number of steps after the start point: ours
 * is the wall time of the `branchline run` process (start-up, start point, cold eigenvalue
 * search, every step, files); the reference's is its imports plus the elapsed time of its
 * continuation up to the N-th step (so one 40-step reference run also gives the 20-step figure).
 *
 * Python: BRANCHLINE_PYTHON if set, else Debian's /usr/bin/python3, else `python3` on PATH — the
 * first that imports SciPy. Without one the benchmark says so and prints our figures alone.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { performance } from 'node:perf_hooks';
import { fileURLToPath } from 'node:url';
import { seconds, table } from './stats.js';

/** The repository's root (this file runs from tools/bench/ in tests and from dist/tools/bench/ in the benchmark). */
function repositoryRoot(): string {
  let dir = dirname(fileURLToPath(import.meta.url));
  while (!existsSync(join(dir, 'package.json'))) {
    const up = dirname(dir);
    if (up === dir) throw new Error('reference.ts: cannot find the repository root');
    dir = up;
  }
  return dir;
}

const root = repositoryRoot();
const script = join(root, 'tools/bench/reference/arclength_scipy.py');
export const cliPath = join(root, 'bin/branchline.js');
const cli = cliPath;

export interface ReferencePoint {
  parameter: number;
  max: number;
  tangentParameter: number;
  newtonIterations: number;
  step: number;
  elapsed: number;
  eigenvalues?: [number, number][];
  u?: number[];
}

export interface ReferenceResult {
  python: string;
  scipy: string;
  unknowns: number;
  steps: number;
  importSeconds: number;
  seconds: number;
  factorisations: number;
  solves: number;
  fold: { between: [number, number]; value?: number; max?: number; eigenvalues?: [number, number][]; u?: number[] } | null;
  points: ReferencePoint[];
}

/** A python3 that imports SciPy, or why there is none. */
export function findScipyPython(): { python?: string; reason: string } {
  const candidates = [process.env.BRANCHLINE_PYTHON, '/usr/bin/python3', 'python3'].filter((c): c is string => !!c);
  for (const python of candidates) {
    const r = spawnSync(python, ['-c', 'import scipy.sparse.linalg, numpy; print(scipy.__version__)'], { encoding: 'utf8' });
    if (r.status === 0) return { python, reason: `${python} with SciPy ${r.stdout.trim()}` };
  }
  return { reason: `no python3 with SciPy found (tried ${candidates.join(', ')}; on Debian: apt-get install python3-scipy)` };
}

/** Run the SciPy reference on the d-dimensional Bratu problem with m interior nodes per axis. */
export function runReference(
  python: string,
  o: { dim: number; m: number; steps: number; eigenvalues: number; locateFold?: boolean; states?: boolean; lambda0?: number; step?: [number, number, number] },
): ReferenceResult {
  const args = [script, '--dim', String(o.dim), '--m', String(o.m), '--steps', String(o.steps), '--eigenvalues', String(o.eigenvalues)];
  if (o.lambda0 !== undefined) args.push('--lambda0', String(o.lambda0));
  if (o.step) args.push('--step', ...o.step.map(String));
  if (o.locateFold) args.push('--locate-fold');
  if (o.states) args.push('--states');
  const out = execFileSync(python, args, { encoding: 'utf8', maxBuffer: 1 << 28 });
  return JSON.parse(out) as ReferenceResult;
}

/** Seconds per step of a whole reference run of `steps` steps (imports and start point included). */
export function referenceSecondsPerStep(r: ReferenceResult, steps: number): number {
  if (r.points.length <= steps) return NaN;
  return (r.importSeconds + r.points[steps].elapsed) / steps;
}

/** The 2D Bratu benchmark case as a case file (the same settings as the SciPy reference's defaults). */
function bratuCase(m: number, steps: number, eigenvalues: number): string {
  return [
    'name: reference-bratu',
    'model: bratu',
    `grid: {intervals: [${m + 1}, ${m + 1}]}`,
    'parameters: {lambda: 1}',
    'continuation:',
    '  parameter: lambda',
    '  bounds: [0, 10]',
    '  step: {initial: 0.25, min: 1.0e-8, max: 0.25}',
    `  max-points: ${steps + 1}`,
    `stability: {eigenvalues: ${eigenvalues}}`,
    'output: {solutions: none}',
    '',
  ].join('\n');
}

/** Wall time of a whole `branchline run` of the 2D Bratu case, per step. */
export function oursSecondsPerStep(m: number, steps: number, eigenvalues: number): { secondsPerStep: number; seconds: number } {
  const dir = mkdtempSync(join(tmpdir(), 'branchline-bench-'));
  try {
    const file = join(dir, 'case.yaml');
    writeFileSync(file, bratuCase(m, steps, eigenvalues));
    const t0 = performance.now();
    execFileSync(process.execPath, [cli, 'run', file, '--out', join(dir, 'run'), '--quiet'], { stdio: 'ignore' });
    const s = (performance.now() - t0) / 1000;
    return { secondsPerStep: s / steps, seconds: s };
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

export interface ReferenceRow {
  case: string;
  unknowns: number;
  eigenvalues: number;
  steps: number;
  oursSecondsPerStep: number;
  referenceSecondsPerStep: number | null;
  /** ours / reference (null without a reference). */
  ratio: number | null;
}

/**
 * The rows: 2D Bratu m×m with `eigenvalues` eigenvalues over 20 and 40 steps, and
 * without eigenvalues over 40 steps; one reference run per eigenvalue count.
 */
export function benchReference(m: number, stepCounts: number[], log: (line: string) => void): { rows: ReferenceRow[]; text: string; python: string | null; note: string } {
  const found = findScipyPython();
  const rows: ReferenceRow[] = [];
  const maxSteps = Math.max(...stepCounts);
  const plan: { eigenvalues: number; steps: number[] }[] = [
    { eigenvalues: 6, steps: stepCounts },
    { eigenvalues: 0, steps: [maxSteps] },
  ];
  for (const { eigenvalues, steps } of plan) {
    let ref: ReferenceResult | undefined;
    if (found.python) {
      log(`  SciPy reference, ${m}x${m}, ${eigenvalues} eigenvalues, ${maxSteps} steps ...`);
      ref = runReference(found.python, { dim: 2, m, steps: Math.max(...steps), eigenvalues });
    }
    for (const n of steps) {
      log(`  branchline run, ${m}x${m}, ${eigenvalues} eigenvalues, ${n} steps ...`);
      const ours = oursSecondsPerStep(m, n, eigenvalues);
      const r = ref ? referenceSecondsPerStep(ref, n) : NaN;
      rows.push({
        case: `2D Bratu ${m}x${m}`,
        unknowns: m * m,
        eigenvalues,
        steps: n,
        oursSecondsPerStep: ours.secondsPerStep,
        referenceSecondsPerStep: Number.isFinite(r) ? r : null,
        ratio: Number.isFinite(r) ? ours.secondsPerStep / r : null,
      });
    }
  }
  const text = table(
    ['case', 'unknowns', 'eigenvalues', 'steps', 'branchline s/step', 'SciPy s/step', 'ratio (ours/SciPy)'],
    rows.map((r) => [
      r.case,
      r.unknowns,
      r.eigenvalues,
      r.steps,
      seconds(r.oursSecondsPerStep),
      r.referenceSecondsPerStep === null ? '-' : seconds(r.referenceSecondsPerStep),
      r.ratio === null ? '-' : r.ratio.toFixed(2),
    ]),
  );
  return { rows, text, python: found.python ?? null, note: found.reason };
}
