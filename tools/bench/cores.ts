/**
 * Two cores against one: whole `branchline run`s of a case with many branches after branch
 * points (traced side by side in helper threads with --cores 2) and whole `branchline refine`
 * studies (grids side by side in worker processes), each with --cores 1 and --cores 2, wall
 * seconds of the whole command (the minimum of the repeats: on a shared machine other work only
 * ever adds time). The files are the same either way (test/cli/cores.test.ts).
 */
import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { performance } from 'node:perf_hooks';
import { cliPath } from './reference.js';
import { seconds, table } from './stats.js';

export interface CoresRow {
  case: string;
  command: string;
  unknowns: number;
  /** Wall seconds of the whole command on one core and on two (minimum of the repeats). */
  oneCore: number;
  twoCores: number;
  /** oneCore / twoCores. */
  speedUp: number;
}

/** 2D Allen–Cahn on a 2×1 rectangle (simple eigenvalues): pitchforks from u = 0, each with two branches to follow. */
function switchingCase(m: number): string {
  return [
    `name: switching-${m}`,
    'model: allen-cahn',
    `grid: {intervals: [${2 * m}, ${m}], length: [2, 1]}`,
    'parameters: {lambda: 1}',
    'continuation:',
    '  parameter: lambda',
    '  bounds: [0, 45]',
    '  step: {initial: 0.5, min: 1.0e-8, max: 1}',
    '  max-points: 30',
    '  branch-switching: {depth: 1}',
    'stability: {eigenvalues: 4}',
    'output: {solutions: none}',
    '',
  ].join('\n');
}

/** 2D Bratu on the unit square, through its fold (the point a refinement study locates). */
function foldCase(): string {
  return [
    'name: fold',
    'model: bratu',
    'grid: {intervals: [16, 16]}',
    'parameters: {lambda: 1}',
    'continuation:',
    '  parameter: lambda',
    '  bounds: [0, 10]',
    '  step: {initial: 0.5, min: 1.0e-8, max: 0.5}',
    '  max-points: 60',
    '  stop-when: [{monitor: max, above: 3}]',
    'output: {solutions: none}',
    '',
  ].join('\n');
}

/** Minimum wall seconds of `branchline ...args` over `repeats` runs, each in a fresh folder. */
function wall(dir: string, args: (out: string) => string[], repeats: number): number {
  let best = Infinity;
  for (let r = 0; r < repeats; r++) {
    const out = join(dir, `out-${r}-${Math.random().toString(36).slice(2)}`);
    const t0 = performance.now();
    execFileSync(process.execPath, [cliPath, ...args(out), '--quiet'], { stdio: 'ignore' });
    best = Math.min(best, (performance.now() - t0) / 1000);
    rmSync(out, { recursive: true, force: true });
  }
  return best;
}

export function benchCores(quick: boolean, repeats: number, log: (line: string) => void): { rows: CoresRow[]; text: string } {
  const dir = mkdtempSync(join(tmpdir(), 'branchline-bench-cores-'));
  const rows: CoresRow[] = [];
  try {
    const m = quick ? 24 : 60;
    const sw = join(dir, 'switching.yaml');
    writeFileSync(sw, switchingCase(m));
    const grids = quick ? [16, 32, 64] : [40, 80, 160];
    const fold = join(dir, 'fold.yaml');
    writeFileSync(fold, foldCase());
    const plan: { name: string; command: string; unknowns: number; args: (cores: number) => (out: string) => string[] }[] = [
      { name: `2D Allen–Cahn ${2 * m}x${m}, 4 eigenvalues, the branches after its branch points`, command: 'run', unknowns: (2 * m - 1) * (m - 1), args: (c) => (out) => ['run', sw, '--out', out, '--cores', String(c)] },
      { name: `2D Bratu fold, grids ${grids.join(', ')}`, command: 'refine', unknowns: (grids[grids.length - 1] - 1) ** 2, args: (c) => (out) => ['refine', fold, '--grids', grids.join(','), '--out', out, '--cores', String(c)] },
    ];
    for (const p of plan) {
      log(`  ${p.command} ${p.name}: one core, then two ...`);
      const one = wall(dir, p.args(1), repeats);
      const two = wall(dir, p.args(2), repeats);
      rows.push({ case: p.name, command: p.command, unknowns: p.unknowns, oneCore: one, twoCores: two, speedUp: one / two });
    }
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
  const text = table(
    ['case', 'command', 'unknowns (largest)', '1 core', '2 cores', 'speed-up'],
    rows.map((r) => [r.case, r.command, r.unknowns, seconds(r.oneCore), seconds(r.twoCores), r.speedUp.toFixed(2) + '×']),
  );
  return { rows, text };
}
