/**
 * Case files for time integration to a steady state (`branchline settle`): the keys every case
 * has (model, grid, parameters, initial, start, output, stability, checkpoint; read by
 * ./case.ts) and the `time:` section:
 *
 *   time:
 *     end: 20000                          # integrate at most to this time (required)
 *     max-steps: 100000                   # at most this many accepted steps
 *     tolerance: {relative: 1.0e-4, absolute: 1.0e-6}   # local error per step
 *     initial-step: 0.01                  # default: from the size of F at the start
 *     max-step: 500                       # default: no limit
 *     steady-tolerance: 1.0e-6            # steady when the scaled residual is below this...
 *     newton: {residual-tolerance: 1.0e-9, step-tolerance: 1.0e-9, max-iterations: 10}   # ...then
 *                                         # Newton polishes the state (tolerance: T sets both)
 *     blow-up: 1.0e8                      # blown up when max |u| passes this
 *     snapshots: auto                     # auto (1, 2, 5 × 10^k), none, or every T time units
 *
 * A case may also hold a `continuation:` section (used by `branchline run`, ignored here). The
 * model must not have algebraic unknowns of index 2 (a phase condition): refused with one line.
 */
import { z } from 'zod';
import { algebraicIndexProblem } from '../dynamics/algebraic.js';
import { type SnapshotSchedule, type TimeSettings, defaultTimeSettings } from '../dynamics/types.js';
import type { Params, Problem } from '../problem/problem.js';
import { type CaseParts, type PrepareObjectOptions, type ResolvedCase, caseDocumentHead, startingStateDocument, defaultCheckpoint, prepareCaseParts, readCaseFile, showValue } from './case.js';

/** The `time:` section, resolved: the integrator's settings (every default filled in). */
export type ResolvedTime = Omit<TimeSettings, 'stability' | 'fixedStep'>;

/** A resolved settle case: what every case has (as for runs) and the `time:` section. */
export type ResolvedSettleCase = Omit<ResolvedCase, 'continuation' | 'output' | 'plot'> & {
  time: ResolvedTime;
  output: { directory?: string };
  /** The `continuation:` section, kept as given (for `branchline run` on the same file). */
  continuation?: unknown;
};

export interface PreparedSettleCase {
  label: string;
  file?: string;
  baseDir: string;
  case: ResolvedSettleCase;
  problem: Problem;
  params: Params;
  time: TimeSettings;
  caution?: string;
  start?: { u: Float64Array; from: string };
}

const accepted = (text: string) => ({ error: () => text });
const positive = z.number(accepted('a positive number')).positive(accepted('a positive number'));
const fraction = z.number(accepted('a number between 0 and 1')).positive(accepted('a number between 0 and 1')).lt(1, accepted('a number between 0 and 1'));
const wholeText = accepted('a whole number of at least 1');

function section<T extends z.ZodRawShape>(shape: T) {
  const keys = Object.keys(shape).join(', ');
  return z.strictObject(shape, {
    error: (iss) => (iss.code === 'unrecognized_keys' ? `unknown key '${iss.keys[0]}' (accepted: ${keys})` : `a map with keys ${keys}`),
  });
}

const timeSchema = section({
  end: positive,
  'max-steps': z.number(wholeText).int(wholeText).min(1, wholeText).max(100_000_000, accepted('at most 100000000')).optional(),
  tolerance: section({ relative: fraction.optional(), absolute: positive.optional() }).optional(),
  'initial-step': positive.optional(),
  'max-step': positive.optional(),
  'steady-tolerance': fraction.optional(),
  newton: section({
    tolerance: fraction.optional(),
    'residual-tolerance': fraction.optional(),
    'step-tolerance': fraction.optional(),
    'max-iterations': z.number(wholeText).int(wholeText).min(1, wholeText).max(100, accepted('at most 100')).optional(),
  }).optional(),
  'blow-up': positive.optional(),
  snapshots: z.union([z.enum(['auto', 'none']), positive], accepted('auto, none, or a time interval (a positive number)')).optional(),
});

export const timeKeys = Object.keys(timeSchema.shape);

/** Check the `time:` section (CaseError naming the key otherwise). */
export function resolveTime(raw: unknown, fail: (field: string, detail: string) => never): ResolvedTime {
  if (raw === undefined) fail('time', `is missing (accepted: a map with keys ${timeKeys.join(', ')}; end is required, e.g. time: {end: 1000})`);
  const r = timeSchema.safeParse(raw);
  if (!r.success) {
    const iss = r.error.issues[0];
    const path = ['time', ...iss.path.map(String)].join('.');
    let value: unknown = raw;
    for (const k of iss.path) value = value && typeof value === 'object' ? (value as Record<PropertyKey, unknown>)[k as string] : undefined;
    if (iss.code === 'unrecognized_keys') fail(path, iss.message);
    fail(path, value === undefined ? `is missing (accepted: ${iss.message})` : `${showValue(value)} is not accepted (accepted: ${iss.message})`);
  }
  const t = r.data!;
  const d = defaultTimeSettings;
  if (t['initial-step'] !== undefined && t['initial-step'] > t.end) fail('time.initial-step', `${t['initial-step']} is longer than time.end ${t.end}`);
  if (t['max-step'] !== undefined && t['initial-step'] !== undefined && t['initial-step'] > t['max-step']) {
    fail('time.initial-step', `${t['initial-step']} is longer than time.max-step ${t['max-step']}`);
  }
  const snapshots: SnapshotSchedule = t.snapshots === undefined ? d.snapshots : typeof t.snapshots === 'number' ? { every: t.snapshots } : t.snapshots;
  if (typeof snapshots === 'object' && t.end / snapshots.every > 100_000) fail('time.snapshots', `every ${snapshots.every} would write ${Math.floor(t.end / snapshots.every)} snapshot files; take a longer interval`);
  return {
    end: t.end,
    maxSteps: t['max-steps'] ?? d.maxSteps,
    relativeTolerance: t.tolerance?.relative ?? d.relativeTolerance,
    absoluteTolerance: t.tolerance?.absolute ?? d.absoluteTolerance,
    ...(t['initial-step'] !== undefined ? { initialStep: t['initial-step'] } : {}),
    ...(t['max-step'] !== undefined ? { maxStep: t['max-step'] } : {}),
    steadyTolerance: t['steady-tolerance'] ?? d.steadyTolerance,
    newton: {
      // `tolerance` is shorthand for both; the specific keys win (as for continuation)
      residualTolerance: t.newton?.['residual-tolerance'] ?? t.newton?.tolerance ?? d.newton.residualTolerance,
      stepTolerance: t.newton?.['step-tolerance'] ?? t.newton?.tolerance ?? d.newton.stepTolerance,
      maxIterations: t.newton?.['max-iterations'] ?? d.newton.maxIterations,
    },
    blowUp: t['blow-up'] ?? d.blowUp,
    snapshots,
  };
}

/** Read and check a settle case file, build its problem and start state; nothing is written. */
export async function prepareSettleCase(file: string, options: { label?: string } = {}): Promise<PreparedSettleCase> {
  const { raw, opts } = readCaseFile(file, options);
  return prepareSettleCaseObject(raw, opts);
}

/** Check a parsed settle case and build its problem and start state; nothing is written. */
export async function prepareSettleCaseObject(raw: unknown, opts: PrepareObjectOptions): Promise<PreparedSettleCase> {
  const parts: CaseParts = await prepareCaseParts(raw, opts);
  const { fail, input, problem, params } = parts;
  const time = resolveTime(input.time, fail);
  // algebraic unknowns must be of index 1 (structurally here; numerically at the start state)
  const why = algebraicIndexProblem(problem, parts.start?.u ?? problem.initialGuess(params), params);
  if (why) fail(parts.modelOptions['phase-condition'] === true ? 'phase-condition' : 'model', why);
  const resolved: ResolvedSettleCase = {
    name: input.name ?? opts.defaultName ?? 'case',
    model: parts.modelRef,
    modelKind: parts.kind,
    modelOptions: parts.modelOptions,
    grid: { intervals: parts.intervals.slice(), length: parts.length.slice() },
    parameters: params,
    ...(parts.kind === 'expression' ? { parameterDeclarations: parts.givenParams } : {}),
    time,
    output: input.output?.directory !== undefined ? { directory: input.output.directory } : {},
    stability: { eigenvalues: input.stability?.eigenvalues ?? 0 },
    checkpoint: {
      everyPoints: input.checkpoint?.['every-points'] ?? defaultCheckpoint.everyPoints,
      everySeconds: input.checkpoint?.['every-seconds'] ?? defaultCheckpoint.everySeconds,
    },
    ...(parts.startFrom ? { start: parts.startFrom.resolved } : {}),
    ...(parts.initial ? { initial: parts.initial } : {}),
    ...(input.continuation !== undefined ? { continuation: input.continuation } : {}),
  };
  return {
    label: parts.label,
    ...(opts.file !== undefined ? { file: opts.file } : {}),
    baseDir: opts.baseDir,
    case: resolved,
    problem,
    params: Object.freeze({ ...params }),
    time: { ...time, newton: { ...time.newton }, stability: { eigenvalues: resolved.stability.eigenvalues } },
    ...(parts.caution ? { caution: parts.caution } : {}),
    ...(parts.start ? { start: parts.start } : {}),
  };
}

/** The resolved settle case in case-file form (run.json `case`; what a resume reads back). */
export function settleCaseDocument(c: ResolvedSettleCase): Record<string, unknown> {
  const t = c.time;
  return {
    ...caseDocumentHead(c),
    ...startingStateDocument(c),
    time: {
      end: t.end,
      'max-steps': t.maxSteps,
      tolerance: { relative: t.relativeTolerance, absolute: t.absoluteTolerance },
      ...(t.initialStep !== undefined ? { 'initial-step': t.initialStep } : {}),
      ...(t.maxStep !== undefined ? { 'max-step': t.maxStep } : {}),
      'steady-tolerance': t.steadyTolerance,
      newton: { 'residual-tolerance': t.newton.residualTolerance, 'step-tolerance': t.newton.stepTolerance, 'max-iterations': t.newton.maxIterations },
      'blow-up': t.blowUp,
      snapshots: typeof t.snapshots === 'object' ? t.snapshots.every : t.snapshots,
    },
    ...(c.continuation !== undefined ? { continuation: c.continuation } : {}),
    output: { ...c.output },
    stability: { eigenvalues: c.stability.eigenvalues },
    checkpoint: { 'every-points': c.checkpoint.everyPoints, 'every-seconds': c.checkpoint.everySeconds },
  };
}

