/**
 * The start point's determinant sign comes from the factors already in hand, without a second
 * factorisation: the bordered matrix with border row e_λ, [[J, F_λ], [0, 1]], has determinant
 * det J, and by the matrix determinant lemma (any linear-algebra text; from memory)
 * det [[J, F_λ], [cᵀ, d]] = det J · (d − cᵀJ⁻¹F_λ). With the tangent τ = ±(du/dλ, 1)/s as border
 * row (weighted by positive w) the second factor has the sign of τ_λ. Checked here against the
 * determinant of the dense bordered matrix (ml-matrix's LU), built from the model's Jacobian, a
 * finite-difference F_λ and the tangent solved densely — on a grid with an odd number of unknowns,
 * so that det J < 0 on the lower Bratu branch, in both directions of continuation. And the start
 * point costs two factorisations with fresh pivots: Newton's first and the tangent's.
 */
import { describe, expect, test } from 'vitest';
import { Matrix, determinant, solve } from 'ml-matrix';
import { models } from '../../discretisations/index.js';
import { Continuation } from '../../src/continuation/engine.js';
import type { ContinuationPoint } from '../../src/continuation/types.js';
import { resolveParameters } from '../../src/problem/problem.js';
import { settings } from './collect.js';

const problem = models.bratu.factory({ grid: { intervals: [8, 8] } } as never); // 7 × 7 = 49 unknowns

function startPoint(lambda: number, direction: 'increase' | 'decrease', eigenvalues: number) {
  const params = resolveParameters(problem, { lambda });
  const engine = new Continuation(problem, params, settings({ parameter: 'lambda', bounds: [0, 10], direction, stability: { eigenvalues } }));
  const events = engine.events();
  let point: ContinuationPoint | undefined;
  for (let e = events.next(); !e.done; e = events.next()) {
    if (e.value.type === 'point') {
      point = e.value.point;
      break;
    }
  }
  const counters = engine.counters;
  engine.dispose();
  return { point: point!, counters };
}

/** Sign of det [[J, F_λ], [τ_u, τ_λ]] at (u, λ), everything dense and computed here. */
function denseBorderedSign(u: Float64Array, lambda: number, direction: 1 | -1): number {
  const n = problem.size;
  const pat = problem.pattern();
  const vals = new Float64Array(pat.colPtr[n]);
  problem.jacobian(u, { lambda }, vals);
  const J = Matrix.zeros(n, n);
  for (let j = 0; j < n; j++) for (let p = pat.colPtr[j]; p < pat.colPtr[j + 1]; p++) J.set(pat.rowIdx[p], j, vals[p]);
  const h = 1e-6;
  const fp = new Float64Array(n);
  const fm = new Float64Array(n);
  problem.residual(u, { lambda: lambda + h }, fp);
  problem.residual(u, { lambda: lambda - h }, fm);
  const Fl = Matrix.columnVector(Array.from(fp, (v, i) => (v - fm[i]) / (2 * h)));
  const v = solve(J, Fl).mul(-1); // du/dλ
  const B = Matrix.zeros(n + 1, n + 1);
  B.setSubMatrix(J, 0, 0);
  B.setSubMatrix(Fl, 0, n);
  for (let i = 0; i < n; i++) B.set(n, i, direction * v.get(i, 0));
  B.set(n, n, direction);
  return Math.sign(determinant(B));
}

describe('start point', () => {
  for (const lambda of [0.5, 3, 6]) {
    for (const direction of ['increase', 'decrease'] as const) {
      test(`λ = ${lambda}, ${direction}: determinant sign as the dense bordered matrix's; two fresh factorisations`, () => {
        const { point, counters } = startPoint(lambda, direction, 0);
        expect(point.determinantSign).toBe(denseBorderedSign(point.u, point.parameter, direction === 'increase' ? 1 : -1));
        expect(counters.factorisations).toBe(2);
      });
    }
  }
});
