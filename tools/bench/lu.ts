/**
 * Sparse LU on 2D 5-point grids: analysis, factor, refactor and solve times and the fill of each
 * fill-reducing ordering (AMD, COLAMD, METIS nested dissection).
 */
import { type Ordering, SparseLU } from '../../src/linalg/lu.js';
import { laplacian2d } from './grid.js';
import { seconds, table, timeMedian } from './stats.js';

export interface LuBenchRow {
  grid: string;
  unknowns: number;
  ordering: Ordering;
  analyseSeconds: number;
  factorSeconds: number;
  refactorSeconds: number;
  solveSeconds: number;
  factorEntries: number;
}

export function benchLu(sizes: number[], orderings: Ordering[], repeats: number): { rows: LuBenchRow[]; text: string } {
  const rows: LuBenchRow[] = [];
  for (const m of sizes) {
    const a = laplacian2d(m, 1);
    const b = new Float64Array(a.rows).fill(1);
    for (const ordering of orderings) {
      let lu: SparseLU | undefined;
      const analyseSeconds = timeMedian(() => {
        lu?.dispose();
        lu = new SparseLU(a, { ordering });
      }, Math.min(repeats, 3));
      const solver = lu!;
      const factorSeconds = timeMedian(() => solver.factor(a.values), repeats);
      const refactorSeconds = timeMedian(() => solver.refactor(a.values), repeats);
      const solveSeconds = timeMedian(() => solver.solve(b), repeats);
      const st = solver.stats();
      rows.push({
        grid: `${m}x${m}`,
        unknowns: a.rows,
        ordering,
        analyseSeconds,
        factorSeconds,
        refactorSeconds,
        solveSeconds,
        factorEntries: st.lnz + st.unz - st.n + st.offBlockNnz,
      });
      solver.dispose();
    }
  }
  const text = table(
    ['grid', 'unknowns', 'ordering', 'analyse', 'factor', 'refactor', 'solve', 'entries in L+U'],
    rows.map((r) => [
      r.grid,
      r.unknowns,
      r.ordering,
      seconds(r.analyseSeconds),
      seconds(r.factorSeconds),
      seconds(r.refactorSeconds),
      seconds(r.solveSeconds),
      (r.factorEntries / 1e6).toFixed(2) + ' M',
    ]),
  );
  return { rows, text };
}
