/** Several steady states at fixed parameters by deflated Newton (no I/O): distances modulo translation, the deflation operator, the solve, the search. */
export { StateDistance, periodicAxes, type Nearest, type Probe, type StateReference } from './distance.js';
export { Deflation, defaultDeflation, type DeflationSettings, type DeflationValue } from './deflation.js';
export { DeflatedNewton, defaultDeflatedNewton, stepScale, type DeflatedNewtonSettings, type SolveFailure, type SolveResult } from './newton.js';
export * from './search.js';
