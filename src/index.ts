/**
 * branchline as a library: `import { ... } from 'branchline'`.
 *
 * - models and discretisations: the model registry, grids, stencils and assembly helpers for
 *   models written in code;
 * - the Problem contract and its tools (Jacobian checker, second derivatives);
 * - the continuation engine (no I/O: it yields points and special points) and the time
 *   integrator to a steady state (no I/O: it yields steps and an outcome);
 * - sparse linear algebra (KLU in WebAssembly) and the rightmost-eigenvalue solver;
 * - case files and run directories (what the command line uses);
 * - grid-refinement analysis and SVG plots.
 */
export * from '../discretisations/index.js';
export * from './problem/index.js';
export { Continuation, ContinuationError } from './continuation/engine.js';
export type { EngineState, EngineSummary, EngineCounters, ContinuationOptions, PendingBranch, BranchState } from './continuation/engine.js';
export * from './continuation/types.js';
export { CurveContinuation, CurveError, curveSystem } from './continuation/curves/engine.js';
export type { CurveState, CurveOptions, CurveSummary, PendingCurve, CurveBranchState } from './continuation/curves/engine.js';
export * from './continuation/curves/types.js';
export type { AugmentedSystem, TestFunction, TestValue, SystemCounters } from './continuation/curves/augmented.js';
export { checkAugmentedSystem, checkCurveCase } from './continuation/curves/check.js';
export { hopfCriticality } from './continuation/hopf/criticality.js';
export type { HopfCriticality } from './continuation/hopf/criticality.js';
export { FirstLyapunovCoefficient, criticalityOf } from './continuation/hopf/lyapunov.js';
export type { HopfCriticalityWord, LyapunovResult } from './continuation/hopf/lyapunov.js';
export * from './linalg/sparse.js';
export { SparseLU, ComplexSparseLU, SparseLUError, defaultRefactorPolicy } from './linalg/lu.js';
export type { LUOptions, Ordering, RefactorPolicy, FactorStats } from './linalg/lu.js';
export { BorderedMatrix } from './linalg/bordered.js';
export { EigenTracker, rightmostEigenvalues, eigenvaluesDense } from './linalg/eigen.js';
export type { EigenValue, EigenWarmStart, RightmostResult, SearchedRegion, EigenOptions } from './linalg/eigen.js';
export { prepareCase, prepareCaseObject } from './run/case.js';
export type { PreparedCase, ResolvedCase } from './run/case.js';
export { runCase, outputDirectory } from './run/run-case.js';
export type { RunResult } from './run/run-case.js';
export * from './refine/index.js';
export * from './plot/index.js';
export { TimeIntegration, DynamicsError } from './dynamics/integrator.js';
export type { IntegratorState, IntegrationOptions } from './dynamics/integrator.js';
export * from './dynamics/types.js';
export { steadyStability, type SteadyStability } from './dynamics/stability.js';
export { prepareSettleCase, prepareSettleCaseObject } from './run/settle-case.js';
export type { PreparedSettleCase, ResolvedSettleCase } from './run/settle-case.js';
export { settleCase } from './run/settle.js';
export type { SettleResult } from './run/settle.js';
export { DeflatedSearch, Deflation, StateDistance, defaultDeflation, defaultSearchSettings } from './deflation/index.js';
export type { DeflationSettings, FoundState, Guess, SearchEvent, SearchSettings, SolveRecord } from './deflation/index.js';
export { prepareFindCase, prepareFindCaseObject } from './run/find-states-case.js';
export type { PreparedFindCase } from './run/find-states-case.js';
export { findStates } from './run/find-states.js';
export type { FindResult } from './run/find-states.js';
