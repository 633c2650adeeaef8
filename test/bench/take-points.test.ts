/**
 * The benchmark's per-step figures divide the work done between two counter readings by the
 * number of timed points. A generator computes a step when it is asked for the next event, so
 * the timing loop must stop asking after the n-th point: one more request would charge a whole
 * extra step to the timed ones (3 steps' figures came out as 4 steps' work before this was fixed).
 * Checked on an invented event stream that counts how often it was asked.
 */
import { describe, expect, test } from 'vitest';
import { takePoints } from '../../tools/bench/stats.js';

function* stream(log: string[], points: number): Generator<{ type: string; k: number }, void> {
  for (let k = 0; k < points; k++) {
    log.push(`step ${k}`);
    yield { type: 'progress', k };
    yield { type: 'point', k };
  }
}

describe('takePoints', () => {
  test('stops at the n-th point without computing the next step', () => {
    const log: string[] = [];
    const events = stream(log, 10);
    expect(takePoints(events, 1)).toBe(1);
    const seen: number[] = [];
    expect(takePoints(events, 3, (e) => seen.push(e.k))).toBe(3);
    expect(seen).toEqual([1, 2, 3]);
    expect(log).toEqual(['step 0', 'step 1', 'step 2', 'step 3']);
  });

  test('returns fewer points when the run ends first', () => {
    const log: string[] = [];
    expect(takePoints(stream(log, 2), 5)).toBe(2);
  });
});
