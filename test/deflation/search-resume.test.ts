/**
 * A search resumed from a snapshot taken after any solve repeats the uninterrupted search bit for
 * bit: the same solves, the same states (every double), the same counters. The oracle is the
 * uninterrupted search itself (a resume must not change a result); the states are checked to be
 * steady by the other deflation tests.
 */
import { describe, expect, it } from 'vitest';
import { initialStateBuilder, models } from '../../discretisations/index.js';
import { DeflatedSearch, type SearchEvent, type SearchState, checkSearchState, defaultSearchSettings } from '../../src/deflation/search.js';
import { resolveParameters } from '../../src/problem/problem.js';

const problem = models['allen-cahn'].factory({ grid: { intervals: [60] } });
const p = resolveParameters(problem, { lambda: 120 });
const guesses = [{ u: 'sin(pi*x)' }, { u: 'sin(2*pi*x)' }, { u: 'sin(3*pi*x)' }].map((values, i) => ({ label: `guess ${i + 1}`, u: initialStateBuilder(problem, { values }).build(p) }));
const settings = { ...defaultSearchSettings, stability: { eigenvalues: 3 } };

/** Run a search (from `state` when given) to its end; the snapshot after every solve. */
function runSearch(state?: SearchState): { events: SearchEvent[]; snapshots: SearchState[]; final: SearchState } {
  const s = new DeflatedSearch(problem, p, settings, guesses, state ? { state } : {});
  const events: SearchEvent[] = [];
  const snapshots: SearchState[] = [];
  try {
    for (const ev of s.events()) {
      events.push(ev);
      if (ev.type === 'solve') snapshots.push(s.snapshot());
    }
    return { events, snapshots, final: s.snapshot() };
  } finally {
    s.dispose();
  }
}

describe('a deflated search resumed from a snapshot', () => {
  const whole = runSearch();

  it('finds the states of the uninterrupted search, bit for bit, from a snapshot after every solve', () => {
    expect(whole.final.states.length).toBeGreaterThan(4);
    expect(whole.snapshots.length).toBeGreaterThan(whole.final.states.length);
    for (const [k, snap] of whole.snapshots.entries()) {
      const rest = runSearch(snap);
      // the snapshot was taken between solves: the resumed search goes on with the next one
      expect(rest.final, `resumed after solve ${k + 1}`).toEqual(whole.final);
      const expected = whole.events.filter((e) => e.type !== 'solve-start' || e.solve > k + 1);
      expect(rest.events.filter((e) => e.type === 'solve').map((e) => (e as { record: unknown }).record)).toEqual(expected.filter((e) => e.type === 'solve' && e.record.solve > k + 1).map((e) => (e as { record: unknown }).record));
      for (const [i, s] of rest.final.states.entries()) expect(Buffer.from(s.u.buffer).equals(Buffer.from(whole.final.states[i].u.buffer)), `state ${i + 1} resumed after solve ${k + 1}`).toBe(true);
    }
  });

  it('refuses a saved state that does not fit the search, naming what is wrong', () => {
    const snap = whole.snapshots[3];
    expect(checkSearchState(snap, problem.size, guesses.length)).toBeUndefined();
    expect(checkSearchState({ ...snap, failedWith: [-1] }, problem.size, guesses.length)).toMatch(/1 guess.*3/);
    expect(checkSearchState({ ...snap, states: snap.states.map((s, i) => (i === 0 ? { ...s, u: new Float64Array(5) } : s)) }, problem.size, guesses.length)).toMatch(/has state 1 with 5 values/);
    expect(checkSearchState({ ...snap, states: [snap.states[1], snap.states[0], ...snap.states.slice(2)] }, problem.size, guesses.length)).toMatch(/numbered/);
    expect(checkSearchState({ ...snap, cursor: 7 }, problem.size, guesses.length)).toMatch(/cursor/);
    expect(checkSearchState({ ...snap, solves: snap.solves.slice(1) }, problem.size, guesses.length)).toMatch(/solve/);
  });
});
