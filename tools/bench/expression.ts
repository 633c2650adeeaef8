/**
 * Assembly speed of the expression-defined `reaction-diffusion` model against the hand-written
 * built-in models on the same grid: residual and Jacobian (values into the fixed pattern), 2D,
 * periodic. Target: expression / built-in ≤ 1.5 (project issue 3).
 *
 * Both problems are built and warmed up before timing, and their runs are interleaved so that
 * JIT state and machine load affect both alike. Run on its own after `npm run build`:
 *   node dist/tools/bench/expression.js [intervals] [repeats]
 */
import { performance } from 'node:perf_hooks';
import { pathToFileURL } from 'node:url';
import type { Params, Problem } from '../../src/problem/problem.js';
import { grayScott } from '../../discretisations/models/gray-scott.js';
import { brusselator } from '../../discretisations/models/brusselator.js';
import { reactionDiffusion } from '../../discretisations/expression/reaction-diffusion.js';
import { median, seconds, table } from './stats.js';

export interface ExpressionBenchRow {
  model: string;
  grid: string;
  unknowns: number;
  builtInResidualSeconds: number;
  expressionResidualSeconds: number;
  builtInJacobianSeconds: number;
  expressionJacobianSeconds: number;
  /** (residual + Jacobian) time of the expression model over that of the built-in. */
  ratio: number;
}

interface Pair {
  model: string;
  builtIn: Problem;
  expression: Problem;
  p: Params;
  state(n: number): Float64Array;
}

function pairs(m: number): Pair[] {
  const grid = { intervals: [m, m], length: [2.5, 2.5] };
  const wave = (n: number, lo: number, hi: number): Float64Array => {
    const u = new Float64Array(n);
    for (let i = 0; i < n; i++) u[i] = lo + (hi - lo) * (0.5 + 0.5 * Math.sin(0.37 * i));
    return u;
  };
  return [
    {
      model: 'gray-scott',
      builtIn: grayScott({ grid, boundary: 'periodic' }),
      expression: reactionDiffusion({
        grid,
        fields: ['u', 'v'],
        parameters: { F: 0.04, k: 0.06, Du: 2e-5, Dv: 1e-5 },
        reaction: { u: '-u*v^2 + F*(1 - u)', v: 'u*v^2 - (F + k)*v' },
        diffusion: { u: 'Du', v: 'Dv' },
        boundary: 'periodic',
      }),
      p: { F: 0.04, k: 0.06, Du: 2e-5, Dv: 1e-5 },
      state: (n) => wave(n, 0, 1),
    },
    {
      model: 'brusselator',
      builtIn: brusselator({ grid, boundary: 'periodic' }),
      expression: reactionDiffusion({
        grid,
        fields: ['u', 'v'],
        parameters: { a: 2, b: 2, Du: 1, Dv: 8 },
        reaction: { u: 'a - (b + 1)*u + u^2*v', v: 'b*u - u^2*v' },
        diffusion: { u: 'Du', v: 'Dv' },
        boundary: 'periodic',
      }),
      p: { a: 2, b: 4, Du: 1, Dv: 8 },
      state: (n) => wave(n, 0.5, 3),
    },
  ];
}

function seconds1(fn: () => void): number {
  const t0 = performance.now();
  fn();
  return (performance.now() - t0) / 1000;
}

/** Time residual and Jacobian assembly of the built-in and the expression model, interleaved. */
export function benchExpressionAssembly(intervals = 256, repeats = 7): { rows: ExpressionBenchRow[]; text: string } {
  const rows: ExpressionBenchRow[] = [];
  for (const pr of pairs(intervals)) {
    const n = pr.builtIn.size;
    const u = pr.state(n);
    const out = new Float64Array(n);
    const values = new Float64Array(pr.builtIn.pattern().rowIdx.length);
    const valuesE = new Float64Array(pr.expression.pattern().rowIdx.length);
    const res = (q: Problem) => () => q.residual(u, pr.p, out);
    const jacB = () => pr.builtIn.jacobian(u, pr.p, values);
    const jacE = () => pr.expression.jacobian(u, pr.p, valuesE);
    // warm-up: enough calls for the optimising compiler to settle on both
    for (let w = 0; w < 5; w++) {
      res(pr.builtIn)();
      res(pr.expression)();
      jacB();
      jacE();
    }
    const t = { rb: [] as number[], re: [] as number[], jb: [] as number[], je: [] as number[] };
    for (let r = 0; r < repeats; r++) {
      const first = r % 2 === 0;
      if (first) t.rb.push(seconds1(res(pr.builtIn)));
      t.re.push(seconds1(res(pr.expression)));
      if (!first) t.rb.push(seconds1(res(pr.builtIn)));
      if (first) t.jb.push(seconds1(jacB));
      t.je.push(seconds1(jacE));
      if (!first) t.jb.push(seconds1(jacB));
    }
    const rb = median(t.rb);
    const re = median(t.re);
    const jb = median(t.jb);
    const je = median(t.je);
    rows.push({
      model: pr.model,
      grid: `${intervals}x${intervals}`,
      unknowns: n,
      builtInResidualSeconds: rb,
      expressionResidualSeconds: re,
      builtInJacobianSeconds: jb,
      expressionJacobianSeconds: je,
      ratio: (re + je) / (rb + jb),
    });
  }
  const text = table(
    ['model', 'grid', 'unknowns', 'residual built-in', 'residual expression', 'jacobian built-in', 'jacobian expression', 'ratio (target <= 1.5)'],
    rows.map((r) => [
      r.model,
      r.grid,
      r.unknowns,
      seconds(r.builtInResidualSeconds),
      seconds(r.expressionResidualSeconds),
      seconds(r.builtInJacobianSeconds),
      seconds(r.expressionJacobianSeconds),
      r.ratio.toFixed(2),
    ]),
  );
  return { rows, text };
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  const intervals = Number(process.argv[2] ?? 256);
  const repeats = Number(process.argv[3] ?? 7);
  console.log('Expression-defined reaction-diffusion against the built-in models (2D periodic)');
  console.log(benchExpressionAssembly(intervals, repeats).text);
}
