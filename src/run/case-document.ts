/**
 * A resolved case written back in the case-file format, every default filled in: the document
 * run.json (and checkpoints, refine.json, job files) store, which `prepareCaseObject` reads back
 * on resume. Settle and find-states cases write the same head and starting-state keys.
 */
import type { ResolvedCase } from './case.js';
import { followDocument } from './curve-case.js';
import { type ResolvedInitial, initialDocument } from './initial.js';

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
