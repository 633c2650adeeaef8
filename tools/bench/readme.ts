/**
 * The README's performance tables, in markdown, from the benchmark's own figures — printed at
 * the end of `npm run bench`, or again from a saved result file:
 *
 *   node dist/tools/bench/readme.js [bench-results.json]
 *
 * so that the Performance section of README.md is regenerated mechanically, never retyped.
 */
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
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
  reference?: { python: string | null; note: string; rows: ReferenceRow[] };
  cores?: CoresRow[];
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
    out.push('', row(['case', 'unknowns', 's/step, no eigenvalues', 's/step, 6 eigenvalues', 'factorisations/step', 'eigen factorisations/step', 'eigen solves/step']), row(Array(7).fill('---')));
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
          count(any.factorisationsPerStep),
          six ? count(six.eigenFactorisationsPerStep) : '—',
          six ? count(six.eigenSolvesPerStep) : '—',
        ]),
      );
    }
  }
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
  return out.join('\n');
}

// run as a program: the tables from a saved result file
if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) {
  const file = process.argv[2] ?? 'bench-results.json';
  console.log(readmeTables(JSON.parse(readFileSync(file, 'utf8')) as BenchResults));
}
