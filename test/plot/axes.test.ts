import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { formatTick, formatLogTicks, logTicks, niceTicks, scientific, escapeXml, formatValue } from '../../src/plot/index.js';
import { parseXml } from './xml-check.js';

/** step = m · 10^e with m in {1, 2, 5} (to round-off). */
function isNiceStep(step: number): boolean {
  const e = Math.floor(Math.log10(step) + 1e-9);
  const m = step / Math.pow(10, e);
  return [1, 2, 5, 10].some((c) => Math.abs(m - c) < 1e-6);
}

/** Values from about 1e-30 to 1e9 in magnitude, either sign, or exactly zero. */
const value = fc.oneof(
  fc.constant(0),
  fc
    .tuple(fc.boolean(), fc.double({ min: 1, max: 10, noNaN: true }), fc.integer({ min: -30, max: 8 }))
    .map(([neg, m, e]) => (neg ? -1 : 1) * m * Math.pow(10, e)),
);
const finiteRange = fc
  .tuple(value, value)
  .filter(([a, b]) => Math.abs(a - b) > 1e-6 * Math.max(Math.abs(a), Math.abs(b), 1e-300));

describe('nice ticks', () => {
  it('cover the data range, are monotone, 3 to 10 of them, with a 1-2-5 step', () => {
    fc.assert(
      fc.property(finiteRange, ([a, b]) => {
        const lo = Math.min(a, b);
        const hi = Math.max(a, b);
        const { ticks, step } = niceTicks(lo, hi);
        expect(ticks.length).toBeGreaterThanOrEqual(3);
        expect(ticks.length).toBeLessThanOrEqual(10);
        expect(ticks[0]).toBeLessThanOrEqual(lo + 1e-9 * Math.abs(lo));
        expect(ticks[ticks.length - 1]).toBeGreaterThanOrEqual(hi - 1e-9 * Math.abs(hi));
        expect(isNiceStep(step)).toBe(true);
        for (let k = 1; k < ticks.length; k++) {
          expect(ticks[k]).toBeGreaterThan(ticks[k - 1]);
          expect(Math.abs(ticks[k] - ticks[k - 1] - step)).toBeLessThan(1e-6 * step);
        }
        // Ticks are multiples of the step.
        for (const t of ticks) expect(Math.abs(t / step - Math.round(t / step))).toBeLessThan(1e-6);
      }),
      { numRuns: 500 },
    );
  });

  it('inside mode: ticks within the range, none more than a step from either end', () => {
    fc.assert(
      fc.property(finiteRange, ([a, b]) => {
        const lo = Math.min(a, b);
        const hi = Math.max(a, b);
        const { ticks, step } = niceTicks(lo, hi, { cover: false });
        expect(ticks.length).toBeGreaterThanOrEqual(3);
        expect(ticks.length).toBeLessThanOrEqual(10);
        const slack = 1e-9 * Math.max(Math.abs(lo), Math.abs(hi));
        expect(ticks[0]).toBeGreaterThanOrEqual(lo - slack);
        expect(ticks[ticks.length - 1]).toBeLessThanOrEqual(hi + slack);
        expect(ticks[0] - step).toBeLessThan(lo + slack);
        expect(ticks[ticks.length - 1] + step).toBeGreaterThan(hi - slack);
        expect(isNiceStep(step)).toBe(true);
        for (let k = 1; k < ticks.length; k++) expect(ticks[k]).toBeGreaterThan(ticks[k - 1]);
      }),
      { numRuns: 500 },
    );
  });

  it('gives clean decimal values (no 0.30000000000000004)', () => {
    const { ticks } = niceTicks(0.1, 0.7);
    for (const t of ticks) expect(String(t).length).toBeLessThanOrEqual(4);
    expect(niceTicks(0, 1).ticks).toEqual([0, 0.2, 0.4, 0.6, 0.8, 1]);
  });

  it('widens a degenerate range instead of failing', () => {
    expect(niceTicks(0, 0).ticks.length).toBeGreaterThanOrEqual(3);
    const t = niceTicks(5, 5).ticks;
    expect(t[0]).toBeLessThan(5);
    expect(t[t.length - 1]).toBeGreaterThan(5);
    expect(() => niceTicks(0, Number.NaN)).toThrow(/axis range must be finite/);
  });
});

describe('log ticks', () => {
  it('cover the range with increasing ticks; decades beyond two, 1-2-5 within', () => {
    fc.assert(
      fc.property(fc.double({ min: -12, max: 12, noNaN: true }), fc.double({ min: 0.01, max: 20, noNaN: true }), (l0, span) => {
        const lo = Math.pow(10, l0);
        const hi = Math.pow(10, l0 + span);
        const { major } = logTicks(lo, hi);
        expect(major[0]).toBeLessThanOrEqual(lo * (1 + 1e-9));
        expect(major[major.length - 1]).toBeGreaterThanOrEqual(hi * (1 - 1e-9));
        expect(major.length).toBeGreaterThanOrEqual(2);
        expect(major.length).toBeLessThanOrEqual(12);
        for (let k = 1; k < major.length; k++) expect(major[k]).toBeGreaterThan(major[k - 1]);
        for (const t of major) {
          const m = t / Math.pow(10, Math.floor(Math.log10(t) + 1e-9));
          expect([1, 2, 5].some((c) => Math.abs(m - c) < 1e-6)).toBe(true);
        }
      }),
      { numRuns: 300 },
    );
  });

  it('uses plain decimals or powers of ten, never both on one axis', () => {
    expect(formatLogTicks([0.001, 0.01, 0.1])).toEqual(['0.001', '0.01', '0.1']);
    expect(formatLogTicks([1e-5, 1e-4, 1e-3])).toEqual(['10⁻⁵', '10⁻⁴', '10⁻³']);
    expect(formatLogTicks([0.005, 0.01, 0.02])).toEqual(['0.005', '0.01', '0.02']);
  });
});

describe('number formatting', () => {
  it('tick labels carry just the decimals the step needs, with a true minus sign', () => {
    expect(formatTick(0.4, 0.2)).toBe('0.4');
    expect(formatTick(1, 0.2)).toBe('1.0');
    expect(formatTick(0, 0.2)).toBe('0.0');
    expect(formatTick(-20, 10)).toBe('\u221220');
    expect(formatTick(2e-5, 1e-5, [0, 1e-5, 2e-5])).toBe('2×10⁻⁵');
    expect(formatTick(300000, 100000, [0, 100000, 200000, 300000])).toBe('300000');
    // A million and up: m×10ⁿ with the mantissa written out, never a bare power on a linear axis.
    expect(formatTick(1e6, 5e5, [5e5, 1e6, 1.5e6])).toBe('1×10⁶');
    expect(formatTick(1.5e6, 5e5, [5e5, 1e6, 1.5e6])).toBe('1.5×10⁶');
    // Large offset, small step: plain digits.
    expect(formatTick(100010, 5, [100000, 100005, 100010])).toBe('100010');
  });

  it('values and powers of ten', () => {
    expect(formatValue(3.513830719, 5)).toBe('3.5138');
    expect(formatValue(-0.000012345, 3)).toBe('\u22121.23×10⁻⁵');
    expect(scientific(1e-7)).toBe('10⁻⁷');
    expect(scientific(7.4e-5, 2)).toBe('7.4×10⁻⁵');
    expect(scientific(9.99e-5, 2)).toBe('10⁻⁴');
    // Label precision follows the axis resolution far from zero.
    expect(formatValue(100008.88, 5, 0.5)).toBe('100008.9');
    expect(formatValue(3.513830719, 5, 0.005)).toBe('3.5138');
  });
});

describe('XML escaping', () => {
  it('escapes markup characters and drops characters XML cannot carry', () => {
    expect(escapeXml(`a<b>&"c"'d'`)).toBe('a&lt;b&gt;&amp;&quot;c&quot;&apos;d&apos;');
    expect(escapeXml('bell\u0007 tab\t')).toBe('bell tab\t');
    const doc = parseXml(`<t a="${escapeXml('x"<&>')}">${escapeXml('1 < 2 & 3 > 2')}</t>`);
    expect(doc.attrs.a).toBe('x"<&>');
    expect(doc.text).toBe('1 < 2 & 3 > 2');
  });

  it('the test checker itself rejects malformed XML', () => {
    expect(() => parseXml('<a><b></a></b>')).toThrow(/does not match/);
    expect(() => parseXml('<a x=1/>')).toThrow(/not quoted/);
    expect(() => parseXml('<a>1 & 2</a>')).toThrow(/entity/);
    expect(() => parseXml('<a x="1" x="2"/>')).toThrow(/duplicate/);
    expect(() => parseXml('<a/><b/>')).toThrow(/more than one root/);
    expect(() => parseXml('<a>')).toThrow(/unclosed/);
  });
});
