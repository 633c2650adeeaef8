/**
 * KLU against SuperLU on the bordered continuation matrix of every benchmark case: analysis,
 * factorisation, refactorisation (KLU: kept pivots; SuperLU has none) and solve times, entries in
 * the factors, wasm memory, and what the automatic choice (`decideBackend`, from the predicted
 * factor) picks. Times are CPU seconds, the minimum of the repeats after a warm-up (the machine
 * may be shared: see cpuMin). Each (case, backend) runs in its own process (worker.ts) so that
 * the wasm memory figure belongs to it.
 */
import { models } from '../../discretisations/index.js';
import { ContinuationSystem } from '../../src/continuation/system.js';
import { type Backend, SparseLU, decideBackend, predictFactor } from '../../src/linalg/lu.js';
import { wasmMemoryBytes } from '../../src/linalg/wasm.js';
import { resolveParameters } from '../../src/problem/problem.js';
import { cpuMin, seconds, table } from './stats.js';

export interface BackendCase {
  name: string;
  model: string;
  options: Record<string, unknown>;
  parameters: Record<string, number>;
  parameter: string;
}

export interface BackendRow {
  case: string;
  unknowns: number;
  backend: Backend;
  analyseSeconds: number;
  factorSeconds: number;
  /** KLU's refactorisation with kept pivots (SuperLU: a factorisation). */
  refactorSeconds: number;
  solveSeconds: number;
  /** Six right-hand sides at once. */
  solve6Seconds: number;
  /** Entries of L and U (diagonals counted once each factor). */
  factorEntries: number;
  /** Size of the backend's wasm memory after the run (both modules are loaded; the other stays small). */
  wasmMiB: number;
  /** What 'auto' picks for this matrix, and why. */
  auto: Backend;
  reason: string;
}

/** The benchmark's cases (the list): 2D Bratu 100²–400², Gray–Scott periodic 128², 3D Bratu 40³. */
export function backendCases(quick: boolean): BackendCase[] {
  const bratu2 = (m: number): BackendCase => ({ name: `2D Bratu ${m}x${m}`, model: 'bratu', options: { grid: { intervals: [m + 1, m + 1] } }, parameters: { lambda: 1 }, parameter: 'lambda' });
  const gs = (m: number): BackendCase => ({
    name: `2D Gray–Scott periodic ${m}x${m}`,
    model: 'gray-scott',
    options: { grid: { intervals: [m, m], length: [1, 1] }, boundary: 'periodic', initial: 'uniform' },
    parameters: { F: 0.04, k: 0.06 },
    parameter: 'F',
  });
  const bratu3 = (m: number): BackendCase => ({ name: `3D Bratu ${m}^3 intervals`, model: 'bratu', options: { grid: { intervals: [m, m, m] } }, parameters: { lambda: 1 }, parameter: 'lambda' });
  if (quick) return [bratu2(60), gs(48), bratu3(16)];
  return [bratu2(100), bratu2(200), bratu2(300), bratu2(400), gs(128), bratu3(40)];
}

/** The bordered matrix [[J, F_λ], [w∘τ, τ_λ]] at the model's initial state, with a dense border row. */
function borderedMatrix(c: BackendCase): { pattern: ContinuationSystem['bordered']['pattern']; values: Float64Array; n: number } {
  const problem = models[c.model].factory(c.options as never);
  const params = resolveParameters(problem, c.parameters);
  const sys = new ContinuationSystem(problem, params, c.parameter);
  const u = problem.initialGuess(params);
  sys.assemble(u, params[c.parameter]);
  const tangent = new Float64Array(problem.size + 1).fill(1 / Math.sqrt(problem.size + 1));
  sys.setTangentRow(tangent);
  return { pattern: sys.bordered.pattern, values: sys.bordered.values.slice(), n: problem.size + 1 };
}

/** One case on one backend (run in its own process). */
export function benchBackend(c: BackendCase, backend: Backend, repeats: number): BackendRow {
  const { pattern, values, n } = borderedMatrix(c);
  const auto = decideBackend(n, predictFactor(pattern));
  let lu: SparseLU | undefined;
  const analyseSeconds = cpuMin(() => {
    lu?.dispose();
    lu = new SparseLU(pattern, { backend });
  }, 1);
  const solver = lu!;
  const factorSeconds = cpuMin(() => solver.factor(values), repeats);
  const refactorSeconds = cpuMin(() => solver.refactor(values), repeats);
  const b = new Float64Array(n).fill(1);
  const solveSeconds = cpuMin(() => solver.solve(b), Math.max(repeats, 5));
  const b6 = new Float64Array(6 * n).fill(1);
  const solve6Seconds = cpuMin(() => solver.solve(b6, undefined, 6), Math.max(repeats, 5));
  const st = solver.stats();
  const row: BackendRow = {
    case: c.name,
    unknowns: n,
    backend,
    analyseSeconds,
    factorSeconds,
    refactorSeconds,
    solveSeconds,
    solve6Seconds,
    factorEntries: st.lnz + st.unz - st.n + st.offBlockNnz,
    wasmMiB: wasmMemoryBytes() / 2 ** 20,
    auto: auto.backend,
    reason: auto.reason,
  };
  solver.dispose();
  return row;
}

export function backendTable(rows: BackendRow[]): string {
  const text = table(
    ['case', 'unknowns', 'backend', 'analyse', 'factor', 'refactor', 'solve', '6 solves', 'entries in L+U', 'wasm memory', 'auto picks'],
    rows.map((r) => [
      r.case,
      r.unknowns,
      r.backend,
      seconds(r.analyseSeconds),
      seconds(r.factorSeconds),
      seconds(r.refactorSeconds),
      seconds(r.solveSeconds),
      seconds(r.solve6Seconds),
      (r.factorEntries / 1e6).toFixed(2) + ' M',
      r.wasmMiB.toFixed(0) + ' MiB',
      r.backend === 'klu' ? r.auto : '',
    ]),
  );
  const reasons = rows.filter((r) => r.backend === 'klu').map((r) => `  ${r.case}: ${r.auto} — ${r.reason}`);
  return text + '\n' + reasons.join('\n');
}
