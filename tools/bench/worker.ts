/**
 * Runs one benchmark case in this process and prints its result as JSON on the last line
 * (spawned by run.ts so that peak resident memory belongs to the case alone).
 *   node dist/tools/bench/worker.js steps <case> <m> <steps> <eigenvalues> <repeats>
 *   node dist/tools/bench/worker.js branch <n> <eigenvalues>
 *   node dist/tools/bench/worker.js backend <case index> <quick 0|1> <klu|superlu> <repeats>
 *   node dist/tools/bench/worker.js curves <m> <steps> <repeats>
 *   node dist/tools/bench/worker.js hopf-curves <m> <steps> <repeats>
 *   node dist/tools/bench/worker.js settle <m>
 */
import { benchBranch, benchSteps, bratu1d, bratu2d, bratu3d, grayScott2d } from './continuation.js';
import { backendCases, benchBackend } from './backends.js';
import { benchCurveSteps, benchHopfCurveSteps } from './curves.js';
import { benchSettle } from './settle.js';
import type { Backend } from '../../src/linalg/lu.js';

const [kind, ...rest] = process.argv.slice(2);
if (kind === 'steps') {
  const [name, m, steps, eig, repeats] = rest;
  const c = name === 'gray-scott' ? grayScott2d(Number(m), Number(steps)) : name === 'bratu3d' ? bratu3d(Number(m), Number(steps)) : bratu2d(Number(m), Number(steps));
  console.log(JSON.stringify(benchSteps(c, Number(eig), Number(repeats))));
} else if (kind === 'branch') {
  const [n, eig] = rest;
  console.log(JSON.stringify(benchBranch(bratu1d(Number(n)), Number(eig))));
} else if (kind === 'backend') {
  const [index, quick, backend, repeats] = rest;
  const c = backendCases(quick === '1')[Number(index)];
  console.log(JSON.stringify(benchBackend(c, backend as Backend, Number(repeats))));
} else if (kind === 'curves') {
  const [m, steps, repeats] = rest;
  console.log(JSON.stringify(benchCurveSteps(Number(m), Number(steps), Number(repeats))));
} else if (kind === 'hopf-curves') {
  const [m, steps, repeats] = rest;
  console.log(JSON.stringify(benchHopfCurveSteps(Number(m), Number(steps), Number(repeats))));
} else if (kind === 'settle') {
  console.log(JSON.stringify(benchSettle(Number(rest[0]))));
} else {
  console.error(`worker: unknown kind '${kind}'`);
  process.exit(2);
}
