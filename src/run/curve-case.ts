/**
 * Case keys of curve runs: a special point followed in two parameters.
 *
 *   continuation:
 *     follow: fold                 # fold | branch-point (of a uniform state) | hopf: a curve run
 *     parameter: biot              # moves along the curve; the curve ends at its bounds
 *     bounds: [0.01, 100]
 *     direction: both              # which way `parameter` moves from the first point (or both ways)
 *     free: lambda                 # adjusts to stay on the fold (or branch point)
 *     free-bounds: [0, 10]         # optional: the curve also ends there
 *     free-direction: increase     # where the first fold is searched for: `free` moves this way
 *     search: {step: {...}, max-points: 2000}   # optional: that search's steps
 *     step, max-points, stop-when, newton, max-turn-degrees      # as for branches
 *
 * The first point: the special point of an earlier run named by `start: {run: DIR, point:
 * fold[:N]}` (or `branch-point[:N]` for branch-point curves), converged at once; otherwise the
 * first fold (branch point) met following the steady states in `free` from the start state
 * (`parameters`, `start: {solution: ...}` or a run point of another kind).
 *
 * Keys of one-parameter runs that mean nothing for a curve (method, branch-switching, locate,
 * stability eigenvalues except on Hopf curves, where they find double-Hopf points) are refused
 * with a one-line error rather than ignored. Hopf curves also start at a Bogdanov–Takens point of
 * an earlier fold-curve run (`point: bogdanov-takens`).
 */
import { type CurveKind, type CurveSettings, curveKinds, defaultCurveSettings } from '../continuation/curves/types.js';
import type { Problem } from '../problem/problem.js';
import type { ResolvedContinuation } from './case.js';

export interface ResolvedFollow {
  kind: CurveKind;
  /** Which way the parameter moves from the first point; `both`: one curve each way. */
  direction: 'increase' | 'decrease' | 'both';
  free: string;
  /** Bounds of the free parameter (null: none on that side). */
  freeBounds: [number | null, number | null];
  freeDirection: 'increase' | 'decrease';
  search: { step: { initial: number; min: number; max: number }; maxPoints: number };
  /** Hopf curves: rightmost eigenvalues per point for the double-Hopf test (`stability.eigenvalues`; 0 for other curves). */
  eigenvalues: number;
}

/** Rightmost eigenvalues per point of a Hopf curve when the case does not say (the double-Hopf test). */
export const defaultHopfEigenvalues = 6;

/** The `continuation` keys of a curve run as read from the case (after the shape check). */
export interface FollowInput {
  follow?: string;
  direction?: string;
  free?: string;
  'free-bounds'?: [number, number];
  'free-direction'?: string;
  search?: { step?: { initial?: number; min?: number; max?: number }; 'max-points'?: number };
  method?: unknown;
  'branch-switching'?: unknown;
  locate?: unknown;
}

export const followAccepted = curveKinds.join(', ');

/** Keys that belong to curve runs only (refused without `follow`). */
const curveOnlyKeys = ['free', 'free-bounds', 'free-direction', 'search'] as const;

/**
 * Check the curve keys of `continuation` and resolve them; undefined for a one-parameter run.
 * `startPoint` is the kind of the run point the case starts from, if any.
 */
export function resolveFollow(
  c: FollowInput,
  problem: Problem,
  params: Record<string, number>,
  parameter: string,
  eigenvalues: number | undefined,
  fail: (field: string, detail: string) => never,
): ResolvedFollow | undefined {
  if (c.follow === undefined) {
    if (c.direction === 'both') fail('continuation.direction', `'both' goes with curve runs (follow: ${followAccepted}); a branch runs one way (accepted: increase, decrease)`);
    for (const k of curveOnlyKeys) {
      if (c[k] !== undefined) fail(`continuation.${k}`, `goes with a curve run (accepted: add follow: ${followAccepted}, or remove ${k})`);
    }
    return undefined;
  }
  const kind = c.follow as CurveKind;
  for (const k of ['method', 'branch-switching', 'locate'] as const) {
    if (c[k] !== undefined) fail(`continuation.${k}`, `does not apply to a curve run (follow: ${kind}); remove it`);
  }
  if (kind !== 'hopf' && eigenvalues !== undefined && eigenvalues > 0) {
    fail('stability.eigenvalues', `${eigenvalues}: ${kind} curves compute no eigenvalues (every state on a ${kind} curve has a zero eigenvalue by construction); use 0 or remove stability (Hopf curves use them to find double-Hopf points)`);
  }
  const known = problem.parameters.map((s) => s.name);
  if (c.free === undefined) fail('continuation.free', `is missing: the parameter that adjusts to stay on the ${kind} (accepted: one of ${known.join(', ')} other than ${parameter})`);
  const free = c.free!.trim();
  if (!known.includes(free)) fail('continuation.free', `'${free}' is not a parameter of this model (accepted: ${known.filter((n) => n !== parameter).join(', ')})`);
  if (free === parameter) fail('continuation.free', `'${free}' is the continuation parameter itself; the free parameter must be another one (accepted: ${known.filter((n) => n !== parameter).join(', ')})`);
  const spec = problem.parameters.find((s) => s.name === free)!;
  let freeBounds: [number | null, number | null] = [spec.min ?? null, spec.max ?? null];
  if (c['free-bounds'] !== undefined) {
    const [lo, hi] = c['free-bounds'];
    if (!(lo < hi)) fail('continuation.free-bounds', `[${lo}, ${hi}] is ${lo === hi ? 'empty' : 'reversed'} (accepted: [low, high] with low < high)`);
    if ((spec.min !== undefined && lo < spec.min) || (spec.max !== undefined && hi > spec.max)) {
      fail('continuation.free-bounds', `[${lo}, ${hi}] reaches outside the accepted range of ${free}, [${spec.min ?? '-inf'}, ${spec.max ?? 'inf'}]`);
    }
    freeBounds = [lo, hi];
  }
  const start = params[free];
  if ((freeBounds[0] !== null && start < freeBounds[0]) || (freeBounds[1] !== null && start > freeBounds[1])) {
    fail(`parameters.${free}`, `the start value ${start} lies outside continuation.free-bounds [${freeBounds[0] ?? '-inf'}, ${freeBounds[1] ?? 'inf'}]`);
  }
  const d = defaultCurveSettings.search.step;
  const s = c.search?.step ?? {};
  const min = s.min ?? d.min;
  const max = s.max ?? Math.max(d.max, min);
  const initial = s.initial ?? Math.min(Math.max(d.initial, min), max);
  if (!(min <= initial && initial <= max)) fail('continuation.search.step', `initial ${initial}, min ${min}, max ${max} (accepted: 0 < min <= initial <= max)`);
  return {
    kind,
    direction: (c.direction ?? 'increase') as 'increase' | 'decrease' | 'both',
    free,
    freeBounds,
    freeDirection: (c['free-direction'] ?? 'increase') as 'increase' | 'decrease',
    search: { step: { initial, min, max }, maxPoints: c.search?.['max-points'] ?? defaultCurveSettings.search.maxPoints },
    eigenvalues: kind === 'hopf' ? (eigenvalues ?? defaultHopfEigenvalues) : 0,
  };
}

/**
 * Whether a curve run starts at the special point itself — a run point of the followed kind (for
 * Hopf curves also a Bogdanov–Takens point, where ω = 0, or a codimension-two point of an earlier
 * Hopf curve) — and for Hopf curves the frequency there.
 */
export function curveStartAt(kind: CurveKind, record: { kind: string; frequency?: unknown } | undefined): { atPoint: boolean; frequency?: number } {
  if (!record) return { atPoint: false };
  if (kind !== 'hopf') return { atPoint: record.kind === kind };
  if (record.kind === 'bogdanov-takens') return { atPoint: true, frequency: 0 };
  const f = record.frequency;
  if (['hopf', 'zero-hopf', 'bautin', 'double-hopf'].includes(record.kind) && typeof f === 'number' && f > 0) return { atPoint: true, frequency: f };
  return { atPoint: false };
}

/** The engine's settings of a curve run. */
export function curveSettingsOf(c: ResolvedContinuation & { follow: ResolvedFollow }): CurveSettings {
  const f = c.follow;
  return {
    ...defaultCurveSettings,
    follow: f.kind,
    parameter: c.parameter,
    free: f.free,
    bounds: [c.bounds[0], c.bounds[1]],
    freeBounds: [f.freeBounds[0] ?? -Infinity, f.freeBounds[1] ?? Infinity],
    direction: f.direction,
    freeDirection: f.freeDirection,
    step: { ...c.step },
    maxPoints: c.maxPoints,
    stopWhen: c.stopWhen.map((s) => ({ ...s })),
    newton: { residualTolerance: c.newton.residualTolerance, stepTolerance: c.newton.stepTolerance, maxIterations: c.newton.maxIterations },
    maxTurnDegrees: c.maxTurnDegrees,
    search: { step: { ...f.search.step }, maxPoints: f.search.maxPoints },
    eigenvalues: f.eigenvalues,
  };
}

/** The `continuation` keys of a curve run in case-file form (what resume reads back). */
export function followDocument(f: ResolvedFollow): Record<string, unknown> {
  return {
    follow: f.kind,
    direction: f.direction,
    free: f.free,
    ...(f.freeBounds[0] !== null && f.freeBounds[1] !== null ? { 'free-bounds': [f.freeBounds[0], f.freeBounds[1]] } : {}),
    'free-direction': f.freeDirection,
    search: { step: { ...f.search.step }, 'max-points': f.search.maxPoints },
  };
}
