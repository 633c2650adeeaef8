/**
 * `npm run bench`: the benchmark suite. Prints tables (medians of repeated runs after a warm-up)
 * and writes every figure as JSON (bench-results.json, or the path after --json) for comparison
 * between commits.
 *
 *   npm run bench                 the full suite (about 10 minutes on 2 cores)
 *   npm run bench -- --quick      smaller grids, fewer repeats (a smoke run, about a minute)
 *   npm run bench -- --only lu,backends,assembly,steps,branch,memory,settle,reference,curves,hopf-curves,cores   a subset
 *
 * `cores` times a case with many branches after branch points (`run`) and a refinement study
 * (`refine`) with --cores 1 and --cores 2 and prints the speed-up. At the end the README's
 * performance tables are printed in markdown from the figures of this invocation
 * (tools/bench/readme.ts; `node dist/tools/bench/readme.js bench-results.json` prints them again).
 *
 * `reference` times whole `branchline run`s of 2D Bratu 200x200 against a SciPy implementation of
 * the same continuation (tools/bench/reference.ts) and prints the ratios; without Python and
 * SciPy it says so and prints our figures alone.
 */
import { execFileSync } from 'node:child_process';
import { writeFileSync } from 'node:fs';
import { cpus, loadavg, totalmem } from 'node:os';
import { fileURLToPath } from 'node:url';
import { benchAssembly } from '../../discretisations/bench.js';
import { benchLu } from './lu.js';
import { benchExpressionAssembly } from './expression.js';
import { type StepBenchRow, shareTable, stepTable } from './continuation.js';
import { table } from './stats.js';
import { benchReference } from './reference.js';
import { type BackendRow, backendCases, backendTable } from './backends.js';
import { type CurveBenchRow, curveTable } from './curves.js';
import { type SettleBenchRow, settleTable } from './settle.js';
import { benchCores } from './cores.js';
import { readmeTables } from './readme.js';

const args = process.argv.slice(2);
const quick = args.includes('--quick');
const jsonAt = args.indexOf('--json');
const jsonPath = jsonAt >= 0 ? args[jsonAt + 1] : 'bench-results.json';
const onlyAt = args.indexOf('--only');
const only = onlyAt >= 0 ? new Set(args[onlyAt + 1].split(',')) : undefined;
const want = (part: string) => !only || only.has(part);
const repeats = quick ? 1 : 3;

const machine = `${cpus().length} cores (${cpus()[0]?.model ?? 'unknown'}), ${(totalmem() / 2 ** 30).toFixed(0)} GiB, Node ${process.version}`;
console.log(`branchline benchmark — ${machine}`);
console.log(`medians of ${repeats} repetitions after a warm-up${quick ? ' (quick run: small grids)' : ''}\n`);
const results: Record<string, unknown> = { machine, date: new Date().toISOString(), quick, repeats, load: { start: loadavg() } };
console.log(`load average ${loadavg().map((x) => x.toFixed(2)).join(', ')} (1, 5, 15 minutes): other work on the machine stretches wall times\n`);

const worker = fileURLToPath(new URL('./worker.js', import.meta.url));
function inChild<T>(...argv: string[]): T {
  const out = execFileSync(process.execPath, [worker, ...argv], { encoding: 'utf8', maxBuffer: 1 << 26 });
  const lines = out.trim().split('\n');
  return JSON.parse(lines[lines.length - 1]) as T;
}

if (want('lu')) {
  console.log('Sparse LU (KLU in WebAssembly) on 2D 5-point grids');
  const lu = benchLu(quick ? [50, 100] : [100, 200, 300], ['amd', 'colamd', 'metis'], quick ? 3 : 5);
  console.log(lu.text + '\n');
  results.lu = lu.rows;
}

if (want('backends')) {
  console.log('KLU against SuperLU on the bordered continuation matrix of each case (CPU seconds, minimum of the repeats; each run in its own process)');
  const rows: BackendRow[] = [];
  backendCases(quick).forEach((c, i) => {
    for (const backend of ['klu', 'superlu']) rows.push(inChild<BackendRow>('backend', String(i), quick ? '1' : '0', backend, String(quick ? 1 : 3)));
  });
  console.log(backendTable(rows) + '\n');
  results.backends = rows;
}

if (want('assembly')) {
  const n = quick ? 128 : 256;
  console.log(`Residual + Jacobian assembly, 2D Gray–Scott ${n}x${n} (${2 * n * n} unknowns)`);
  const a = benchAssembly(n, quick ? 5 : 15);
  console.log(table(['model', 'unknowns', 'residual', 'Jacobian', 'both'], [[a.model, a.unknowns, a.residualMs.toFixed(1) + ' ms', a.jacobianMs.toFixed(1) + ' ms', a.totalMs.toFixed(1) + ' ms']]));
  const e = benchExpressionAssembly(n, quick ? 3 : 7);
  console.log(e.text + '\n');
  results.assembly = { builtIn: a, expression: e.rows };
}

if (want('steps')) {
  const sizes = quick ? [60, 100] : [100, 200, 300];
  const rows: StepBenchRow[] = [];
  for (const m of sizes) {
    const steps = m <= 100 ? 20 : m <= 200 ? 12 : 8;
    for (const eig of [0, 6]) rows.push(inChild<StepBenchRow>('steps', 'bratu', String(m), String(steps), String(eig), String(repeats)));
  }
  const gs = quick ? 64 : 128;
  for (const eig of [0, 6]) rows.push(inChild<StepBenchRow>('steps', 'gray-scott', String(gs), '10', String(eig), String(repeats)));
  // 3D Bratu 40³ intervals (59,319 unknowns): a few steps, one repetition (minutes per step with KLU)
  if (!quick) rows.push(inChild<StepBenchRow>('steps', 'bratu3d', '40', '3', '6', '1'));
  console.log('Continuation steps (pseudo-arclength; each case in its own process)');
  console.log(stepTable(rows) + '\n');
  console.log('Where the time of a step goes');
  console.log(shareTable(rows) + '\n');
  results.steps = rows;
  const byName = (m: number, eig: number) => rows.find((r) => r.case === `2D Bratu ${m}x${m}` && r.eigenvalues === eig);
  if (!quick) {
    const a = byName(100, 6)!;
    const b = byName(300, 6)!;
    const growth = Math.log(b.secondsPerStep / a.secondsPerStep) / Math.log(b.unknowns / a.unknowns);
    console.log(`Growth of the per-step cost (6 eigenvalues) from m = 100 to m = 300: n^${growth.toFixed(2)}\n`);
    results.growthExponent = growth;
  }
}

if (want('branch')) {
  const n = 1000;
  const r = inChild<{ case: string; unknowns: number; points: number; pointsPerSecond: number; seconds: number }>('branch', String(n), '6');
  console.log('A whole branch with 6 eigenvalues per point');
  console.log(table(['case', 'unknowns', 'points', 'time', 'points/s'], [[r.case, r.unknowns, r.points, r.seconds.toFixed(2) + ' s', r.pointsPerSecond.toFixed(0)]]) + '\n');
  results.branch = r;
}

if (want('memory') && !quick) {
  // as many steps as the 300×300 row, so that its seconds per step extend the growth table alike
  // (the first steps after the start point cost more: a short run would overstate the growth)
  const r = inChild<StepBenchRow>('steps', 'bratu', '400', '8', '6', '1');
  console.log('Peak memory, 2D Bratu 400x400 (160,000 unknowns), 8 steps with 6 eigenvalues per point');
  console.log(table(['case', 'unknowns', 'peak RSS'], [[r.case, r.unknowns, r.peakRssMiB.toFixed(0) + ' MiB']]) + '\n');
  results.memory = r;
}

if (want('reference')) {
  const m = quick ? 60 : 200;
  const stepCounts = quick ? [10, 20] : [20, 40];
  console.log(`Outside reference: whole runs of 2D Bratu ${m}x${m} (start point included), branchline against SciPy (splu per Newton iteration, ARPACK shift-invert)`);
  const r = benchReference(m, stepCounts, (line) => console.log(line));
  if (!r.python) console.log(`  ${r.note}: our figures alone`);
  else console.log(`  reference: ${r.note}`);
  console.log(r.text + '\n');
  results.reference = { python: r.python, note: r.note, rows: r.rows };
}

if (want('curves')) {
  const m = quick ? 60 : 200;
  const r = inChild<CurveBenchRow>('curves', String(m), quick ? '5' : '10', String(repeats));
  console.log('A fold-curve step against a one-parameter step on the same grid (no eigenvalues; target ratio at most 3)');
  console.log(curveTable([r]) + '\n');
  results.curves = r;
}

if (want('hopf-curves')) {
  // 2(m+1)² unknowns: 20,402 at m = 100
  const m = quick ? 30 : 100;
  const r = inChild<CurveBenchRow>('hopf-curves', String(m), quick ? '3' : '5', String(repeats));
  console.log('A Hopf-curve step against a one-parameter step with eigenvalues on the same grid (target ratio at most 4)');
  console.log(curveTable([r]) + '\n');
  results['hopf-curves'] = r;
}

if (want('settle')) {
  const m = quick ? 64 : 128;
  const r = inChild<SettleBenchRow>('settle', String(m));
  console.log(`Time integration to a steady state (BDF2), ${r.outcome}`);
  console.log(settleTable([r]) + '\n');
  console.log(`Newton polish of the steady state: ${r.polishFactorisations} factorisations (not counted above)\n`);
  results.settle = r;
}

if (want('cores')) {
  console.log('One core against two: whole commands with --cores 1 and --cores 2 (wall seconds, minimum of the repeats)');
  const r = benchCores(quick, repeats, (line) => console.log(line));
  console.log(r.text + '\n');
  results.cores = r.rows;
}

(results.load as { end?: number[] }).end = loadavg();
console.log('README tables (markdown, from the figures above):\n');
console.log(readmeTables(results) + '\n');
writeFileSync(jsonPath, JSON.stringify(results, null, 2) + '\n');
console.log(`wrote ${jsonPath}`);
