/**
 * `npm run bench`: the benchmark suite. Prints one table per part (median of repeated runs after a
 * warm-up) and writes everything as JSON (bench-results.json, or the path given with --json) for
 * comparison between commits.
 *
 *   npm run bench                 full suite
 *   npm run bench -- --quick      smaller grids, fewer repeats (a smoke run)
 */
import { writeFileSync } from 'node:fs';
import { cpus, totalmem } from 'node:os';
import { benchLu } from './lu.js';
import { wasmMemoryBytes } from '../../src/linalg/wasm.js';

const args = process.argv.slice(2);
const quick = args.includes('--quick');
const jsonAt = args.indexOf('--json');
const jsonPath = jsonAt >= 0 ? args[jsonAt + 1] : 'bench-results.json';
const repeats = quick ? 3 : 5;

const machine = `${cpus().length} cores (${cpus()[0]?.model ?? 'unknown'}), ${(totalmem() / 2 ** 30).toFixed(0)} GiB, Node ${process.version}`;
console.log(`branchline benchmark — ${machine}`);
console.log(`median of ${repeats} runs after a warm-up\n`);

const results: Record<string, unknown> = { machine, date: new Date().toISOString(), repeats };

console.log('Sparse LU (KLU in WebAssembly) on 2D 5-point grids');
const lu = benchLu(quick ? [50, 100] : [100, 200, 300], ['amd', 'colamd', 'metis'], repeats);
console.log(lu.text + '\n');
results.lu = lu.rows;

results.wasmMemoryBytes = wasmMemoryBytes();
writeFileSync(jsonPath, JSON.stringify(results, null, 2) + '\n');
console.log(`wrote ${jsonPath}`);
