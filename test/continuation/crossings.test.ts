/**
 * The accounting rules for the unstable count (src/continuation/crossings.ts) on hand-made
 * eigenvalue lists: only crossings of the imaginary axis change the count, and each must be
 * matched by what the step saw.
 */
import { describe, expect, it } from 'vitest';
import { accountFirstStep, accountStep, matchPairs, pairCrossings } from '../../src/continuation/crossings.js';
import { crossingPair } from '../../src/continuation/stability.js';
import type { PointStability } from '../../src/continuation/types.js';

function stability(values: [number, number][], complete = true): PointStability {
  const eigenvalues = values.map(([re, im]) => ({ re, im, residual: 0 }));
  const unstable = eigenvalues.filter((v) => v.re > 0);
  return {
    stable: unstable.length === 0,
    unstableCount: unstable.length,
    unstableComplex: unstable.filter((v) => v.im !== 0).length,
    leadingReal: eigenvalues[0].re,
    leadingImag: eigenvalues[0].im,
    eigenvalues,
    complete,
    searched: 'hand-made',
  };
}

const none = { fold: false, branchPoint: false };

describe('counting crossings between neighbouring points', () => {
  it('two positive real eigenvalues merging into a complex pair (trace² = 4 det) change nothing', () => {
    const a = stability([[0.02, 0], [0.01, 0], [-1, 0]]);
    const b = stability([[0.015, 0.003], [0.015, -0.003], [-1, 0]]);
    const account = accountStep(a, b, none)!;
    expect(account.real).toBe(0);
    expect(account.pairs).toBe(0);
    expect(account.explained).toBe(true);
    expect(account.double).toBe(false);
  });

  it('a complex pair crossing into the right half-plane is +2, carried by the pair (a Hopf point)', () => {
    const a = stability([[-0.01, 0.5], [-0.01, -0.5], [-1, 0]]);
    const b = stability([[0.02, 0.49], [0.02, -0.49], [-1, 0]]);
    expect(pairCrossings(a, b)).toBe(2);
    const account = accountStep(a, b, none)!;
    expect([account.from, account.to, account.real, account.explained]).toEqual([0, 2, 0, true]);
    expect(pairCrossings(b, a)).toBe(-2);
  });

  it('one real eigenvalue crossing needs a fold or a branch point; without one it is unexplained', () => {
    const a = stability([[-0.1, 0], [-2, 0]]);
    const b = stability([[0.1, 0], [-2, 0]]);
    expect(accountStep(a, b, { fold: true, branchPoint: false })!.explained).toBe(true);
    expect(accountStep(a, b, { fold: false, branchPoint: true })!.explained).toBe(true);
    const alone = accountStep(a, b, none)!;
    expect(alone.explained).toBe(false);
    expect(alone.double).toBe(false);
  });

  it('two real eigenvalues crossing with no sign change seen: a double crossing to split down to', () => {
    const a = stability([[-0.1, 0], [-0.1, 0], [-2, 0]]);
    const b = stability([[0.1, 0], [0.1, 0], [-2, 0]]);
    const account = accountStep(a, b, none)!;
    expect(account.explained).toBe(false);
    expect(account.double).toBe(true);
    // a fold and a branch point in the same step explain two
    expect(accountStep(a, b, { fold: true, branchPoint: true })!.explained).toBe(true);
    // a single branch point cannot explain an even change
    expect(accountStep(a, b, { fold: false, branchPoint: true })!.explained).toBe(false);
  });

  it('uncertified counts are lower bounds and are not compared', () => {
    const a = stability([[-0.1, 0]], false);
    const b = stability([[0.1, 0]]);
    expect(accountStep(a, b, none)).toBeUndefined();
  });

  it('the first step off a branch point: the critical eigenvalue may go either way, anything more is unexplained', () => {
    // origin: the critical eigenvalue 1e-13 (zero up to location), one more unstable one
    const origin = stability([[0.8, 0], [1e-13, 0], [-3, 0]]);
    expect(accountFirstStep(origin, stability([[0.8, 0], [0.05, 0], [-3, 0]]), 1)!.explained).toBe(true);
    expect(accountFirstStep(origin, stability([[0.8, 0], [-0.05, 0], [-3, 0]]), 1)!.explained).toBe(true);
    // a further eigenvalue crossed within the first step (the beam's mode-2 branch): 1 → 3
    const crossed = accountFirstStep(origin, stability([[0.8, 0], [0.05, 0], [0.01, 0]]), 1)!;
    expect(crossed.explained).toBe(false);
    expect([crossed.from, crossed.to]).toEqual([2, 3]);
    // and one that went stable: 1 → 0 besides the critical one
    expect(accountFirstStep(origin, stability([[-0.2, 0], [-0.05, 0], [-3, 0]]), 1)!.explained).toBe(false);
  });
});

describe('matching pairs between neighbouring points (the gel-spots trace)', () => {
  // The values near the axis at F = 0.025970 and F = 0.025019 on the gel-spots trace (32², four
  // spots; rounded): every pair drifts right by ~6e-4 per step, more than the ~5.5e-4 from the
  // crossing pair to its stable neighbour's next value. Matched each to its nearest, the crossing pair (−4.9e-4 → +1.2e-4) went to its
  // stable neighbour and no Hopf point was located; the least-squares matching is exact for a
  // common drift.
  const before = stability([[-4.926e-4, 0.032772], [-4.926e-4, -0.032772], [-1.6393e-3, 0.032943], [-1.6393e-3, -0.032943], [-1.6393e-3, 0.032943], [-1.6393e-3, -0.032943]]);
  const after = stability([[1.213e-4, 0.032874], [1.213e-4, -0.032874], [-9.521e-4, 0.033076], [-9.521e-4, -0.033076], [-9.521e-4, 0.033076], [-9.521e-4, -0.033076]]);

  it('finds the pair that crossed (a Hopf point) although a stable pair lies nearer to it', () => {
    expect(pairCrossings(before, after)).toBe(2);
    const pair = crossingPair(before, after)!;
    expect(pair).toBeDefined();
    expect(pair.a.re).toBeCloseTo(-4.926e-4, 10);
    expect(pair.b.re).toBeCloseTo(1.213e-4, 10);
  });

  it('finds a pair crossing beyond the listed values among those found near the axis', () => {
    // 6 unstable, 4 listed: the fourth pair crosses (F = 0.02293 → 0.02191, rounded)
    const a = { ...stability([[1.5955e-3, 0.032869], [1.5955e-3, -0.032869], [6.695e-4, 0.033114], [6.695e-4, -0.033114]]), unstableCount: 6, unstableComplex: 6 };
    a.nearAxis = [...a.eigenvalues, { re: 6.695e-4, im: 0.033114 }, { re: 6.695e-4, im: -0.033114 }, { re: -2.837e-4, im: 0.033333 }, { re: -2.837e-4, im: -0.033333 }];
    const b = { ...stability([[2.3917e-3, 0.032719], [2.3917e-3, -0.032719], [1.529e-3, 0.032972], [1.529e-3, -0.032972]]), unstableCount: 8, unstableComplex: 8 };
    b.nearAxis = [...b.eigenvalues, { re: 1.529e-3, im: 0.032972 }, { re: 1.529e-3, im: -0.032972 }, { re: 6.453e-4, im: 0.033196 }, { re: 6.453e-4, im: -0.033196 }];
    expect(pairCrossings(a, b)).toBe(2);
    const pair = crossingPair(a, b)!;
    expect(pair.a.re).toBeCloseTo(-2.837e-4, 10);
    expect(pair.b.re).toBeCloseTo(6.453e-4, 10);
  });

  it('matches as a whole: the least sum of squared distances, also when the lists differ in length', () => {
    const m = matchPairs([{ re: 0, im: 1 }, { re: 0, im: 1.1 }], [{ re: 0.08, im: 1.1 }, { re: 0.08, im: 1.0 }, { re: -5, im: 3 }]);
    expect(m.map((x) => [x.a.im, x.b.im])).toEqual([[1, 1.0], [1.1, 1.1]]);
  });
});
