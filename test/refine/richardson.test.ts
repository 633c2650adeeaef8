import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import {
  analyseRefinement,
  observedOrder,
  refinementJson,
  refinementRows,
  REFINEMENT_COLUMNS,
  type RefinementSample,
} from '../../src/refine/index.js';

/** Samples of v(h) = vStar + C h^p + D h^(p+1) on the given spacings (coarsest first or not). */
function powerLaw(hs: number[], vStar: number, C: number, p: number, D = 0): RefinementSample[] {
  return hs.map((h) => ({ h, value: vStar + C * h ** p + D * h ** (p + 1) }));
}

const kinds = (r: { warnings: readonly { kind: string }[] }): string[] => r.warnings.map((w) => w.kind);

describe('observed order and Richardson extrapolation on exact power laws', () => {
  it('recovers p and v* exactly for a uniform ratio (pure power law)', () => {
    const r = analyseRefinement(powerLaw([0.1, 0.05, 0.025], 3.5, 2, 2));
    expect(r.order).toBeCloseTo(2, 12);
    expect(r.extrapolated).toBeCloseTo(3.5, 13);
    expect(r.orderSource).toBe('observed');
    expect(r.safetyFactor).toBe(1.25);
    expect(r.warnings).toEqual([]);
  });

  it('recovers p and v* for non-uniform ratios (r21 = 2.5, r32 = 2)', () => {
    // v = 1 + h^2 at h = 1, 0.5, 0.2: values 2, 1.25, 1.04 — order 2, limit 1 by construction.
    const r = analyseRefinement([
      { h: 1, value: 2 },
      { h: 0.5, value: 1.25 },
      { h: 0.2, value: 1.04 },
    ]);
    expect(r.order).toBeCloseTo(2, 12);
    expect(r.extrapolated).toBeCloseTo(1, 13);
  });

  it('recovers p and v* for strongly unequal ratios (r32 = 1.3, r21 = 3)', () => {
    const r = analyseRefinement(powerLaw([1, 1 / 1.3, 1 / (1.3 * 3)], -7.25, -0.8, 3.3));
    expect(r.order).toBeCloseTo(3.3, 10);
    expect(r.extrapolated).toBeCloseTo(-7.25, 12);
  });

  it('accepts grids in any order and numbers them coarsest first', () => {
    const r = analyseRefinement(powerLaw([0.025, 0.1, 0.05], 1, 1, 2));
    expect(r.grids.map((g) => g.h)).toEqual([0.1, 0.05, 0.025]);
    expect(r.grids.map((g) => g.grid)).toEqual([1, 2, 3]);
    expect(r.grids[0].difference).toBeNull();
    expect(r.grids[0].observedOrder).toBeNull();
    expect(r.grids[1].observedOrder).toBeNull();
    expect(r.grids[2].observedOrder).toBeCloseTo(2, 12);
  });

  it('with a higher-order term the observed orders converge to p at the rate h (the next term)', () => {
    const hs = [0.2, 0.1, 0.05, 0.025, 0.0125, 0.00625];
    const r = analyseRefinement(powerLaw(hs, 6.8, 1.5, 2, 1));
    const errs = r.grids.slice(2).map((g) => Math.abs((g.observedOrder as number) - 2));
    // Each halving of h should about halve the order error (the leading correction is O(h)):
    // the rate log2(err_k-1 / err_k) tends to 1 from below as h shrinks.
    const rates = errs.slice(1).map((e, k) => Math.log2(errs[k] / e));
    for (let k = 1; k < rates.length; k++) expect(rates[k]).toBeGreaterThan(rates[k - 1]);
    expect(rates[rates.length - 1]).toBeGreaterThan(0.9);
    expect(rates[rates.length - 1]).toBeLessThan(1.05);
    // The extrapolation error shrinks like h^(p+1) (3rd order) once in the asymptotic range.
    const xerr = r.grids.slice(2).map((g) => Math.abs((g.extrapolated as number) - 6.8));
    const lastRate = Math.log2(xerr[xerr.length - 2] / xerr[xerr.length - 1]);
    expect(lastRate).toBeGreaterThan(2.7);
    expect(lastRate).toBeLessThan(3.3);
    expect(Math.abs((r.extrapolated as number) - 6.8)).toBeLessThan(1e-6);
    expect(r.extrapolationSpread).not.toBeNull();
    // the extrapolated value's estimate is the spread of successive extrapolations; the GCI bounds
    // the finest grid's value
    expect(r.errorEstimateSource).toBe('extrapolation-spread');
    expect(r.errorEstimate).toBe(r.extrapolationSpread);
    const finest = r.grids[r.grids.length - 1].value;
    expect(Math.abs(finest - 6.8)).toBeLessThan(r.gciAbsolute as number);
    // The error estimate must bound the actual error here.
    expect(Math.abs((r.extrapolated as number) - 6.8)).toBeLessThan(r.errorEstimate as number);
    expect(r.asymptoticRange).toBe('consistent');
  });

  it('oscillatory triples: the order satisfies the Celik et al. (2008) equation with s = −1', () => {
    const e32 = 0.02;
    const e21 = -0.004;
    const r21 = 2.4;
    const r32 = 1.6;
    const p = observedOrder(e32, e21, r21, r32) as number;
    expect(p).toBeGreaterThan(0);
    const q = Math.log((r21 ** p + 1) / (r32 ** p + 1));
    expect(p * Math.log(r21)).toBeCloseTo(Math.abs(Math.log(Math.abs(e32 / e21)) + q), 10);
  });

  it('observedOrder returns null for zero differences or ratios not above 1', () => {
    expect(observedOrder(0, 1, 2, 2)).toBeNull();
    expect(observedOrder(1, 0, 2, 2)).toBeNull();
    expect(observedOrder(1, 1, 1, 2)).toBeNull();
  });
});

describe('grid convergence index', () => {
  it('matches a three-grid example worked by hand (Roache 1994 GCI, Fs = 1.25)', () => {
    // Worked by hand: f3 = 0.95850 (h = 0.04), f2 = 0.96870 (h = 0.02), f1 = 0.97120 (h = 0.01).
    // ε21 = f2 − f1 = −0.00250, ε32 = f3 − f2 = −0.01020, ε32/ε21 = 4.08 = r^p with r = 2,
    // so p = ln 4.08 / ln 2 = 2.028569..., r^p − 1 = 3.08.
    // Richardson: f_ext = f1 + (f1 − f2)/3.08 = 0.97120 + 0.0025/3.08 = 0.972011688...
    // GCI_fine = 1.25 · |ε21/f1| / 3.08 = 1.25 · 0.0025/0.97120 / 3.08 = 0.00104470...
    // Absolute form: 1.25 · 0.0025 / 3.08 = 0.00101461...
    const r = analyseRefinement([
      { h: 0.04, value: 0.9585, unknowns: 24 },
      { h: 0.02, value: 0.9687, unknowns: 49 },
      { h: 0.01, value: 0.9712, unknowns: 99 },
    ]);
    expect(r.order).toBeCloseTo(2.028569, 6);
    expect(r.extrapolated).toBeCloseTo(0.972011688, 8);
    expect(r.gci).toBeCloseTo(0.0010447, 7);
    expect(r.gciAbsolute).toBeCloseTo(0.00101461, 8);
    expect(r.errorEstimate).toBe(r.gciAbsolute);
    expect(r.extrapolationSpread).toBeNull();
    expect(r.asymptoticRange).toBe('unverified');
  });

  it('two grids with an assumed order use Fs = 3 (Roache 1994), worked by hand', () => {
    // Worked by hand: f2 = 0.48 (h = 0.2), f1 = 0.50 (h = 0.1), p assumed 2, r^p − 1 = 3.
    // f_ext = 0.50 + 0.02/3 = 0.506666...; GCI absolute = 3 · 0.02 / 3 = 0.02; relative 0.04.
    const r = analyseRefinement(
      [
        { h: 0.2, value: 0.48 },
        { h: 0.1, value: 0.5 },
      ],
      { assumedOrder: 2 },
    );
    expect(r.order).toBe(2);
    expect(r.orderSource).toBe('assumed');
    expect(r.safetyFactor).toBe(3);
    expect(r.extrapolated).toBeCloseTo(0.5066666667, 9);
    expect(r.gciAbsolute).toBeCloseTo(0.02, 12);
    expect(r.gci).toBeCloseTo(0.04, 12);
    expect(kinds(r)).toEqual(['too-few-grids']);
  });

  it('two grids without an assumed order: a warning, no extrapolation, no NaN', () => {
    const r = analyseRefinement([
      { h: 0.2, value: 0.48 },
      { h: 0.1, value: 0.5 },
    ]);
    expect(r.extrapolated).toBeNull();
    expect(r.errorEstimate).toBeNull();
    expect(kinds(r)).toEqual(['too-few-grids']);
    expect(r.warnings[0].message).toMatch(/two grids/);
  });

  it('one grid: a warning only', () => {
    const r = analyseRefinement([{ h: 0.1, value: 3 }]);
    expect(kinds(r)).toEqual(['too-few-grids']);
    expect(r.grids).toHaveLength(1);
  });
});

describe('warnings', () => {
  it('oscillatory convergence (differences change sign)', () => {
    // v = 1 + (−1)^k 0.4 h^2 on halving grids: the sign of the error alternates.
    const hs = [0.4, 0.2, 0.1, 0.05];
    const r = analyseRefinement(hs.map((h, k) => ({ h, value: 1 + (k % 2 === 0 ? 1 : -1) * 0.4 * h * h })));
    expect(kinds(r)).toContain('oscillatory');
    expect(r.asymptoticRange).toBe('not-reached');
    expect(r.warnings.find((w) => w.kind === 'oscillatory')?.message).toMatch(/change sign/);
  });

  it('orders that disagree between successive triples', () => {
    // Differences −0.1, −0.05, −0.01 on halving grids: orders 1 and log2(5) = 2.32.
    const r = analyseRefinement([
      { h: 0.8, value: 1.0 },
      { h: 0.4, value: 0.9 },
      { h: 0.2, value: 0.85 },
      { h: 0.1, value: 0.84 },
    ]);
    expect(r.grids[2].observedOrder).toBeCloseTo(1, 12);
    expect(r.grids[3].observedOrder).toBeCloseTo(Math.log2(5), 12);
    expect(kinds(r)).toContain('orders-disagree');
    expect(r.asymptoticRange).toBe('not-reached');
  });

  it('order far from the expected one', () => {
    const r = analyseRefinement(powerLaw([0.1, 0.05, 0.025], 1, 1, 1), { expectedOrder: 2 });
    expect(kinds(r)).toEqual(['order-unexpected']);
    const ok = analyseRefinement(powerLaw([0.1, 0.05, 0.025], 1, 1, 2), { expectedOrder: 2 });
    expect(ok.warnings).toEqual([]);
    expect(ok.asymptoticRange).toBe('consistent');
  });

  it('identical values: converged to round-off, no NaN anywhere', () => {
    const r = analyseRefinement([
      { h: 0.1, value: 2.5 },
      { h: 0.05, value: 2.5 },
      { h: 0.025, value: 2.5 },
    ]);
    expect(kinds(r)).toEqual(['converged-to-roundoff']);
    expect(r.extrapolated).toBe(2.5);
    expect(r.order).toBeNull();
    const json = JSON.stringify(refinementJson(r, { point: 'fold 1', parameter: 'lambda' }));
    expect(json).not.toMatch(/NaN|Infinity/);
    expect(Number.isFinite(r.errorEstimate)).toBe(true);
  });

  it('identical zero values do not divide by zero', () => {
    const r = analyseRefinement(powerLaw([0.1, 0.05, 0.025], 0, 0, 2));
    expect(r.extrapolated).toBe(0);
    expect(r.errorEstimate).toBe(0);
    expect(r.gci).toBeNull();
  });

  it('differences that grow: not converging, no extrapolation', () => {
    const r = analyseRefinement([
      { h: 0.4, value: 1 },
      { h: 0.2, value: 1.1 },
      { h: 0.1, value: 1.3 },
    ]);
    expect(r.order).toBeCloseTo(-1, 12);
    expect(r.extrapolated).toBeNull();
    expect(kinds(r)).toContain('not-converging');
  });

  it('finest two agree while coarser differ', () => {
    const r = analyseRefinement([
      { h: 0.4, value: 1 },
      { h: 0.2, value: 1.1 },
      { h: 0.1, value: 1.1 },
    ]);
    expect(kinds(r)).toEqual(['finest-agree']);
    expect(r.extrapolated).toBe(1.1);
  });
});

describe('input errors', () => {
  it('names the field and the value', () => {
    expect(() => analyseRefinement([])).toThrow(/at least one grid/);
    expect(() => analyseRefinement([{ h: -1, value: 1 }])).toThrow(/grid 1: 'h' must be a positive finite number \(got -1\)/);
    expect(() => analyseRefinement([{ h: 1, value: Number.NaN }])).toThrow(/'value' must be a finite number/);
    expect(() =>
      analyseRefinement([
        { h: 0.1, value: 1 },
        { h: 0.1, value: 2 },
      ]),
    ).toThrow(/distinct spacings: h = 0.1/);
    expect(() => analyseRefinement([{ h: 1, value: 1 }], { expectedOrder: 0 })).toThrow(/'expectedOrder'/);
  });
});

describe('output shapes', () => {
  it('rows and JSON carry the numbers untouched', () => {
    const samples = [
      { h: 1 / 16, value: 3.51, unknowns: 15, intervals: [16] },
      { h: 1 / 32, value: 3.512, unknowns: 31, intervals: [32] },
      { h: 1 / 64, value: 3.5135, unknowns: 63, intervals: [64] },
    ];
    const r = analyseRefinement(samples);
    const rows = refinementRows(r);
    expect(Object.keys(rows[0])).toEqual([...REFINEMENT_COLUMNS]);
    expect(rows[1].difference).toBe(3.512 - 3.51);
    expect(rows[2]['observed-order']).toBe(r.grids[2].observedOrder);
    expect(rows[0].unknowns).toBe(15);
    const json = refinementJson(r, { point: 'fold 1', parameter: 'lambda' });
    expect(Object.keys(json).slice(0, 3)).toEqual(['point', 'parameter', 'values']);
    for (const k of ['order', 'extrapolated', 'error-estimate', 'warnings']) expect(json).toHaveProperty(k);
    expect(json.values[2]).toEqual({ grid: 3, intervals: [64], unknowns: 63, h: 1 / 64, value: 3.5135 });
    expect(json.extrapolated).toBe(r.extrapolated);
    expect(() => refinementJson(r, { point: '', parameter: 'lambda' })).toThrow(/'point'/);
  });
});

describe('property: pure power laws with random ratios', () => {
  it('recover p and v* to tight tolerance', () => {
    fc.assert(
      fc.property(
        fc.double({ min: -10, max: 10, noNaN: true }),
        fc.double({ min: 0.1, max: 10, noNaN: true }),
        fc.boolean(),
        fc.double({ min: 1, max: 4, noNaN: true }),
        fc.array(fc.double({ min: 1.3, max: 3, noNaN: true }), { minLength: 2, maxLength: 4 }),
        (vStar, cAbs, negative, p, ratios) => {
          const C = negative ? -cAbs : cAbs;
          const hs = [1];
          for (const r of ratios) hs.push(hs[hs.length - 1] / r);
          const res = analyseRefinement(powerLaw(hs, vStar, C, p));
          expect(Math.abs((res.order as number) - p)).toBeLessThan(1e-6 * p);
          expect(Math.abs((res.extrapolated as number) - vStar)).toBeLessThan(1e-9 * (Math.abs(vStar) + cAbs));
          // Every triple sees the same order on a pure power law: no disagreement, no oscillation.
          expect(kinds(res).filter((k) => k !== 'order-implausible')).toEqual([]);
          for (const g of res.grids.slice(2)) expect(Math.abs((g.observedOrder as number) - p)).toBeLessThan(1e-6 * p);
        },
      ),
      { numRuns: 300 },
    );
  });
});
