/**
 * Assembly timing for the benchmark harness (not a test): residual and Jacobian of 2D
 * Gray–Scott on an N×N periodic grid (default 256×256, 131 072 unknowns).
 */
import { grayScott } from './models/gray-scott.js';
import { resolveParameters } from '../src/problem/problem.js';

export interface AssemblyTiming {
  readonly model: string;
  readonly unknowns: number;
  readonly storedEntries: number;
  /** Median milliseconds over the repeats. */
  readonly residualMs: number;
  readonly jacobianMs: number;
  /** residualMs + jacobianMs. */
  readonly totalMs: number;
  /** One-off set-up (grid, operators, pattern, index maps). */
  readonly setupMs: number;
}

function median(a: number[]): number {
  const s = a.slice().sort((x, y) => x - y);
  return s[Math.floor(s.length / 2)];
}

export function benchAssembly(intervals = 256, repeats = 15): AssemblyTiming {
  const t0 = performance.now();
  const problem = grayScott({ grid: { intervals: [intervals, intervals] }, boundary: 'periodic', initial: 'pulse' });
  const setupMs = performance.now() - t0;
  const p = resolveParameters(problem);
  const u = problem.initialGuess(p);
  const out = new Float64Array(problem.size);
  const values = new Float64Array(problem.pattern().rowIdx.length);
  // warm up (JIT)
  for (let k = 0; k < 3; k++) {
    problem.residual(u, p, out);
    problem.jacobian(u, p, values);
  }
  const tr: number[] = [];
  const tj: number[] = [];
  for (let k = 0; k < repeats; k++) {
    const a = performance.now();
    problem.residual(u, p, out);
    const b = performance.now();
    problem.jacobian(u, p, values);
    const c = performance.now();
    tr.push(b - a);
    tj.push(c - b);
  }
  const residualMs = median(tr);
  const jacobianMs = median(tj);
  return {
    model: `gray-scott 2D ${intervals}x${intervals} periodic`,
    unknowns: problem.size,
    storedEntries: values.length,
    residualMs,
    jacobianMs,
    totalMs: residualMs + jacobianMs,
    setupMs,
  };
}
