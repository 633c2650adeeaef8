/** Time integration to a steady state (no I/O): the BDF2 integrator, its outcomes, the Newton polish. */
export * from './types.js';
export { TimeIntegration, DynamicsError, nextSnapshotTime, refactorRatio, hold, maxGrowth } from './integrator.js';
export type { IntegratorState, IntegrationOptions } from './integrator.js';
export { algebraicUnknowns, algebraicIndexProblem, consistentStart } from './algebraic.js';
export { polishSteadyState, polishShift, type PolishResult } from './polish.js';
export { IterationMatrix } from './iteration-matrix.js';
export { bdfFormula } from './bdf2.js';
export { steadyOscillation, transientOscillation, residualTrend, type OscillationReport, type WatchState } from './watch.js';
