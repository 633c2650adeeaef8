/**
 * Shapes of the refinement output files (`refine.csv` rows and the `refine.json` object).
 * Numbers are passed through untouched; the run layer's writers format them.
 */
import type { RefinementResult } from './richardson.js';

/** One row of `refine.csv`, coarsest grid first. Column names are the keys, in this order. */
export interface RefinementRow {
  readonly grid: number;
  readonly unknowns: number | null;
  readonly h: number;
  readonly value: number;
  readonly difference: number | null;
  readonly 'observed-order': number | null;
}

/** Column order of `refine.csv`. */
export const REFINEMENT_COLUMNS = ['grid', 'unknowns', 'h', 'value', 'difference', 'observed-order'] as const;

export function refinementRows(result: RefinementResult): RefinementRow[] {
  return result.grids.map((g) => ({
    grid: g.grid,
    unknowns: g.unknowns,
    h: g.h,
    value: g.value,
    difference: g.difference,
    'observed-order': g.observedOrder,
  }));
}

/** One grid in `refine.json` `values`. */
export interface RefinementJsonValue {
  readonly grid: number;
  readonly intervals: readonly number[] | null;
  readonly unknowns: number | null;
  readonly h: number;
  readonly value: number;
}

/** The `refine.json` document. */
export interface RefinementJson {
  /** Which point was refined, in plain words (e.g. `fold 1`). */
  readonly point: string;
  /** The quantity refined (e.g. the continuation parameter `lambda`). */
  readonly parameter: string;
  readonly values: readonly RefinementJsonValue[];
  readonly order: number | null;
  readonly 'order-source': 'observed' | 'assumed' | 'none';
  readonly extrapolated: number | null;
  /** Error estimate of the extrapolated value (see `error-estimate-source`). */
  readonly 'error-estimate': number | null;
  readonly 'error-estimate-source': 'extrapolation-spread' | 'finest-grid-gci' | 'round-off' | null;
  /** Bound on the error of the finest grid's value (its GCI in the value's units). */
  readonly 'finest-grid-error-bound': number | null;
  readonly 'safety-factor': number | null;
  /** Relative GCI on the finest grid (fraction of the finest value). */
  readonly 'grid-convergence-index': number | null;
  readonly 'extrapolation-spread': number | null;
  readonly 'asymptotic-range': 'consistent' | 'not-reached' | 'unverified';
  readonly warnings: readonly string[];
}

export function refinementJson(
  result: RefinementResult,
  what: { readonly point: string; readonly parameter: string },
): RefinementJson {
  if (typeof what?.point !== 'string' || what.point.trim() === '') {
    throw new Error(`refinement output: 'point' must be a non-empty string (got ${JSON.stringify(what?.point)})`);
  }
  if (typeof what.parameter !== 'string' || what.parameter.trim() === '') {
    throw new Error(`refinement output: 'parameter' must be a non-empty string (got ${JSON.stringify(what.parameter)})`);
  }
  return {
    point: what.point,
    parameter: what.parameter,
    values: result.grids.map((g) => ({
      grid: g.grid,
      intervals: g.intervals,
      unknowns: g.unknowns,
      h: g.h,
      value: g.value,
    })),
    order: result.order,
    'order-source': result.orderSource,
    extrapolated: result.extrapolated,
    'error-estimate': result.errorEstimate,
    'error-estimate-source': result.errorEstimateSource,
    'finest-grid-error-bound': result.gciAbsolute,
    'safety-factor': result.safetyFactor,
    'grid-convergence-index': result.gci,
    'extrapolation-spread': result.extrapolationSpread,
    'asymptotic-range': result.asymptoticRange,
    warnings: result.warnings.map((w) => w.message),
  };
}
