/**
 * The shapes of a case's own keys (name, model, grid, parameters, continuation, output,
 * stability, checkpoint, plot, start, cluster), checked with zod before anything is built, and
 * the limits and defaults they are checked against: bad input is refused up front rather than
 * discovered hours later. Every leaf carries the words for what it accepts, which ./case.ts puts
 * into its one-line errors. Model-specific keys are checked against the model's option list
 * (./case.ts); `initial`, `time` and `search` by their own modules.
 */
import { z } from 'zod';
import { models } from '../../discretisations/index.js';
import { curveKinds } from '../continuation/curves/types.js';
import { pointSpecAccepted } from './start.js';

/** Points per branch above this are refused as absurd. */
export const maxPointsLimit = 1_000_000;
/** Branch-switching depth above this is refused (the number of branches can double per level). */
export const maxDepthLimit = 10;
/** Estimated solution files per branch (output.solutions: all) above this are refused. */
export const solutionBytesLimit = 64 * 1024 ** 3;
/**
 * Accepted `grid.length` per axis (in the user's unit, from nanometres to a planet in metres):
 * outside it h², h⁴ and their inverses leave double precision on the finest grids we accept.
 */
export const lengthRange = [1e-9, 1e9] as const;
/** The smallest Newton tolerance: below it round-off alone keeps the residual from converging. */
export const minTolerance = 1e-15;

export const solutionChoices = ['special', 'none', 'all'] as const;
export type SolutionChoice = (typeof solutionChoices)[number];

export const defaultCheckpoint = { everyPoints: 25, everySeconds: 60 };

/** Leaf schemas carry the words for "what is accepted" as their error message. */
const accepted = (text: string) => ({ error: () => text });

const finite = z.number(accepted('a finite number'));
const positive = z.number(accepted('a positive number')).positive(accepted('a positive number'));
const positiveInteger = (what = 'a positive integer') => z.number(accepted(what)).int(accepted(what)).positive(accepted(what));
const word = (choices: readonly string[]) => z.enum(choices as [string, ...string[]], accepted(choices.join(', ')));
const bool = z.boolean(accepted('true or false'));

function section<T extends z.ZodRawShape>(shape: T) {
  const keys = Object.keys(shape).join(', ');
  return z.strictObject(shape, {
    error: (iss) =>
      iss.code === 'unrecognized_keys'
        ? `unknown key${iss.keys.length > 1 ? 's' : ''} ${iss.keys.map((k) => `'${k}'`).join(', ')} (accepted: ${keys})`
        : `a map with keys ${keys}`,
  });
}

/** An integer from lo to hi (inclusive). */
const integerIn = (lo: number, hi: number) => {
  const text = accepted(`an integer from ${lo} to ${hi}`);
  return z.number(text).int(text).min(lo, text).max(hi, text);
};

const intervalsText = accepted('a list of 1 to 3 integers, intervals per axis, e.g. [64] or [32, 32]');
const atLeastTwo = accepted('an integer of at least 2');

const lengthText = 'a length from 1e-9 to 1e9';
const lengthSchema = z.number(accepted(lengthText)).min(lengthRange[0], accepted(lengthText)).max(lengthRange[1], accepted(lengthText));

const gridSchema = section({
  intervals: z.array(z.number(atLeastTwo).int(atLeastTwo).min(2, atLeastTwo), intervalsText).min(1, intervalsText).max(3, intervalsText),
  length: z.union([lengthSchema, z.array(lengthSchema)], accepted(`${lengthText}, or a list of such lengths (one per axis)`)).optional(),
});

const stepSchema = section({ initial: positive.optional(), min: positive.optional(), max: positive.optional() });

const stopSchema = section({ monitor: z.string(accepted('a monitor name')), above: finite.optional(), below: finite.optional() });

const toleranceText = accepted(`a number from ${minTolerance} to below 1`);
const turnText = accepted('a number of degrees above 0 and at most 90');

export const continuationSchema = section({
  parameter: z.string(accepted('the name of a parameter of the model')),
  bounds: z.tuple([finite, finite], accepted('two finite numbers [low, high]')),
  direction: word(['increase', 'decrease', 'both']).optional(),
  method: word(['arclength', 'natural']).optional(),
  step: stepSchema.optional(),
  'max-points': integerIn(1, maxPointsLimit).optional(),
  'stop-when': z.array(stopSchema, accepted('a list of {monitor, above | below}')).optional(),
  'branch-switching': section({ depth: integerIn(0, maxDepthLimit) }).optional(),
  newton: section({
    tolerance: z.number(toleranceText).min(minTolerance, toleranceText).lt(1, toleranceText).optional(),
    'residual-tolerance': z.number(toleranceText).min(minTolerance, toleranceText).lt(1, toleranceText).optional(),
    'step-tolerance': z.number(toleranceText).min(minTolerance, toleranceText).lt(1, toleranceText).optional(),
    'max-iterations': integerIn(1, 100).optional(),
  }).optional(),
  locate: section({ folds: bool.optional(), 'branch-points': bool.optional() }).optional(),
  'max-turn-degrees': z.number(turnText).positive(turnText).max(90, turnText).optional(),
  'sparse-lu': word(['auto', 'klu', 'superlu']).optional(),
  // curve runs (./curve-case.ts)
  follow: word(curveKinds).optional(),
  free: z.string(accepted('the name of a parameter of the model')).optional(),
  'free-bounds': z.tuple([finite, finite], accepted('two finite numbers [low, high]')).optional(),
  'free-direction': word(['increase', 'decrease']).optional(),
  search: section({ step: stepSchema.optional(), 'max-points': integerIn(1, maxPointsLimit).optional() }).optional(),
});

export const caseKeys = ['name', 'model', 'grid', 'parameters', 'continuation', 'output', 'stability', 'checkpoint', 'plot', 'start', 'initial', 'time', 'cluster', 'search'] as const;

const setupLineText = accepted('a list of shell lines run before the run in a cluster job, e.g. ["module load nodejs/20"]');

export const caseSchema = z.looseObject(
  {
    name: z
      .string(accepted('a name of letters, digits, dots, dashes and underscores (it names the output folder)'))
      .regex(/^[A-Za-z0-9][A-Za-z0-9._-]{0,99}$/, accepted('a name of letters, digits, dots, dashes and underscores (it names the output folder)'))
      .optional(),
    model: z.string(accepted(`a model id (${Object.keys(models).join(', ')}) or a path to a code model (.mjs)`)),
    grid: gridSchema,
    parameters: z.record(z.string(), z.unknown(), accepted('a map of parameter names to values, e.g. {lambda: 0.5}')).optional(),
    // required by `run` (prepareCaseObject), optional for `settle` (a case may hold both)
    continuation: continuationSchema.optional(),
    // checked by ./initial.ts (its shape depends on the model) and ./settle-case.ts
    initial: z.unknown().optional(),
    time: z.unknown().optional(),
    // checked by ./find-states-case.ts (used by `branchline find-states`, ignored by the others)
    search: z.unknown().optional(),
    output: section({
      directory: z.string(accepted('a folder path')).min(1, accepted('a folder path')).optional(),
      solutions: word(solutionChoices).optional(),
    }).optional(),
    stability: section({ eigenvalues: integerIn(0, 50) }).optional(),
    checkpoint: section({ 'every-points': positiveInteger().optional(), 'every-seconds': positive.optional() }).optional(),
    plot: section({ monitor: z.string(accepted('a monitor name, e.g. max or l2-norm')).optional() }).optional(),
    start: section({
      solution: z.string(accepted('a path to a .npy file')).min(1, accepted('a path to a .npy file')).optional(),
      run: z.string(accepted('a run folder')).min(1, accepted('a run folder')).optional(),
      point: z.string(accepted(pointSpecAccepted)).optional(),
      branch: integerIn(1, 1_000_000).optional(),
    }).optional(),
    cluster: section({
      setup: z.array(z.string(setupLineText).regex(/^[^\r\n]*\S[^\r\n]*$/, setupLineText), setupLineText).optional(),
    }).optional(),
  },
  accepted('a case: a map with keys name, model, grid, parameters, continuation, output'),
);

export type CaseInput = z.infer<typeof caseSchema>;
