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
 *
 * This file reads a case top to bottom (the file, the keys' shapes, the model, the grid, the
 * parameters, the start state, the continuation); its parts live beside it: ./case-text.ts (YAML
 * and JSON text), ./case-schema.ts (the keys' shapes, limits and defaults), ./case-messages.ts
 * (values and field paths in messages), ./case-model.ts (code models, model errors, the
 * catalogue), ./case-start.ts (the `start:` key) and ./case-document.ts (the resolved case
 * written back as a document).
 */
import { existsSync, statSync } from 'node:fs';
import { basename, dirname, extname, resolve } from 'node:path';
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
import { type ResolvedFollow, curveSettingsOf, curveStartAt, resolveFollow } from './curve-case.js';
import type { CurveSettings } from '../continuation/curves/types.js';
import { type ResolvedInitial, initialSpec, initialWords, resolveInitial } from './initial.js';
import { FileReadError, caseFileLimit, readTextFile } from './read-file.js';
import { keyNote, keyPath, pathText, showValue, valueAt } from './case-messages.js';
import { type CaseInput, type SolutionChoice, caseKeys, caseSchema, continuationSchema, defaultCheckpoint, solutionBytesLimit } from './case-schema.js';
import { parseCaseText, refuseOddKeys } from './case-text.js';
import { codeModelPath, loadCodeModel, modelErrorField } from './case-model.js';
import { type StartKey, readStartState, resolveStartKey, setPhaseReference } from './case-start.js';

// the parts of reading a case that live in their own files, offered here as before
export { showValue } from './case-messages.js';
export { defaultCheckpoint, lengthRange, maxDepthLimit, maxPointsLimit, minTolerance, solutionBytesLimit, solutionChoices, type SolutionChoice } from './case-schema.js';
export { duplicateJsonKey, parseCaseText } from './case-text.js';
export { codeModelPath, modelCatalogue, ownCodeModel } from './case-model.js';
export { caseDocument, caseDocumentHead, startingStateDocument } from './case-document.js';

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

