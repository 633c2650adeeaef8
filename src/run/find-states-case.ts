/**
 * Case files for the search for several steady states at fixed parameters (`branchline
 * find-states`): the keys every case has (model, grid, parameters, initial, start, output,
 * stability, plot; read by ./case.ts), an optional `continuation:` section (needed to trace the
 * states found, and then used as for runs, both directions from each state), and the `search:`
 * section:
 *
 *   search:
 *     guesses:                      # each one an `initial:` form (./initial.ts): a named state,
 *       - {u: sin(pi*x)}            # a .npy file, or per-field numbers or expressions with
 *       - {u: sin(2*pi*x)}          # optional noise and from:; default: the case's own initial
 *       - pulse                     # state (initial: / start:), else the model's guess
 *     max-states: 20                # stop once this many distinct states are known
 *     max-solves: 100               # and after this many deflated Newton solves
 *     deflation: {power: 1.5, shift: 1, translation: true}   # translation: distances modulo
 *                                   # shifts along periodic axes (ignored without them)
 *     distinct: 1.0e-6              # relative distance below which two states are one
 *     newton: {tolerance: 1.0e-9, max-iterations: 100}
 *     trace: false                  # trace every state found with the continuation: section
 *
 * Parsing checks every key and builds every guess (one-line errors naming the key); nothing is
 * written.
 */
import { z } from 'zod';
import { InitialStateError, initialStateBuilder, modelEntry } from '../../discretisations/index.js';
import { defaultSearchSettings, type Guess, type SearchSettings } from '../deflation/search.js';
import type { Params, Problem } from '../problem/problem.js';
import { type CaseParts, type PrepareObjectOptions, type ResolvedCase, caseDocumentHead, startingStateDocument, prepareCaseParts, readCaseFile, showValue } from './case.js';
import { type ResolvedInitial, initialDocument, initialSpec, initialWords, resolveInitial } from './initial.js';
import { readSolutionFile } from './start.js';

/** The `search:` section, resolved (defaults filled in). */
export interface ResolvedSearch {
  /** The guesses as resolved `initial:` forms (absent: the case's own start state). */
  guesses?: ResolvedInitial[];
  maxStates: number;
  maxSolves: number;
  deflation: { power: number; shift: number; translation: boolean };
  distinct: number;
  newton: { tolerance: number; maxIterations: number };
  trace: boolean;
}

export type ResolvedFindCase = Omit<ResolvedCase, 'continuation' | 'output' | 'plot'> & {
  search: ResolvedSearch;
  output: { directory?: string };
  plot?: { monitor: string };
  /** The `continuation:` section as given (checked when the states are traced). */
  continuation?: unknown;
};

export interface PreparedFindCase {
  label: string;
  file?: string;
  baseDir: string;
  case: ResolvedFindCase;
  problem: Problem;
  params: Params;
  settings: SearchSettings;
  guesses: Guess[];
  /** The case as read (what each trace starts from, with its own start and direction). */
  raw: Record<string, unknown>;
  parts: Pick<CaseParts, 'kind' | 'modelRef' | 'modelOptions' | 'intervals' | 'length' | 'givenParams'>;
  caution?: string;
}

const accepted = (text: string) => ({ error: () => text });
const positive = z.number(accepted('a positive number')).positive(accepted('a positive number'));
const fraction = z.number(accepted('a number between 0 and 1')).positive(accepted('a number between 0 and 1')).lt(1, accepted('a number between 0 and 1'));
const whole = (hi: number) => {
  const text = accepted(`a whole number from 1 to ${hi}`);
  return z.number(text).int(text).min(1, text).max(hi, text);
};
const bool = z.boolean(accepted('true or false'));

function section<T extends z.ZodRawShape>(shape: T) {
  const keys = Object.keys(shape).join(', ');
  return z.strictObject(shape, {
    error: (iss) => (iss.code === 'unrecognized_keys' ? `unknown key '${iss.keys[0]}' (accepted: ${keys})` : `a map with keys ${keys}`),
  });
}

const guessesText = 'a list of initial states, each one as the initial: key takes it (a named state, a .npy file, or a map of per-field values)';

const searchSchema = section({
  guesses: z.array(z.unknown(), accepted(guessesText)).min(1, accepted(guessesText)).max(1000, accepted('at most 1000 guesses')).optional(),
  'max-states': whole(10_000).optional(),
  'max-solves': whole(1_000_000).optional(),
  deflation: section({
    power: z.number(accepted('a number of at least 1')).min(1, accepted('a number of at least 1')).max(10, accepted('a number from 1 to 10')).optional(),
    shift: z.number(accepted('a number of at least 0')).min(0, accepted('a number of at least 0')).optional(),
    translation: bool.optional(),
  }).optional(),
  distinct: fraction.optional(),
  newton: section({ tolerance: fraction.optional(), 'max-iterations': whole(10_000).optional() }).optional(),
  trace: bool.optional(),
});

export const searchKeys = Object.keys(searchSchema.shape);

type Fail = (field: string, detail: string) => never;

/** Check the `search:` section's shape (CaseError naming the key otherwise); guesses are resolved by the caller. */
function parseSearch(raw: unknown, fail: Fail): z.infer<typeof searchSchema> {
  if (raw === undefined || raw === null) return {};
  const r = searchSchema.safeParse(raw);
  if (r.success) return r.data;
  const iss = r.error.issues[0];
  const path = ['search', ...iss.path.map((k) => (typeof k === 'number' ? `[${k}]` : String(k)))].join('.').replace(/\.\[/g, '[');
  let value: unknown = raw;
  for (const k of iss.path) value = value && typeof value === 'object' ? (value as Record<PropertyKey, unknown>)[k as string] : undefined;
  if (iss.code === 'unrecognized_keys') return fail(path, iss.message);
  return fail(path, value === undefined ? `is missing (accepted: ${iss.message})` : `${showValue(value)} is not accepted (accepted: ${iss.message})`);
}

/** Read and check a find-states case file, build its problem and its guesses; nothing is written. */
export async function prepareFindCase(file: string, options: { label?: string } = {}): Promise<PreparedFindCase> {
  const { raw, opts } = readCaseFile(file, options);
  return prepareFindCaseObject(raw, opts);
}

/** Check a parsed find-states case; nothing is written. */
export async function prepareFindCaseObject(raw: unknown, opts: PrepareObjectOptions): Promise<PreparedFindCase> {
  const parts = await prepareCaseParts(raw, opts);
  const { fail, input, problem, params } = parts;
  const s = parseSearch(input.search, fail);
  const d = defaultSearchSettings;
  const search: ResolvedSearch = {
    maxStates: s['max-states'] ?? d.maxStates,
    maxSolves: s['max-solves'] ?? d.maxSolves,
    deflation: {
      power: s.deflation?.power ?? d.deflation.power,
      shift: s.deflation?.shift ?? d.deflation.shift,
      translation: s.deflation?.translation ?? d.deflation.translation,
    },
    distinct: s.distinct ?? d.distinct,
    newton: { tolerance: s.newton?.tolerance ?? d.newton.tolerance, maxIterations: s.newton?.['max-iterations'] ?? d.newton.maxIterations },
    trace: s.trace ?? false,
  };
  if (search.trace && input.continuation === undefined) {
    fail('search.trace', 'true needs a continuation: section (the parameter, bounds and steps of the traces), e.g. continuation: {parameter: lambda, bounds: [0, 100]}');
  }

  // the guesses: each an `initial:` form; a named state is the model's guess with that option
  const namedStates = parts.kind === 'code' ? undefined : (modelEntry(parts.modelId).options?.find((o) => o.name === 'initial')?.choices ?? []);
  const guesses: Guess[] = [];
  if (s.guesses) {
    search.guesses = [];
    s.guesses.forEach((g, i) => {
      const where = `search.guesses[${i}]`;
      const rebase: Fail = (field, detail) => fail(field.replace(/^initial/, where), detail);
      const r = resolveInitial(g, namedStates, opts.baseDir, rebase);
      if (r === undefined) return fail(where, `is empty (accepted: ${guessesText})`);
      search.guesses!.push(r);
      let base: Float64Array | undefined = parts.start?.u;
      if (r.named !== undefined) {
        if (parts.kind === 'code') fail(where, `the named state ${showValue(r.named)} of a code model cannot be a guess (accepted: a .npy file, or a map of per-field values)`);
        base = modelEntry(parts.modelId).factory({ ...parts.modelOptions, grid: { intervals: parts.intervals.slice(), length: parts.length.slice() }, initial: r.named }).initialGuess(params);
      }
      if (r.file !== undefined) {
        try {
          const a = readSolutionFile(r.file);
          base = problem.fromNodeArray(a.shape, a.data, params, base?.subarray(problem.gridUnknowns));
        } catch (e) {
          fail(`${where}${typeof g === 'string' ? '' : '.from'}`, (e as Error).message);
        }
      }
      try {
        const u = initialStateBuilder(problem, initialSpec(r)).build(params, base);
        guesses.push({ label: `guess ${i + 1} (${initialWords(r).replace(/^the initial state of the case ?\(?|\)$/g, '') || "the model's guess"})`, u });
      } catch (e) {
        if (e instanceof InitialStateError) fail(e.field ? `${where}.${e.field}` : where, e.message);
        throw e;
      }
    });
  } else {
    guesses.push({ label: `guess 1 (${parts.start?.from ?? "the model's initial guess"})`, u: parts.start?.u ?? problem.initialGuess(params) });
  }

  const plotMonitor = (input.plot as { monitor?: string } | undefined)?.monitor;
  const resolved: ResolvedFindCase = {
    name: input.name ?? opts.defaultName ?? 'case',
    model: parts.modelRef,
    modelKind: parts.kind,
    modelOptions: parts.modelOptions,
    grid: { intervals: parts.intervals.slice(), length: parts.length.slice() },
    parameters: params,
    ...(parts.kind === 'expression' ? { parameterDeclarations: parts.givenParams } : {}),
    search,
    output: input.output?.directory !== undefined ? { directory: input.output.directory } : {},
    stability: { eigenvalues: input.stability?.eigenvalues ?? 0 },
    checkpoint: { everyPoints: input.checkpoint?.['every-points'] ?? 25, everySeconds: input.checkpoint?.['every-seconds'] ?? 60 },
    ...(plotMonitor !== undefined ? { plot: { monitor: plotMonitor } } : {}),
    ...(parts.startFrom ? { start: parts.startFrom.resolved } : {}),
    ...(parts.initial ? { initial: parts.initial } : {}),
    ...(input.continuation !== undefined ? { continuation: input.continuation } : {}),
  };
  if (plotMonitor !== undefined && !problem.monitors.some((m) => m.name === plotMonitor)) {
    fail('plot.monitor', `${showValue(plotMonitor)} is not a monitor of this problem (accepted: ${problem.monitors.map((m) => m.name).join(', ')})`);
  }
  const settings: SearchSettings = {
    maxStates: search.maxStates,
    maxSolves: search.maxSolves,
    deflation: { ...search.deflation },
    newton: { ...d.newton, tolerance: search.newton.tolerance, maxIterations: search.newton.maxIterations },
    distinct: search.distinct,
    ...(resolved.stability.eigenvalues > 0 ? { stability: { eigenvalues: resolved.stability.eigenvalues } } : {}),
  };
  return {
    label: parts.label,
    ...(opts.file !== undefined ? { file: opts.file } : {}),
    baseDir: opts.baseDir,
    case: resolved,
    problem,
    params: Object.freeze({ ...params }),
    settings,
    guesses,
    raw: raw as Record<string, unknown>,
    parts: { kind: parts.kind, modelRef: parts.modelRef, modelOptions: parts.modelOptions, intervals: parts.intervals, length: parts.length, givenParams: parts.givenParams },
    ...(parts.caution ? { caution: parts.caution } : {}),
  };
}

/** The resolved case in case-file form (run.json `case`). */
export function findCaseDocument(c: ResolvedFindCase): Record<string, unknown> {
  const s = c.search;
  return {
    ...caseDocumentHead(c),
    ...startingStateDocument(c),
    search: {
      ...(s.guesses ? { guesses: s.guesses.map(initialDocument) } : {}),
      'max-states': s.maxStates,
      'max-solves': s.maxSolves,
      deflation: { ...s.deflation },
      distinct: s.distinct,
      newton: { tolerance: s.newton.tolerance, 'max-iterations': s.newton.maxIterations },
      trace: s.trace,
    },
    ...(c.continuation !== undefined ? { continuation: c.continuation } : {}),
    output: { ...c.output },
    stability: { eigenvalues: c.stability.eigenvalues },
    // how often each trace writes its checkpoints (the search writes one after every solve)
    checkpoint: { 'every-points': c.checkpoint.everyPoints, 'every-seconds': c.checkpoint.everySeconds },
    ...(c.plot ? { plot: { ...c.plot } } : {}),
  };
}
