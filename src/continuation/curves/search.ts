/**
 * The first point of a curve when the case does not start at one: follow the steady states from
 * the start state in the free parameter (the one-parameter engine, pseudo-arclength, no
 * branch switching; for branch points the rightmost eigenvalues, so that two crossings in one step
 * are split) and take the first fold, or the first branch point, met on the way. The engine locates it (folds to 1e-10 in the parameter, branch points to 1e-8); the
 * curve system then converges it to its own tolerance.
 */
import { Continuation, ContinuationError } from '../engine.js';
import { type ContinuationSettings, defaultSettings } from '../types.js';
import type { Params, Problem } from '../../problem/problem.js';
import type { CurveSettings } from './types.js';

export class CurveError extends Error {
  override name = 'CurveError';
}

export interface SearchResult {
  /** The state at the special point. */
  u: Float64Array;
  /** Parameter values there (the free parameter at the located value). */
  params: Params;
  /** Points the search took (for messages). */
  points: number;
  /** Hopf points: the frequency of the crossing pair. */
  frequency?: number;
}

const finiteBound = (v: number): number => (Number.isFinite(v) ? v : Math.sign(v) * Number.MAX_VALUE);

/** Follow the steady states in `settings.free` from `start` until the first point of the curve's kind. */
export function searchFirstPoint(problem: Problem, params: Params, settings: CurveSettings, start?: Float64Array): SearchResult {
  const wantFold = settings.follow === 'fold';
  const wantHopf = settings.follow === 'hopf';
  const kind = wantFold ? 'fold' : wantHopf ? 'hopf' : 'branch-point';
  const s: ContinuationSettings = {
    ...defaultSettings,
    parameter: settings.free,
    bounds: [finiteBound(settings.freeBounds[0]), finiteBound(settings.freeBounds[1])],
    direction: settings.freeDirection,
    method: 'arclength',
    step: { ...settings.search.step },
    maxPoints: settings.search.maxPoints,
    stopWhen: settings.stopWhen.map((x) => ({ ...x })),
    branchSwitching: { depth: 0 },
    newton: { ...settings.newton },
    maxTurnDegrees: settings.maxTurnDegrees,
    locate: { folds: wantFold, branchPoints: kind === 'branch-point' },
    // branch points: the eigenvalue count splits steps over which two eigenvalues cross (the
    // determinant would not change sign), so the first branch point met is not skipped; Hopf
    // points are seen only by the eigenvalues
    stability: { eigenvalues: wantFold ? 0 : wantHopf ? Math.max(6, settings.eigenvalues) : 4 },
  };
  const what = wantFold ? 'fold' : wantHopf ? 'Hopf point' : 'branch point';
  let engine: Continuation;
  try {
    engine = new Continuation(problem, params, s, start ? { start } : {});
  } catch (e) {
    throw new CurveError(`searching for the first ${what}: ${(e as Error).message}`);
  }
  let points = 0;
  let ended = '';
  try {
    for (const ev of engine.events()) {
      if (ev.type === 'point') points++;
      else if (ev.type === 'special' && ev.point.kind === kind) {
        if (!ev.point.located) continue;
        if (ev.point.kind === 'hopf') return { u: ev.point.u.slice(), params: { ...params, [settings.free]: ev.point.value }, points, frequency: ev.point.frequency };
        if (ev.point.kind === 'branch-point' && ev.point.multiplicity > 1) {
          throw new CurveError(
            `the first branch point met (${settings.free} = ${ev.point.value}) has multiplicity ${ev.point.multiplicity}: two modes go unstable together (a square or symmetric domain), and a curve of such points needs both null vectors; make the domain's sides unequal`,
          );
        }
        return { u: ev.point.u.slice(), params: { ...params, [settings.free]: ev.point.value }, points };
      } else if (ev.type === 'branch-end') {
        ended = ev.message;
      }
    }
  } catch (e) {
    if (e instanceof ContinuationError) throw new CurveError(`searching for the first ${what} in ${settings.free}: ${e.message}`);
    throw e;
  } finally {
    engine.dispose();
  }
  throw new CurveError(
    `no ${what} was met while following the steady states in ${settings.free} from ${settings.free} = ${params[settings.free]} (${settings.freeDirection}; ${points} points, the branch ended: ${ended || 'no reason given'}); start from a ${what} of an earlier run (start: {run: DIR, point: ${kind}}) or change free-bounds or free-direction`,
  );
}
