/** Helpers of the deflation tests: a search run to its end, and checks written out independently of the models' code. */
import { initialStateBuilder } from '../../discretisations/index.js';
import { DeflatedSearch, type FoundState, type SearchEndReason, type SearchSettings, type SolveRecord, defaultSearchSettings } from '../../src/deflation/search.js';
import type { Params, Problem } from '../../src/problem/problem.js';

export interface SearchRun {
  states: FoundState[];
  solves: SolveRecord[];
  reason: SearchEndReason;
}

/** Search from guesses written as per-field expressions; every event collected. */
export function search(problem: Problem, p: Params, guesses: Record<string, string>[], settings: Partial<SearchSettings> = {}): SearchRun {
  const built = guesses.map((values, i) => ({ label: `guess ${i + 1}`, u: initialStateBuilder(problem, { values }).build(p) }));
  const s = new DeflatedSearch(problem, p, { ...defaultSearchSettings, ...settings }, built);
  const states: FoundState[] = [];
  const solves: SolveRecord[] = [];
  let reason: SearchEndReason | undefined;
  try {
    for (const ev of s.events()) {
      if (ev.type === 'solve') {
        solves.push(ev.record);
        if (ev.state) states.push(ev.state);
      }
      if (ev.type === 'end') reason = ev.reason;
    }
  } finally {
    s.dispose();
  }
  return { states, solves, reason: reason! };
}

/** Root-mean-square distance of two node arrays (plain: uniform node weights). */
export function rms(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += (a[i] - b[i]) ** 2;
  return Math.sqrt(s / a.length);
}

/** The discrete Dirichlet Laplacian's eigenvalues on (0, 1) with N intervals: (4/h²) sin²(jπh/2) (standard finite-difference result). */
export function laplacianEigenvalue(j: number, intervals: number): number {
  const h = 1 / intervals;
  return (4 / (h * h)) * Math.sin((j * Math.PI * h) / 2) ** 2;
}
