/** The checker on a self-contained JavaScript model module (the `model: ./my-model.mjs` route). */
import { describe, expect, it } from 'vitest';
import { checkJacobian, summariseCheck } from '../../src/problem/check.js';
import type { ProblemFactory } from '../../src/problem/problem.js';

describe('code model module', () => {
  it('passes when right and points at the wrong entry (row 4, column 5) when wrong', async () => {
    const mod = (await import('../fixtures/code-model.mjs')) as { default: ProblemFactory };
    const good = checkJacobian(mod.default({ grid: { intervals: [40] } }));
    expect(good.passed, summariseCheck(good).join('\n')).toBe(true);
    const bad = checkJacobian(mod.default({ grid: { intervals: [40] }, wrong: true }));
    expect(bad.passed).toBe(false);
    expect(bad.jacobian.failureCount).toBe(1);
    const e = bad.jacobian.failures[0];
    expect([e.row, e.column, e.inPattern]).toEqual([4, 5, true]);
    expect(e.analytic).toBeCloseTo(-e.finiteDifference, 3);
    // no locateUnknown on this model: the report still names rows and columns
    expect(e.rowLocation).toBeUndefined();
    expect(summariseCheck(bad)[2]).toMatch(/^ {2}row 4, column 5: analytic -1600\.0000, finite difference 1600\.0000/);
  });
});
