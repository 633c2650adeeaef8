/**
 * The README's performance tables, in markdown, from the benchmark's own figures — printed at
 * the end of `npm run bench`, or again from a saved result file:
 *
 *   node dist/tools/bench/readme.js [bench-results.json ...]
 *
 * so that the Performance section of README.md is regenerated mechanically, never retyped.
 */
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import type { BackendRow } from './backends.js';
import type { StepBenchRow } from './continuation.js';
import type { CoresRow } from './cores.js';
import type { ReferenceRow } from './reference.js';

export interface BenchResults {
  machine?: string;
  date?: string;
  quick?: boolean;
  repeats?: number;
  /** Load averages (1, 5, 15 minutes) when the benchmark started and ended. */
  load?: { start: number[]; end?: number[] };
  steps?: StepBenchRow[];
  /** 2D Bratu 400×400, 8 steps with 6 eigenvalues: peak memory (and the last size of the growth). */
  memory?: StepBenchRow;
  reference?: { python: string | null; note: string; rows: ReferenceRow[] };
  cores?: CoresRow[];
  backends?: BackendRow[];
}

const s3 = (x: number): string => (x >= 10 ? x.toFixed(1) : x >= 1 ? x.toFixed(2) : x >= 0.1 ? x.toFixed(2) : x.toFixed(3));
const count = (x: number): string => (x >= 10 ? x.toFixed(0) : x.toFixed(2));
const thousands = (n: number): string => n.toLocaleString('en-GB');
const row = (cells: (string | number)[]): string => `| ${cells.join(' | ')} |`;

/** The markdown tables (and the line saying where and under what load they were measured). */
export function readmeTables(r: BenchResults): string {
  const out: string[] = [];
  const load = r.load ? `load average ${r.load.start[0].toFixed(1)} at the start${r.load.end ? `, ${r.load.end[0].toFixed(1)} at the end` : ''} (\`uptime\`, 1 minute)` : 'load not recorded';
  out.push(`Measured ${r.date?.slice(0, 10) ?? '(date not recorded)'} on ${r.machine ?? 'an unrecorded machine'}; ${load}${r.quick ? '; quick run (small grids)' : ''}.`);
  if (r.steps?.length) {
    out.push('', row(['case', 'unknowns', 's/step, no eigenvalues', 's/step, 6 eigenvalues', 'CPU s/step, 6 eigenvalues', 'factorisations/step', 'eigen factorisations/step', 'eigen solves/step']), row(Array(8).fill('---')));
    const names = [...new Set(r.steps.map((x) => x.case))];
    for (const name of names) {
      const none = r.steps.find((x) => x.case === name && x.eigenvalues === 0);
      const six = r.steps.find((x) => x.case === name && x.eigenvalues === 6);
      const any = six ?? none!;
      out.push(
        row([
          name.replace(/(\d+)x(\d+)/, '$1×$2'),
          thousands(any.unknowns),
          none ? s3(none.secondsPerStep) : '—',
          six ? s3(six.secondsPerStep) : '—',
          six?.cpuSecondsPerStep !== undefined ? s3(six.cpuSecondsPerStep) : '—',
          count(any.factorisationsPerStep),
          six ? count(six.eigenFactorisationsPerStep) : '—',
          six ? count(six.eigenSolvesPerStep) : '—',
        ]),
      );
    }
  }
  const growth = growthExponents(r);
  if (growth.length) {
    out.push('', `Growth of the per-step cost with 6 eigenvalues between neighbouring sizes (n = unknowns): ${growth.map((g) => `${g.from}→${g.to}: n^${g.exponent.toFixed(2)}`).join(', ')}.`);
  }
  if (r.memory) out.push('', `Peak memory, ${r.memory.case.replace(/(\d+)x(\d+)/, '$1×$2')} (${thousands(r.memory.unknowns)} unknowns), 8 steps with 6 eigenvalues: ${r.memory.peakRssMiB.toFixed(0)} MiB (${s3(r.memory.secondsPerStep)} s/step).`);
  if (r.reference?.rows.length) {
    out.push('', `Against the SciPy reference (${r.reference.python ? r.reference.note : `${r.reference.note}: no reference figures`}), whole runs per step:`, '');
    out.push(row(['case', 'eigenvalues', 'steps', 'branchline s/step', 'SciPy s/step', 'ratio (ours/SciPy)']), row(Array(6).fill('---')));
    for (const x of r.reference.rows) {
      out.push(row([x.case.replace(/(\d+)x(\d+)/, '$1×$2'), x.eigenvalues, x.steps, s3(x.oursSecondsPerStep), x.referenceSecondsPerStep === null ? '—' : s3(x.referenceSecondsPerStep), x.ratio === null ? '—' : x.ratio.toFixed(2)]));
    }
  }
  if (r.cores?.length) {
    out.push('', 'One core against two (wall seconds of the whole command, `--cores 1` and `--cores 2`; the files are the same):', '');
    out.push(row(['case', 'command', '1 core', '2 cores', 'speed-up']), row(Array(5).fill('---')));
    for (const x of r.cores) out.push(row([x.case.replace(/(\d+)x(\d+)/, '$1×$2'), `\`${x.command}\``, `${s3(x.oneCore)} s`, `${s3(x.twoCores)} s`, `${x.speedUp.toFixed(2)}×`]));
  }
  if (r.backends?.length) {
    out.push('', 'KLU against SuperLU on the bordered continuation matrix of each case (CPU seconds, the minimum of the repeats; KLU refactorises with kept pivots, SuperLU has none):', '');
    out.push(row(['case', 'unknowns', 'KLU factor', 'KLU refactor', 'SuperLU factor', 'KLU solve', 'SuperLU solve', 'entries in L+U, KLU / SuperLU', 'automatic choice']), row(Array(9).fill('---')));
    const names = [...new Set(r.backends.map((x) => x.case))];
    for (const name of names) {
      const klu = r.backends.find((x) => x.case === name && x.backend === 'klu');
      const slu = r.backends.find((x) => x.case === name && x.backend === 'superlu');
      const any = (klu ?? slu)!;
      const t = (x: BackendRow | undefined, f: (x: BackendRow) => number) => (x ? `${s3(f(x))} s` : '—');
      const entries = (x: BackendRow | undefined) => (x ? `${(x.factorEntries / 1e6).toFixed(1)} M` : '—');
      out.push(row([name.replace(/(\d+)x(\d+)/, '$1×$2'), thousands(any.unknowns), t(klu, (x) => x.factorSeconds), t(klu, (x) => x.refactorSeconds), t(slu, (x) => x.factorSeconds), t(klu, (x) => x.solveSeconds), t(slu, (x) => x.solveSeconds), `${entries(klu)} / ${entries(slu)}`, any.auto === 'klu' ? 'KLU' : 'SuperLU']));
    }
  }
  const targets = targetRows(r);
  if (targets.length) {
    out.push('', 'Against the targets of the speed work (issue 18):', '');
    out.push(row(['figure', 'target', 'measured', 'met']), row(Array(4).fill('---')));
    for (const t of targets) out.push(row([t.figure, t.target, t.measured, t.met ? 'yes' : 'no']));
  }
  return out.join('\n');
}

const sizeOf = (name: string): number | undefined => {
  const m = /2D Bratu (\d+)x\1/.exec(name);
  return m ? Number(m[1]) : undefined;
};

/** Local exponents of the per-step cost with 6 eigenvalues, 2D Bratu, between neighbouring sizes (400 from the memory run). */
export function growthExponents(r: BenchResults): { from: number; to: number; exponent: number }[] {
  const rows = [...(r.steps ?? []), ...(r.memory ? [r.memory] : [])].filter((x) => x.eigenvalues === 6 && sizeOf(x.case) !== undefined);
  rows.sort((a, b) => a.unknowns - b.unknowns);
  const out: { from: number; to: number; exponent: number }[] = [];
  for (let i = 1; i < rows.length; i++) {
    const a = rows[i - 1];
    const b = rows[i];
    if (a.unknowns === b.unknowns) continue;
    out.push({ from: sizeOf(a.case)!, to: sizeOf(b.case)!, exponent: Math.log(b.secondsPerStep / a.secondsPerStep) / Math.log(b.unknowns / a.unknowns) });
  }
  return out;
}

/** The figures the speed work set itself, each with its target and whether the run met it. */
export function targetRows(r: BenchResults): { figure: string; target: string; measured: string; met: boolean }[] {
  const out: { figure: string; target: string; measured: string; met: boolean }[] = [];
  const ref = (eig: number, steps: number) => r.reference?.rows.find((x) => x.eigenvalues === eig && x.steps === steps && x.case.startsWith('2D Bratu 200'));
  for (const [eig, steps, target] of [[6, 20, 0.15], [6, 40, 0.1], [0, 40, 0.1]] as const) {
    const x = ref(eig, steps);
    if (x?.ratio != null) out.push({ figure: `2D Bratu 200², ${eig} eigenvalues, ${steps} steps: ratio to the SciPy reference`, target: `≤ ${target}`, measured: x.ratio.toFixed(2), met: x.ratio <= target });
  }
  const forty = ref(6, 40);
  if (forty) out.push({ figure: '2D Bratu 200², 6 eigenvalues, 40 steps: s/step', target: '≤ 0.35 s', measured: `${s3(forty.oursSecondsPerStep)} s`, met: forty.oursSecondsPerStep <= 0.35 });
  const step = (name: string) => r.steps?.find((x) => x.case.startsWith(name) && x.eigenvalues === 6);
  const gs = step('2D Gray–Scott 128');
  if (gs) out.push({ figure: '2D Gray–Scott 128², 6 eigenvalues: s/step', target: '≤ 1.2 s', measured: `${s3(gs.secondsPerStep)} s`, met: gs.secondsPerStep <= 1.2 });
  const cube = step('3D Bratu 40');
  if (cube) out.push({ figure: '3D Bratu 40³ intervals, 6 eigenvalues: s/step', target: '≤ 3 s', measured: `${s3(cube.secondsPerStep)} s`, met: cube.secondsPerStep <= 3 });
  const growth = growthExponents(r);
  if (growth.length) {
    const worst = Math.max(...growth.map((g) => g.exponent));
    out.push({ figure: `growth of the per-step cost with 6 eigenvalues, ${growth[0].from}² → ${growth[growth.length - 1].to}², every size`, target: '≤ n^1.5', measured: `n^${worst.toFixed(2)} (largest)`, met: worst <= 1.5 });
  }
  if (r.memory) out.push({ figure: 'peak memory at 400² with 6 eigenvalues', target: '≤ 1024 MiB', measured: `${r.memory.peakRssMiB.toFixed(0)} MiB`, met: r.memory.peakRssMiB <= 1024 });
  return out;
}

// run as a program: the tables from saved result files (each with the line saying where and under what load)
if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) {
  const files = process.argv.length > 2 ? process.argv.slice(2) : ['bench-results.json'];
  console.log(files.map((file) => readmeTables(JSON.parse(readFileSync(file, 'utf8')) as BenchResults)).join('\n\n'));
}
