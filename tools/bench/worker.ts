/**
 * Runs one benchmark case in this process and prints its result as JSON on the last line
 * (spawned by run.ts so that peak resident memory belongs to the case alone).
 *   node dist/tools/bench/worker.js steps <case> <m> <steps> <eigenvalues> <repeats>
 *   node dist/tools/bench/worker.js branch <n> <eigenvalues>
 *   node dist/tools/bench/worker.js curves <m> <steps> <repeats>
 *   node dist/tools/bench/worker.js hopf-curves <m> <steps> <repeats>
 *   node dist/tools/bench/worker.js settle <m>
 */
import { benchBranch, benchSteps, bratu1d, bratu2d, grayScott2d } from './continuation.js';
import { benchCurveSteps, benchHopfCurveSteps } from './curves.js';
import { benchSettle } from './settle.js';

const [kind, ...rest] = process.argv.slice(2);
if (kind === 'steps') {
  const [name, m, steps, eig, repeats] = rest;
  const c = name === 'gray-scott' ? grayScott2d(Number(m), Number(steps)) : bratu2d(Number(m), Number(steps));
  console.log(JSON.stringify(benchSteps(c, Number(eig), Number(repeats))));
} else if (kind === 'branch') {
  const [n, eig] = rest;
  console.log(JSON.stringify(benchBranch(bratu1d(Number(n)), Number(eig))));
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
