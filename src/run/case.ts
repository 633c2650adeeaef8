/**
 * Case files: YAML (or JSON) documents that say which model to build, on which grid, from which
 * parameter values, and how to continue. Every key is a full lowercase word (our own format):
 *
 *   name: slab-ignition                  # folder-safe name; default: the file name
 *   model: bratu                         # built-in id, reaction-diffusion, or ./my-model.mjs
 *   boundary: dirichlet                  # model-specific keys (see `branchline models`)
 *   grid: {intervals: [64], length: [1]} # intervals per axis; h = length / intervals
 *   parameters: {lambda: 0.1}            # start values (reaction-diffusion: the declarations)
 *   continuation:
 *     parameter: lambda
 *     bounds: [0, 4]
 *     direction: increase                # increase | decrease
 *     method: arclength                  # arclength | natural
 *     step: {initial: 0.05, min: 1e-6, max: 0.5}
 *     max-points: 500                    # per branch
 *     stop-when: [{monitor: max, above: 8}]
 *     branch-switching: {depth: 1}      # the default when left out (0: stay on the first branch)
 *     newton: {residual-tolerance: 1e-9, step-tolerance: 1e-9, max-iterations: 10}   # tolerance: T sets both
 *     locate: {folds: true, branch-points: true}
 *     max-turn-degrees: 30
 *     sparse-lu: auto                    # auto | klu | superlu (auto: chosen from the pattern)
 *   output: {directory: runs/slab, solutions: special}   # special | none | all
 *   stability: {eigenvalues: 0}          # rightmost eigenvalues per point (0: no stability analysis)
 *   checkpoint: {every-points: 25, every-seconds: 60}    # used by checkpoint/resume
 *   plot: {monitor: max}                 # the diagram's vertical axis (default: max, or max:<first field>)
 *   start: {solution: saved.npy}         # start from a saved node array instead of the initial guess,
 *   start: {run: runs/a, point: fold:1, branch: 1}   # or from a special point of an earlier run
 *   cluster: {setup: ["module load nodejs/20"]}      # lines run before the run in a Slurm job (--slurm)
 *
 * A start from a run point takes that point's parameter values too (the earlier run's start values
 * with its continuation parameter at the point's value): for built-in and code models, values
 * listed under `parameters` override them (the saved state is then only Newton's first guess);
 * for reaction-diffusion models the `parameters` are declarations, and the run's values replace
 * their defaults. See src/run/start.ts.
 *
 * Paths inside a case file (a code model, output.directory) are relative to the case file's
 * folder, so a case gives the same result wherever it is run from.
 *
 * `prepareCase` does all checking and builds the problem without writing anything; errors are
 * one-line CaseErrors naming the file, the field path, the value and what is accepted.
 */
import { existsSync, statSync } from 'node:fs';
import { basename, dirname, extname, isAbsolute, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import { LineCounter, parseDocument } from 'yaml';
import { z } from 'zod';
import {
  type FactorMemoryEstimate,
  InitialStateError,
  assertFactorMemory,
  assertFactorWork,
  defaultFactorMemoryLimit,
  estimateFactorMemory,
  initialStateBuilder,
  modelEntry,
  models,
} from '../../discretisations/index.js';
import type { OptionSpec } from '../../discretisations/models/options.js';
import { type ContinuationSettings, defaultSettings } from '../continuation/types.js';
import { autoMinimumUnknowns, decideBackend } from '../linalg/lu.js';
import { validateProblemNames } from '../problem/names.js';
import type { GridOptions, Params, Problem, ProblemFactory } from '../problem/problem.js';
import { CaseError } from './errors.js';
import { type ResolvedFollow, curveSettingsOf, curveStartAt, followDocument, resolveFollow } from './curve-case.js';
import { type CurveSettings, curveKinds } from '../continuation/curves/types.js';
import { type ResolvedInitial, initialDocument, initialSpec, initialWords, resolveInitial } from './initial.js';
import { FileReadError, caseFileLimit, codeModelLimit, notRegularFile, readTextFile, sizeText } from './read-file.js';
import {
  type RunPoint,
  extrasForSolutionFile,
  extrasVector,
  finalPoint,
  parsePointSpec,
  pointSpecAccepted,
  pointSpecText,
  readRunFiles,
  readSolutionFile,
  runPoint,
} from './start.js';

// ---------------------------------------------------------------------------------------------
// Limits (bad input is refused up front rather than discovered hours later)

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

// ---------------------------------------------------------------------------------------------
// The resolved case

export type ModelKind = 'built-in' | 'expression' | 'code';

export interface ResolvedContinuation {
  parameter: string;
  bounds: [number, number];
  direction: 'increase' | 'decrease';
  method: 'arclength' | 'natural';
  step: { initial: number; min: number; max: number };
  maxPoints: number;
  stopWhen: { monitor: string; above?: number; below?: number }[];
  branchSwitching: { depth: number };
  newton: { residualTolerance: number; stepTolerance: number; maxIterations: number };
  locate: { folds: boolean; branchPoints: boolean };
  maxTurnDegrees: number;
  sparseLu: 'auto' | 'klu' | 'superlu';
  /** A curve run: what it follows and the free parameter (./curve-case.ts). */
  follow?: ResolvedFollow;
}

export interface ResolvedCase {
  name: string;
  /** Built-in id, `reaction-diffusion`, or the absolute path of a code model. */
  model: string;
  modelKind: ModelKind;
  /** Model-specific keys (everything but the case keys), as given. */
  modelOptions: Record<string, unknown>;
  grid: { intervals: number[]; length: number[] };
  /** Start value of every parameter of the problem (defaults filled in). */
  parameters: Record<string, number>;
  /** The `parameters` key as given (for reaction-diffusion: the declarations). */
  parameterDeclarations?: Record<string, unknown>;
  continuation: ResolvedContinuation;
  output: { directory?: string; solutions: SolutionChoice };
  stability: { eigenvalues: number };
  checkpoint: { everyPoints: number; everySeconds: number };
  /** The diagram's monitor (plots). */
  plot: { monitor: string };
  /** Where the start state comes from (absolute paths), when not the model's initial guess. */
  start?: ResolvedStart;
  /** The `initial:` key, resolved (absolute file path, noise seed filled in). */
  initial?: ResolvedInitial;
  /** For runs sent to a cluster (--slurm): lines the job script runs before the run. */
  cluster?: { setup: string[] };
}

export type ResolvedStart = { solution: string } | { run: string; point: string; branch: number };

export interface PreparedCase {
  /** The case file as the user named it (for messages), or a label for in-memory cases. */
  label: string;
  /** Absolute path of the case file, when read from a file. */
  file?: string;
  /** Folder that relative paths in the case are resolved against. */
  baseDir: string;
  case: ResolvedCase;
  problem: Problem;
  /** Start parameter values. */
  params: Params;
  settings: ContinuationSettings;
  /** The safety caution of the model, when it has one. */
  caution?: string;
  /** Start state (grid unknowns and extra unknowns) from `start:`, with where it came from in words. */
  start?: { u: Float64Array; from: string };
  /**
   * A curve run (`continuation.follow`): the curve engine's settings, and whether the start state
   * is the special point itself (a run point of the followed kind: no search).
   */
  curve?: { settings: CurveSettings; atPoint: boolean; frequency?: number };
}

// ---------------------------------------------------------------------------------------------
// Showing values in messages

/** A short, safe rendering of any value for messages (never throws). */
/** `parent.key` for plain keys; just `parent` when the key itself is odd (empty, spaces…). */
function keyPath(parent: string, key: string): string {
  return /^[\w:-]+$/.test(key) ? `${parent}.${key}` : parent;
}

/** For odd keys, the message names the key itself (it cannot appear in the field path). */
function keyNote(key: string): string {
  return /^[\w:-]+$/.test(key) ? '' : `the name ${JSON.stringify(key)}: `;
}

export function showValue(v: unknown): string {
  const text = render(v, 0);
  return text.length > 60 ? text.slice(0, 57) + '...' : text;
}

function render(v: unknown, depth: number): string {
  if (v === undefined) return depth === 0 ? 'nothing' : 'undefined';
  if (v === null) return 'null';
  if (typeof v === 'string') return depth === 0 && v.length > 60 ? `'${v.slice(0, 57)}...'` : `'${v}'`;
  if (typeof v === 'number') return Number.isNaN(v) ? 'nan' : v === Infinity ? 'inf' : v === -Infinity ? '-inf' : String(v);
  if (typeof v === 'bigint') return `${v}`;
  if (typeof v === 'boolean') return v ? 'true' : 'false';
  if (typeof v === 'function') return 'a function';
  if (typeof v === 'symbol') return 'a symbol';
  if (v instanceof Date) return Number.isNaN(v.getTime()) ? 'an invalid date' : v.toISOString();
  if (depth > 2) return Array.isArray(v) ? '[...]' : '{...}';
  if (Array.isArray(v) || ArrayBuffer.isView(v)) {
    const items = Array.from(v as ArrayLike<unknown>).slice(0, 8).map((x) => render(x, depth + 1));
    return `[${items.join(', ')}${(v as ArrayLike<unknown>).length > 8 ? ', ...' : ''}]`;
  }
  if (typeof v === 'object') {
    const entries = Object.keys(v).slice(0, 6).map((k) => `${k}: ${render((v as Record<string, unknown>)[k], depth + 1)}`);
    return `{${entries.join(', ')}${Object.keys(v).length > 6 ? ', ...' : ''}}`;
  }
  return 'a value';
}

function pathText(path: readonly PropertyKey[]): string {
  let s = '';
  for (const k of path) {
    if (typeof k === 'number') s += `[${k}]`;
    else s += s ? `.${String(k)}` : String(k);
  }
  return s;
}

function valueAt(root: unknown, path: readonly PropertyKey[]): unknown {
  let v: unknown = root;
  for (const k of path) {
    if (v === null || typeof v !== 'object') return undefined;
    v = (v as Record<PropertyKey, unknown>)[k as string];
  }
  return v;
}

// ---------------------------------------------------------------------------------------------
// Schema of the case keys (model-specific keys are checked against the model's option list)

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

const continuationSchema = section({
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

const caseKeys = ['name', 'model', 'grid', 'parameters', 'continuation', 'output', 'stability', 'checkpoint', 'plot', 'start', 'initial', 'time', 'cluster', 'search'] as const;

const setupLineText = accepted('a list of shell lines run before the run in a cluster job, e.g. ["module load nodejs/20"]');

const caseSchema = z.looseObject(
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

type CaseInput = z.infer<typeof caseSchema>;

// ---------------------------------------------------------------------------------------------
// Reading

/** Parse YAML (or JSON for `.json` files) into a plain value; errors are one line with the line number. */
export function parseCaseText(text: string, label: string, json = false): unknown {
  if (text.includes('\u0000')) throw new CaseError(label, '', 'the file holds binary data, not a YAML or JSON case');
  if (json) {
    let value: unknown;
    try {
      value = JSON.parse(text);
    } catch (e) {
      throw new CaseError(label, '', `not valid JSON: ${(e as Error).message}`);
    }
    // JSON.parse keeps the last of two equal keys without a word; YAML refuses them (uniqueKeys)
    const twice = duplicateJsonKey(text);
    if (twice) throw new CaseError(label, pathText(twice.path), `the key ${showValue(twice.key)} is given twice (line ${twice.line}); give each key once`);
    return value;
  }
  const lineCounter = new LineCounter();
  const doc = parseDocument(text, { prettyErrors: false, uniqueKeys: true, lineCounter });
  if (doc.errors.length > 0) {
    const err = doc.errors[0];
    const line = err.pos ? lineCounter.linePos(err.pos[0]).line : undefined;
    const first = err.message.split('\n')[0].replace(/ at line \d+, column \d+:?$/, '');
    throw new CaseError(label, '', `not valid YAML${line ? ` (line ${line})` : ''}: ${first}`);
  }
  try {
    return doc.toJS({ maxAliasCount: 100 });
  } catch (e) {
    throw new CaseError(label, '', `not valid YAML: ${(e as Error).message}`);
  }
}

/**
 * The first key given twice in one object of a JSON text that JSON.parse accepted, with the path
 * of its object and its line. A plain scan: strings, brackets, colons and commas are all it needs.
 */
export function duplicateJsonKey(text: string): { key: string; path: (string | number)[]; line: number } | undefined {
  type Frame = { keys?: Set<string>; expectKey: boolean; index: number; key?: string };
  const stack: Frame[] = [];
  const path = (): (string | number)[] => stack.slice(0, -1).map((f) => (f.keys ? (f.key as string) : f.index));
  for (let i = 0; i < text.length; i++) {
    const c = text[i];
    if (c === '{' || c === '[') {
      stack.push(c === '{' ? { keys: new Set(), expectKey: true, index: 0 } : { expectKey: false, index: 0 });
    } else if (c === '}' || c === ']') {
      stack.pop();
    } else if (c === ',') {
      const top = stack[stack.length - 1];
      if (top?.keys) top.expectKey = true;
      else if (top) top.index++;
    } else if (c === '"') {
      const start = i;
      for (i++; text[i] !== '"'; i++) if (text[i] === '\\') i++;
      const top = stack[stack.length - 1];
      if (top?.keys && top.expectKey) {
        const key = JSON.parse(text.slice(start, i + 1)) as string;
        top.expectKey = false;
        if (top.keys.has(key)) {
          top.key = key;
          const line = text.slice(0, start).split('\n').length;
          return { key, path: path(), line };
        }
        top.keys.add(key);
        top.key = key;
      }
    }
  }
  return undefined;
}

/**
 * Keys that JavaScript gives a meaning of their own (`__proto__` names an object's prototype):
 * refused anywhere in a case, whatever it was read from (YAML, JSON, a run's stored case).
 */
function refuseOddKeys(raw: unknown, label: string): void {
  const stack: { v: unknown; path: (string | number)[] }[] = [{ v: raw, path: [] }];
  // YAML anchors and aliases share one object between places (and can make a cycle): each object
  // is looked at once, or a few nested aliases would mean exponentially many visits
  const seen = new Set<object>();
  while (stack.length) {
    const { v, path } = stack.pop()!;
    if (v === null || typeof v !== 'object' || ArrayBuffer.isView(v) || v instanceof Date) continue;
    if (seen.has(v)) continue;
    seen.add(v);
    if (Array.isArray(v)) {
      v.forEach((x, i) => stack.push({ v: x, path: [...path, i] }));
      continue;
    }
    for (const key of Object.keys(v)) {
      if (key === '__proto__') throw new CaseError(label, pathText(path), `the key '__proto__' is not accepted (JavaScript reads it as the prototype of the map; give another name)`);
      stack.push({ v: (v as Record<string, unknown>)[key], path: [...path, key] });
    }
  }
}

/** Read and check a case file, build its problem; nothing is written. */
export async function prepareCase(file: string, options: { label?: string } = {}): Promise<PreparedCase> {
  const { raw, opts } = readCaseFile(file, options);
  return prepareCaseObject(raw, opts);
}

/** Read and parse a case file (one-line CaseErrors); the options for `prepareCaseObject` and its siblings. */
export function readCaseFile(file: string, options: { label?: string } = {}): { raw: unknown; opts: PrepareObjectOptions } {
  const label = options.label ?? file;
  const abs = resolve(file);
  if (!existsSync(abs)) throw new CaseError(label, '', 'no such file');
  if (statSync(abs).isDirectory()) throw new CaseError(label, '', 'is a folder, not a case file');
  let text: string;
  try {
    text = readTextFile(abs, caseFileLimit, 'a case file');
  } catch (e) {
    if (e instanceof FileReadError) throw new CaseError(label, '', e.reason);
    throw e;
  }
  const raw = parseCaseText(text, label, extname(abs).toLowerCase() === '.json');
  const defaultName = basename(abs, extname(abs)).replace(/[^A-Za-z0-9._-]/g, '-').replace(/^[^A-Za-z0-9]+/, '') || 'case';
  // the user named this file: its code model may load
  return { raw, opts: { label, file: abs, baseDir: dirname(abs), defaultName, loadCode: true } };
}

export interface PrepareObjectOptions {
  label: string;
  file?: string;
  baseDir: string;
  defaultName?: string;
  /**
   * Which code model the case may import (and so run): `true` for a case the user named on the
   * command line (or one built from it in this call), a path for exactly that module, absent for
   * none. A case read back from a run folder (a checkpoint, run.json) is data: folders travel
   * between colleagues, and a forged one must not run code the user did not name.
   */
  loadCode?: true | string;
}

/**
 * The option that lets a case built from `resolved` (a sweep's value, a grid of a study, the same
 * case in a worker) load its code model: the one already allowed when `resolved` was read; none
 * for other models.
 */
export function ownCodeModel(resolved: { model: string; modelKind: ModelKind }): { loadCode?: string } {
  return resolved.modelKind === 'code' ? { loadCode: resolved.model } : {};
}

/** The absolute path of the code model a case's `model` value names (undefined for a built-in id). */
export function codeModelPath(model: unknown, baseDir: string): string | undefined {
  if (typeof model !== 'string') return undefined;
  const id = model.trim();
  if (Object.hasOwn(models, id) || !(/[\\/]/.test(id) || /\.(mjs|js|cjs)$/i.test(id))) return undefined;
  return isAbsolute(id) ? id : resolve(baseDir, id);
}

/**
 * What every command reading a case needs, checked: the case keys' shapes, the model and its
 * problem on the grid, the start parameter values, and the start state (from `start:` and
 * `initial:`). `prepareCaseObject` (runs) and `prepareSettleCaseObject` (time integration) go on
 * from here.
 */
export interface CaseParts {
  label: string;
  fail: (field: string, detail: string) => never;
  input: CaseInput & Record<string, unknown>;
  kind: ModelKind;
  modelId: string;
  modelRef: string;
  modelOptions: Record<string, unknown>;
  intervals: number[];
  length: number[];
  problem: Problem;
  description: ReturnType<Problem['describe']>;
  params: Record<string, number>;
  givenParams: Record<string, unknown>;
  knownParams: string[];
  /** Parameters whose start values came from the run named by `start:`. */
  fromRun: Set<string>;
  startFrom?: StartKey;
  /** The start state (from `start:` and/or `initial:`), with where it came from in words. */
  start?: { u: Float64Array; from: string };
  initial?: ResolvedInitial;
  caution?: string;
}

/** Steps 1–7 of reading a case (see CaseParts); nothing is written. */
export async function prepareCaseParts(raw: unknown, opts: PrepareObjectOptions): Promise<CaseParts> {
  const label = opts.label;
  const fail = (field: string, detail: string): never => {
    throw new CaseError(label, field, detail);
  };
  if (raw === null || raw === undefined) fail('', 'the case is empty (expected keys: name, model, grid, parameters, continuation, output)');
  if (typeof raw !== 'object' || Array.isArray(raw)) {
    fail('', `expected a map of keys (name, model, grid, parameters, continuation, output), got ${showValue(raw)}`);
  }
  refuseOddKeys(raw, label);

  // 1. the case keys' shapes
  const parsed = caseSchema.safeParse(raw);
  if (!parsed.success) {
    const iss = parsed.error.issues[0];
    let path = iss.path as PropertyKey[];
    let detail: string;
    if (iss.code === 'unrecognized_keys') {
      detail = iss.message;
    } else if (iss.code === 'invalid_union' || iss.code === 'invalid_type' || iss.code === 'invalid_value' || iss.code === 'too_small' || iss.code === 'too_big' || iss.code === 'invalid_format' || iss.code === 'custom') {
      const value = valueAt(raw, path);
      if (value === undefined && !(iss.code === 'too_small' || iss.code === 'too_big')) {
        detail = `is missing (accepted: ${iss.message})`;
      } else {
        detail = `${showValue(value)} is not accepted (accepted: ${iss.message})`;
      }
    } else {
      detail = iss.message;
    }
    // the tuple `bounds` reports a wrong count on the tuple itself
    if (path.length === 0) path = [];
    fail(pathText(path), detail);
  }
  const input = parsed.data as CaseInput & Record<string, unknown>;

  // 2. the model
  const modelId = input.model.trim();
  let kind: ModelKind;
  let factory: ProblemFactory;
  let optionSpecs: readonly OptionSpec[] | undefined;
  let dimensions: readonly number[] | undefined;
  let modelRef = modelId;
  let registryCaution: string | undefined;
  const known = Object.keys(models);
  if (Object.hasOwn(models, modelId)) {
    kind = modelId === 'reaction-diffusion' ? 'expression' : 'built-in';
    const entry = modelEntry(modelId);
    factory = entry.factory;
    optionSpecs = entry.options;
    dimensions = entry.dimensions;
    registryCaution = entry.caution;
  } else if (codeModelPath(modelId, opts.baseDir) !== undefined) {
    kind = 'code';
    modelRef = codeModelPath(modelId, opts.baseDir)!;
    if (opts.loadCode !== true && opts.loadCode !== modelRef) {
      fail('model', `the code model ${modelRef} is not loaded: a case read back from a folder never runs code the user did not name (pass the case file that names the module)`);
    }
    factory = await loadCodeModel(modelRef, modelId, label);
  } else {
    return fail('model', `${showValue(modelId)} is not a known model (accepted: ${known.join(', ')}, or a path to a code model such as ./my-model.mjs)`);
  }

  // 3. model-specific keys
  const modelOptions: Record<string, unknown> = {};
  for (const [key, value] of Object.entries(input)) {
    if ((caseKeys as readonly string[]).includes(key)) continue;
    modelOptions[key] = value;
  }
  if (optionSpecs) {
    const names = optionSpecs.map((s) => s.name).filter((n) => n !== 'grid' && n !== 'parameters');
    for (const key of Object.keys(modelOptions)) {
      if (!names.includes(key)) {
        fail(key, `unknown key (accepted: ${[...caseKeys].join(', ')}${names.length ? `; for model '${modelId}' also ${names.join(', ')}` : ''})`);
      }
    }
    for (const spec of optionSpecs) {
      const v = modelOptions[spec.name];
      if (spec.choices && v !== undefined && (typeof v !== 'string' || !spec.choices.includes(v))) {
        fail(spec.name, `${showValue(v)} is not accepted (accepted: ${spec.choices.join(', ')})`);
      }
    }
  }

  // 4. grid: dimension and size before anything is allocated
  const intervals = input.grid.intervals;
  const dim = intervals.length;
  let length: number[];
  if (input.grid.length === undefined) length = intervals.map(() => 1);
  else if (typeof input.grid.length === 'number') length = intervals.map(() => input.grid.length as number);
  else {
    length = input.grid.length;
    if (length.length !== dim) {
      fail('grid.length', `${showValue(length)} has ${length.length} entries but grid.intervals has ${dim} (accepted: one length per axis)`);
    }
  }
  if (dimensions && !dimensions.includes(dim)) {
    fail('grid.intervals', `${showValue(intervals)} is a ${dim}D grid; model '${modelId}' supports ${dimensions.map((d) => `${d}D`).join(', ')}`);
  }
  try {
    assertFactorMemory(estimateFactorMemory(intervals.map((n) => n + 1), 1, 0), `grid ${intervals.join('x')}`);
  } catch (e) {
    fail('grid.intervals', (e as Error).message);
  }
  // before the problem is built, with the fewest unknowns the grid can have (one field, Dirichlet
  // walls): what is refused here is refused below too, once the problem says what it holds
  const eigenvalues = input.stability?.eigenvalues ?? 0;
  const requestedSolver = ((input.continuation as { 'sparse-lu'?: 'auto' | 'klu' | 'superlu' } | undefined)?.['sparse-lu'] ?? 'auto');
  checkFactorisations(estimateFactorMemory(intervals.map((n) => n - 1), 1, 1), intervals, eigenvalues, requestedSolver, fail);
  const grid: GridOptions = { intervals: intervals.slice(), length: length.slice() };

  // 5. parameters given as start values (reaction-diffusion: declarations, passed to the model)
  const givenParams = (input.parameters ?? {}) as Record<string, unknown>;
  const factoryOptions: Record<string, unknown> & { grid: GridOptions } = { ...modelOptions, grid };
  // `initial:` (./initial.ts): a named state goes to the model as its option; other forms are ours
  const namedStates = kind === 'code' ? undefined : (optionSpecs?.find((o) => o.name === 'initial')?.choices ?? []);
  const initial = resolveInitial(input.initial, namedStates, opts.baseDir, fail);
  if (initial?.named !== undefined) factoryOptions.initial = initial.named;
  if (kind === 'expression') {
    factoryOptions.parameters = givenParams;
  } else {
    for (const [k, v] of Object.entries(givenParams)) {
      if (typeof v !== 'number' || !Number.isFinite(v)) fail(keyPath('parameters', k), `${keyNote(k)}${showValue(v)} is not accepted (accepted: a finite number)`);
    }
  }

  // 6. build the problem
  let problem: Problem;
  try {
    problem = factory(factoryOptions);
    if (!problem || typeof problem !== 'object' || typeof problem.residual !== 'function') {
      throw new Error(`the factory returned ${showValue(problem)}, not a problem (see the Problem contract)`);
    }
    validateProblemNames(problem);
  } catch (e) {
    if (e instanceof CaseError) throw e;
    const { field, detail } = modelErrorField(e instanceof Error ? e.message : String(e), modelId, kind);
    return fail(field, detail);
  }
  let description: ReturnType<Problem['describe']>;
  try {
    description = problem.describe();
  } catch (e) {
    return fail('model', `the problem cannot describe itself: ${e instanceof Error ? e.message : String(e)}`);
  }
  if (kind === 'code') {
    try {
      assertFactorMemory(
        estimateFactorMemory(description.axes.map((a) => a.nodes), Math.max(1, description.fields.length), problem.extraUnknowns.length),
        `grid ${intervals.join('x')}`,
      );
    } catch (e) {
      fail('grid.intervals', (e as Error).message);
    }
  }
  checkFactorisations(builtEstimate(description, problem), intervals, eigenvalues, requestedSolver, fail);

  // 7. start values (a start from a run point brings that point's parameter values)
  const params: Record<string, number> = {};
  for (const s of problem.parameters) params[s.name] = s.default;
  const knownParams = problem.parameters.map((s) => s.name);
  const startFrom = resolveStartKey(input.start, opts.baseDir, fail);
  const fromRun = new Set<string>();
  if (startFrom?.point) {
    for (const [k, v] of Object.entries(startFrom.point.params)) {
      if (!knownParams.includes(k) || !Number.isFinite(v)) continue;
      if (kind !== 'expression' && Object.hasOwn(givenParams, k)) continue;
      params[k] = v;
      fromRun.add(k);
    }
  }
  if (kind !== 'expression') {
    for (const [k, v] of Object.entries(givenParams)) {
      if (!knownParams.includes(k)) {
        const variant = kind === 'built-in' && modelEntry(modelId).parameters.some((s) => s.name === k);
        fail(
          keyPath('parameters', k),
          `${keyNote(k)}unknown parameter for model '${modelId}' (accepted: ${knownParams.join(', ') || 'none'})` +
            (variant ? `; '${k}' belongs to another variant of the model (see \`branchline models\`)` : ''),
        );
      }
      params[k] = v as number;
    }
  }
  for (const s of problem.parameters) {
    const v = params[s.name];
    if ((s.min !== undefined && v < s.min) || (s.max !== undefined && v > s.max)) {
      fail(`parameters.${s.name}`, `${showValue(v)} lies outside the accepted range [${s.min ?? '-inf'}, ${s.max ?? 'inf'}] (${s.description})`);
    }
  }

  // the start state: a state of an earlier run or a file (`start:`), and the `initial:` forms
  const base = startFrom ? readStartState(startFrom, problem, params, fail) : undefined;
  if (base && initial?.file !== undefined) fail('initial.from', `names a state file, and start: gives a state too: use one of them`);
  let start = base;
  if (initial && (initial.file !== undefined || Object.keys(initial.values).length > 0 || initial.noise)) {
    let baseU = base?.u;
    if (initial.file !== undefined) baseU = readStartState({ resolved: { solution: initial.file }, solution: initial.file }, problem, params, (_f, d) => fail('initial.from', d)).u;
    let u: Float64Array;
    try {
      u = initialStateBuilder(problem, initialSpec(initial)).build(params, baseU);
    } catch (e) {
      if (e instanceof InitialStateError) return fail(e.field ? keyPath('initial', e.field) : 'initial', e.message);
      throw e;
    }
    setPhaseReference(problem, u);
    start = { u, from: `${initialWords(initial)}${base ? ` on ${base.from}` : ''}` };
  }
  const caution = description.caution ?? registryCaution;
  return {
    label,
    fail,
    input,
    kind,
    modelId,
    modelRef,
    modelOptions,
    intervals,
    length,
    problem,
    description,
    params,
    givenParams,
    knownParams,
    fromRun,
    ...(startFrom ? { startFrom } : {}),
    ...(start ? { start } : {}),
    ...(initial ? { initial } : {}),
    ...(caution ? { caution } : {}),
  };
}

/** Check a parsed case (e.g. the resolved case stored in a run directory) and build its problem. */
export async function prepareCaseObject(raw: unknown, opts: PrepareObjectOptions): Promise<PreparedCase> {
  const parts = await prepareCaseParts(raw, opts);
  const { label, fail, input, kind, modelId, modelRef, modelOptions, intervals, length, problem, description, params, givenParams, knownParams, fromRun, startFrom } = parts;
  if (input.continuation === undefined) {
    fail(
      'continuation',
      `is missing (accepted: a map with keys ${Object.keys(continuationSchema.shape).join(', ')}; a case with time: only is for \`branchline settle\`)`,
    );
  }

  // 8. continuation
  const c = input.continuation!;
  const parameter = c.parameter.trim();
  const spec = problem.parameters.find((s) => s.name === parameter);
  if (!spec) {
    fail(
      'continuation.parameter',
      `${showValue(parameter)} is not a parameter of model '${modelId}' (accepted: ${knownParams.join(', ') || 'none'})` +
        (kind === 'expression' ? `; declare parameters with start values under 'parameters', e.g. {${parameter}: 1}` : ''),
    );
  }
  const pspec = spec!;
  const [lo, hi] = c.bounds;
  if (!(lo < hi)) {
    fail('continuation.bounds', `${showValue(c.bounds)} is ${lo === hi ? 'empty' : 'reversed'} (accepted: [low, high] with low < high)`);
  }
  if ((pspec.min !== undefined && lo < pspec.min) || (pspec.max !== undefined && hi > pspec.max)) {
    fail('continuation.bounds', `${showValue(c.bounds)} reaches outside the accepted range of ${parameter}, [${pspec.min ?? '-inf'}, ${pspec.max ?? 'inf'}]`);
  }
  const start = params[parameter];
  // `both` (curve runs: one curve each way from the first point) is checked with the curve keys
  const direction = (c.direction === 'both' ? 'increase' : (c.direction ?? defaultSettings.direction)) as 'increase' | 'decrease';
  if (start < lo || start > hi) {
    fail(
      `parameters.${parameter}`,
      `the start value ${showValue(start)} lies outside continuation.bounds ${showValue(c.bounds)}` +
        (fromRun.has(parameter) && startFrom?.point ? ` (the value at the ${startFrom.point.words}; widen the bounds or set parameters.${parameter})` : ''),
    );
  }
  if ((start === hi && direction === 'increase') || (start === lo && direction === 'decrease')) {
    fail('continuation.direction', `'${direction}' leaves the bounds at once: the start value ${parameter} = ${start} is the ${start === hi ? 'upper' : 'lower'} bound`);
  }

  const step = resolveStep(c.step ?? {}, fail);
  const monitorNames = problem.monitors.map((m) => m.name);
  const stopWhen = (c['stop-when'] ?? []).map((s, i) => {
    const where = `continuation.stop-when[${i}]`;
    if (!monitorNames.includes(s.monitor)) fail(`${where}.monitor`, `${showValue(s.monitor)} is not a monitor of this problem (accepted: ${monitorNames.join(', ')})`);
    if (s.above === undefined && s.below === undefined) fail(where, `gives no limit (accepted: above: value and/or below: value)`);
    if (s.above !== undefined && s.below !== undefined && !(s.below < s.above)) {
      fail(where, `below ${s.below} is not less than above ${s.above}; the branch would stop at once`);
    }
    return { monitor: s.monitor, ...(s.above !== undefined ? { above: s.above } : {}), ...(s.below !== undefined ? { below: s.below } : {}) };
  });

  const continuation: ResolvedContinuation = {
    parameter,
    bounds: [lo, hi],
    direction,
    method: (c.method ?? defaultSettings.method) as 'arclength' | 'natural',
    step,
    maxPoints: c['max-points'] ?? defaultSettings.maxPoints,
    stopWhen,
    branchSwitching: { depth: c['branch-switching']?.depth ?? defaultSettings.branchSwitching.depth },
    newton: {
      // `tolerance` is shorthand for both; the specific keys win
      residualTolerance: c.newton?.['residual-tolerance'] ?? c.newton?.tolerance ?? defaultSettings.newton.residualTolerance,
      stepTolerance: c.newton?.['step-tolerance'] ?? c.newton?.tolerance ?? defaultSettings.newton.stepTolerance,
      maxIterations: c.newton?.['max-iterations'] ?? defaultSettings.newton.maxIterations,
    },
    locate: {
      folds: c.locate?.folds ?? defaultSettings.locate.folds,
      branchPoints: c.locate?.['branch-points'] ?? defaultSettings.locate.branchPoints,
    },
    maxTurnDegrees: c['max-turn-degrees'] ?? defaultSettings.maxTurnDegrees,
    sparseLu: (c['sparse-lu'] ?? 'auto') as 'auto' | 'klu' | 'superlu',
  };
  const follow = resolveFollow(c, problem, params, parameter, input.stability?.eigenvalues, fail);
  if (follow) continuation.follow = follow;

  // 9. output, stability, checkpoint
  const solutions = (input.output?.solutions ?? 'special') as SolutionChoice;
  if (solutions === 'all') {
    const nodes = description.axes.reduce((a, ax) => a * ax.nodes, 1) * Math.max(1, description.fields.length);
    const bytes = nodes * 8 * continuation.maxPoints;
    if (bytes > solutionBytesLimit) {
      fail(
        'output.solutions',
        `'all' would write up to ${(bytes / 1024 ** 3).toFixed(0)} GiB of solution files per branch (${continuation.maxPoints} points of ${nodes} values); use 'special' or fewer max-points`,
      );
    }
  }

  // 10. plots and the start state
  const plotMonitor = input.plot?.monitor?.trim() ?? defaultPlotMonitor(monitorNames, description.fields);
  if (!monitorNames.includes(plotMonitor)) {
    fail('plot.monitor', `${showValue(plotMonitor)} is not a monitor of this problem (accepted: ${monitorNames.join(', ')})`);
  }
  const resolved: ResolvedCase = {
    name: input.name ?? opts.defaultName ?? 'case',
    model: modelRef,
    modelKind: kind,
    modelOptions,
    grid: { intervals: intervals.slice(), length },
    parameters: params,
    ...(kind === 'expression' ? { parameterDeclarations: givenParams } : {}),
    continuation,
    output: { ...(input.output?.directory !== undefined ? { directory: input.output.directory } : {}), solutions },
    stability: { eigenvalues: input.stability?.eigenvalues ?? 0 },
    checkpoint: {
      everyPoints: input.checkpoint?.['every-points'] ?? defaultCheckpoint.everyPoints,
      everySeconds: input.checkpoint?.['every-seconds'] ?? defaultCheckpoint.everySeconds,
    },
    plot: { monitor: plotMonitor },
    ...(startFrom ? { start: startFrom.resolved } : {}),
    ...(parts.initial ? { initial: parts.initial } : {}),
    ...(input.cluster?.setup?.length ? { cluster: { setup: input.cluster.setup.map((l) => l.trim()) } } : {}),
  };

  return {
    label,
    ...(opts.file !== undefined ? { file: opts.file } : {}),
    baseDir: opts.baseDir,
    case: resolved,
    problem,
    params: Object.freeze({ ...params }),
    settings: toSettings(continuation, resolved.stability.eigenvalues),
    ...(parts.caution ? { caution: parts.caution } : {}),
    ...(parts.start ? { start: parts.start } : {}),
    ...(follow ? { curve: { settings: curveSettingsOf({ ...continuation, follow }), ...curveStartAt(follow.kind, startFrom?.point?.record) } } : {}),
  };
}

/**
 * What a run's factorisations will cost, refused up front when hopeless: the work of one (3D grids
 * take minutes per factorisation long before their memory is a problem), and the memory of those
 * held at once — the continuation's bordered matrix and, with stability, the eigen solver's
 * shifted matrix — in the solver's one address space.
 */
function checkFactorisations(
  estimate: FactorMemoryEstimate,
  intervals: readonly number[],
  eigenvalues: number,
  requested: 'auto' | 'klu' | 'superlu',
  fail: (field: string, detail: string) => never,
): void {
  const what = `grid ${intervals.join('x')}`;
  try {
    assertFactorWork(estimate, what, likelySolver(estimate, requested));
  } catch (e) {
    fail('grid.intervals', (e as Error).message);
  }
  if (eigenvalues > 0 && 2 * estimate.bytes > defaultFactorMemoryLimit) {
    fail(
      'grid.intervals',
      `${what}: the sparse LU factorisations of the continuation and of the eigenvalue solver, held at once, would need about ${((2 * estimate.bytes) / 1024 ** 3).toFixed(1)} GiB, ` +
        `over the ${(defaultFactorMemoryLimit / 1024 ** 3).toFixed(1)} GiB the solver can hold (one 4 GiB address space); use fewer intervals, or stability: {eigenvalues: 0}`,
    );
  }
}

/**
 * The sparse LU a run will factor with: the one the case asks for, or the automatic choice
 * (decideBackend) applied to the estimate — an estimate, as the refusal it serves: the run itself
 * decides on the ordering's prediction, whose counts differ from the model's by a small factor.
 */
export function likelySolver(estimate: FactorMemoryEstimate, requested: 'auto' | 'klu' | 'superlu'): 'klu' | 'superlu' {
  if (requested !== 'auto') return requested;
  if (estimate.unknowns < autoMinimumUnknowns) return 'klu';
  // the model counts L and U; the decision counts L
  return decideBackend(estimate.unknowns, { entries: estimate.factorEntries / 2, flops: estimate.flops, supernodes: 0 }).backend;
}

/** The factorisation estimate of a built problem (its bordered matrix: one more row and column). */
function builtEstimate(description: ReturnType<Problem['describe']>, problem: Problem): FactorMemoryEstimate {
  const fields = Math.max(1, description.fields.length);
  // unknown nodes per axis (eliminated Dirichlet nodes are not unknowns): the axes' node counts
  // scaled alike so that their product is the problem's grid unknowns per field
  const nodes = description.axes.map((a) => a.nodes);
  const all = nodes.reduce((a, x) => a * x, 1);
  const scale = problem.gridUnknowns > 0 && all > 0 ? (problem.gridUnknowns / fields / all) ** (1 / nodes.length) : 1;
  return estimateFactorMemory(nodes.map((x) => x * scale), fields, problem.extraUnknowns.length + 1);
}

/** The diagram's default monitor: `max` (single field), `max:<first field>`, else the first monitor. */
export function defaultPlotMonitor(monitors: readonly string[], fields: readonly string[]): string {
  for (const name of ['max', fields.length ? `max:${fields[0]}` : 'max', 'l2-norm', fields.length ? `l2-norm:${fields[0]}` : 'l2-norm']) {
    if (monitors.includes(name)) return name;
  }
  return monitors[0] ?? 'max';
}

interface StartKey {
  resolved: ResolvedStart;
  /** For a start from a run point: the point (solution file, parameters, extras). */
  point?: RunPoint;
  /** For a start from a solution file. */
  solution?: string;
}

/** Check the `start` key and read what it names (the run's files; the .npy later). */
function resolveStartKey(
  start: { solution?: string; run?: string; point?: string; branch?: number } | undefined,
  baseDir: string,
  fail: (field: string, detail: string) => never,
): StartKey | undefined {
  if (start === undefined) return undefined;
  const accepted = '{solution: file.npy}, {run: folder, point: fold[:N], branch: K} or {run: folder, point: final}';
  if (start.solution !== undefined && start.run !== undefined) fail('start', `gives both solution and run (accepted: ${accepted})`);
  if (start.solution !== undefined) {
    if (start.point !== undefined || start.branch !== undefined) fail('start', `point and branch go with run, not with solution (accepted: ${accepted})`);
    const file = resolve(baseDir, start.solution);
    return { resolved: { solution: file }, solution: file };
  }
  if (start.run === undefined) fail('start', `names neither a solution file nor a run (accepted: ${accepted})`);
  if (start.point === undefined) fail('start.point', `is missing (accepted: ${pointSpecAccepted})`);
  if (start.point!.trim().toLowerCase() === 'final') {
    const dir = resolve(baseDir, start.run!);
    try {
      return { resolved: { run: dir, point: 'final', branch: 1 }, point: finalPoint(dir) };
    } catch (e) {
      return fail('start.run', (e as Error).message);
    }
  }
  const spec = parsePointSpec(start.point!);
  if (!spec) fail('start.point', `${showValue(start.point)} is not accepted (accepted: ${pointSpecAccepted})`);
  const dir = resolve(baseDir, start.run!);
  const branch = start.branch ?? 1;
  let files: ReturnType<typeof readRunFiles>;
  try {
    files = readRunFiles(dir);
  } catch (e) {
    return fail('start.run', (e as Error).message);
  }
  let point: RunPoint;
  try {
    point = runPoint(files, spec!, branch);
  } catch (e) {
    return fail('start.point', (e as Error).message);
  }
  return { resolved: { run: dir, point: pointSpecText(spec!), branch }, point };
}

/** Read the start state named by the `start` key and check it against the problem's grid. */
function readStartState(start: StartKey, problem: Problem, params: Params, fail: (field: string, detail: string) => never): { u: Float64Array; from: string } {
  const file = start.point?.solution ?? start.solution!;
  const field = start.point ? 'start.run' : 'start.solution';
  let array: { shape: number[]; data: Float64Array };
  try {
    // the grid says how large the file can be: nodes times fields
    const d = problem.describe();
    array = readSolutionFile(file, d.axes.reduce((a, ax) => a * ax.nodes, 1) * Math.max(1, d.fields.length));
  } catch (e) {
    return fail(field, (e as Error).message);
  }
  const extrasByName = start.point ? start.point.extras : extrasForSolutionFile(file);
  const extras = extrasVector(problem.extraUnknowns.map((x) => x.name), extrasByName);
  let u: Float64Array;
  try {
    u = problem.fromNodeArray(array.shape, array.data, params, extras);
  } catch (e) {
    return fail(field, `${file}: ${(e as Error).message}`);
  }
  if (u.length !== problem.size) fail(field, `${file}: the model made ${u.length} unknowns from it, the problem has ${problem.size}`);
  for (let i = 0; i < u.length; i++) {
    if (!Number.isFinite(u[i])) fail(field, `${file}: holds non-finite values (unknown ${i})`);
  }
  setPhaseReference(problem, u);
  return { u, from: start.point ? `the ${start.point.words}` : `the solution file ${file}` };
}

/** A phase condition measures shifts against a reference profile: the start state is the natural one. */
function setPhaseReference(problem: Problem, u: Float64Array): void {
  const withReference = problem as Problem & { setPhaseReference?: (u: Float64Array) => void };
  if (problem.extraUnknowns.length > 0 && typeof withReference.setPhaseReference === 'function') withReference.setPhaseReference(u);
}

function resolveStep(
  s: { initial?: number; min?: number; max?: number },
  fail: (field: string, detail: string) => never,
): { initial: number; min: number; max: number } {
  const d = defaultSettings.step;
  const min = s.min ?? Math.min(d.min, s.max ?? d.min, s.initial ?? d.min);
  const max = s.max ?? Math.max(d.max, s.initial ?? d.max, min);
  if (min > max) fail('continuation.step', `min ${min} is larger than max ${max} (accepted: 0 < min <= initial <= max)`);
  const initial = s.initial ?? Math.min(Math.max(d.initial, min), max);
  if (initial < min || initial > max) {
    fail('continuation.step.initial', `${initial} lies outside [min, max] = [${min}, ${max}] (accepted: 0 < min <= initial <= max)`);
  }
  return { initial, min, max };
}

/** The engine's settings from the resolved continuation keys. */
export function toSettings(c: ResolvedContinuation, eigenvalues = 0): ContinuationSettings {
  return {
    ...defaultSettings,
    // stability analysis: the engine computes this many rightmost eigenvalues per point (0: none)
    stability: { eigenvalues },
    parameter: c.parameter,
    bounds: [c.bounds[0], c.bounds[1]],
    direction: c.direction,
    method: c.method,
    step: { ...c.step },
    maxPoints: c.maxPoints,
    stopWhen: c.stopWhen.map((s) => ({ ...s })),
    branchSwitching: { depth: c.branchSwitching.depth },
    newton: { residualTolerance: c.newton.residualTolerance, stepTolerance: c.newton.stepTolerance, maxIterations: c.newton.maxIterations },
    locate: { folds: c.locate.folds, branchPoints: c.locate.branchPoints },
    maxTurnDegrees: c.maxTurnDegrees,
    sparseLu: c.sparseLu,
  };
}

/** The starting state's keys of a case document, `initial:` then `start:` (settle and find-states cases). */
export function startingStateDocument(c: { initial?: ResolvedInitial; start?: object }): Record<string, unknown> {
  return { ...(c.initial ? { initial: initialDocument(c.initial) } : {}), ...(c.start ? { start: { ...c.start } } : {}) };
}

/** The keys every resolved case writes first: name, model, the model's own keys, grid, parameters. */
export function caseDocumentHead(c: Pick<ResolvedCase, 'name' | 'model' | 'modelOptions' | 'grid' | 'modelKind' | 'parameterDeclarations' | 'parameters'>): Record<string, unknown> {
  return {
    name: c.name,
    model: c.model,
    ...c.modelOptions,
    grid: { intervals: c.grid.intervals, length: c.grid.length },
    parameters: c.modelKind === 'expression' ? (c.parameterDeclarations ?? {}) : c.parameters,
  };
}

/**
 * The resolved case in the case-file format (every default filled in), as stored in run.json;
 * `prepareCaseObject` reads it back (issue: resume).
 */
export function caseDocument(c: ResolvedCase): Record<string, unknown> {
  const k = c.continuation;
  return {
    ...caseDocumentHead(c),
    continuation: {
      parameter: k.parameter,
      bounds: k.bounds,
      direction: k.direction,
      // (curve runs have no method, branch switching or locate keys)
      ...(k.follow ? followDocument(k.follow) : { method: k.method }),
      step: k.step,
      'max-points': k.maxPoints,
      'stop-when': k.stopWhen,
      ...(k.follow ? {} : { 'branch-switching': k.branchSwitching }),
      newton: { 'residual-tolerance': k.newton.residualTolerance, 'step-tolerance': k.newton.stepTolerance, 'max-iterations': k.newton.maxIterations },
      ...(k.follow ? {} : { locate: { folds: k.locate.folds, 'branch-points': k.locate.branchPoints } }),
      'max-turn-degrees': k.maxTurnDegrees,
      'sparse-lu': k.sparseLu,
    },
    output: { ...(c.output.directory !== undefined ? { directory: c.output.directory } : {}), solutions: c.output.solutions },
    stability: { eigenvalues: c.stability.eigenvalues },
    checkpoint: { 'every-points': c.checkpoint.everyPoints, 'every-seconds': c.checkpoint.everySeconds },
    ...(c.plot ? { plot: { monitor: c.plot.monitor } } : {}),
    ...(c.start ? { start: { ...c.start } } : {}),
    ...(c.initial ? { initial: initialDocument(c.initial) } : {}),
    ...(c.cluster ? { cluster: { setup: c.cluster.setup.slice() } } : {}),
  };
}

// ---------------------------------------------------------------------------------------------
// Code models and model errors

async function loadCodeModel(abs: string, given: string, label: string): Promise<ProblemFactory> {
  if (!existsSync(abs)) throw new CaseError(label, 'model', `code model ${showValue(given)} not found (looked for ${abs})`);
  // importing a FIFO or a device would block or never end
  const odd = notRegularFile(abs);
  if (odd) throw new CaseError(label, 'model', `code model ${showValue(given)} cannot be loaded: ${odd}`);
  if (statSync(abs).size > codeModelLimit) throw new CaseError(label, 'model', `code model ${showValue(given)} is larger than the ${sizeText(codeModelLimit)} accepted for a code model`);
  let mod: Record<string, unknown>;
  try {
    mod = (await import(pathToFileURL(abs).href)) as Record<string, unknown>;
  } catch (e) {
    throw new CaseError(label, 'model', `code model ${showValue(given)} could not be loaded: ${(e as Error).message ?? String(e)}`);
  }
  const f = mod.default;
  if (typeof f !== 'function') {
    throw new CaseError(label, 'model', `code model ${showValue(given)} has no default export of a factory function (accepted: export default function (options) { return problem; })`);
  }
  const factory = f as ProblemFactory;
  return (options) => {
    try {
      return factory(options);
    } catch (e) {
      throw new Error(`code model ${showValue(given)} failed to build the problem: ${e instanceof Error ? e.message : String(e)}`);
    }
  };
}

/** Find the case field a model's error message is about (the models name options in words). */
function modelErrorField(message: string, modelId: string, kind: ModelKind): { field: string; detail: string } {
  const stripped = message.replace(/^model '[^']*':\s*/, '');
  const memory = /^model '[^']*' on (grid \S+: the sparse LU would need.*)$/.exec(message);
  if (memory) return { field: 'grid.intervals', detail: memory[1] };
  const tries: [RegExp, (m: RegExpExecArray) => string][] = [
    [/^grid\.(intervals|length)(\[\d+\])?/, (m) => `grid.${m[1]}${m[2] ?? ''}`],
    [/^(reaction|diffusion|initial) for field '([^']+)'/, (m) => `${m[1]}.${m[2]}`],
    [/^boundary of field '([^']+)'/, (m) => `boundary.${m[1]}`],
    [/^boundary\b/, () => 'boundary'],
    [/^parameter(?: name)? '([^']+)'/, (m) => `parameters.${m[1]}`],
    [/option '([^']+)'/, (m) => (m[1] === 'parameters' ? 'parameters' : m[1])],
    [/^(field name|'[^']+' is both)/, () => 'fields'],
    [/grid has \d+ axes/, () => 'grid.intervals'],
  ];
  if (kind !== 'code') {
    for (const [re, f] of tries) {
      const m = re.exec(stripped);
      if (m) {
        const field = f(m);
        // the message already names the field: keep its wording without repeating the model
        return { field, detail: stripped.replace(/^grid\.(intervals|length)(\[\d+\])?( \(axis [xyz]\))?\s*/, '') };
      }
    }
  }
  return { field: 'model', detail: kind === 'code' ? message : `model '${modelId}': ${stripped}` };
}

/** The parameters and options of every model, for `branchline models`. */
export function modelCatalogue(): {
  id: string;
  description: string;
  dimensions: readonly number[];
  parameters: { name: string; default: number; description: string }[];
  options: readonly OptionSpec[];
  /** The monitors of the model with its default options (built on a small grid of its first dimension); null for expression models (they depend on the fields). */
  monitors: { name: string; description: string }[] | null;
  caution?: string;
}[] {
  return Object.entries(models).map(([id, e]) => ({
    id,
    description: e.description,
    dimensions: e.dimensions,
    parameters: e.parameters.map((p) => ({ name: p.name, default: p.default, description: p.description })),
    options: e.options.filter((o) => o.name !== 'grid'),
    monitors: id === 'reaction-diffusion' ? null : catalogueMonitors(e),
    ...(e.caution ? { caution: e.caution } : {}),
  }));
}

function catalogueMonitors(e: (typeof models)[string]): { name: string; description: string }[] {
  const dim = e.dimensions[0];
  const problem = e.factory({ grid: { intervals: new Array(dim).fill(8), length: new Array(dim).fill(1) } });
  return problem.monitors.map((m) => ({ name: m.name, description: m.description }));
}
