/**
 * Rightmost eigenvalues of the sparse pencil  J v = μ M v  (M diagonal, possibly singular).
 *
 * Used for the stability of every computed state: the sign convention of the Problem contract
 * makes a state stable when every eigenvalue μ has negative real part.
 *
 * ## API
 *
 *   rightmostEigenvalues(J, { count, mass?, warmStart?, factored?, tolerance?, ... }) → RightmostResult
 *   new EigenTracker(pattern, options).compute(values, { warmStart?, factored? }) → RightmostResult
 *   eigenvaluesDense(J, mass?) → Complex[]            (ml-matrix; reference and small-problem path)
 *   applyShiftInvert / cayleyImage / apolloniusDisc    (small helpers, exported for tests)
 *
 * An EigenTracker belongs to one Jacobian pattern (the LU's symbolic analysis is done once, each
 * call refactors numerically); it keeps the warm start between calls (`warmStart` get/set for
 * checkpoints, `reset()` for a cold start), counts its work in `totals` and frees the wasm
 * memory in `dispose()`. `count` + `guard` eigenvalues are computed (guard default
 * max(2, ⌈count/3⌉)): the extra ones seed the next warm start and widen the searched region.
 *
 * `RightmostResult.values` holds the `count` rightmost eigenvalues found, sorted by decreasing
 * real part (a conjugate pair is never split: count + 1 values come back when the pair straddles
 * the count-th place), each with its residual ‖J x − μ M x‖ (‖x‖ = 1) and the relative residual
 * ‖J x − μ M x‖ / ((‖J‖ + |μ|·‖M‖)‖x‖) (a normwise backward error). `solves` and
 * `factorisations` count the sparse work of the call; `searchedRegion` says which part of the
 * complex plane was actually searched (below); `warmStart` is a plain-array object (JSON-safe)
 * to pass to the next call along a branch.
 *
 * ## Where things are (src/linalg/eigen/)
 *
 *   tracker.ts       EigenTracker (LU, warm start, totals) and its driver `compute`; rightmostEigenvalues
 *   strategy.ts      the search strategy per call: shift-invert, or Cayley shifts planned from the
 *                    known eigenvalues until the enclosure is covered
 *   search.ts        one search with a fixed shift and ordering: restarts, convergence, the claimed disc
 *   krylov-schur.ts  the (block) Krylov–Schur decomposition T V = V S + F B (Stewart 2001)
 *   transform.ts     the shift-invert and Cayley transforms, the Apollonius disc
 *   certification.ts the Bendixson/Gershgorin enclosure, the certified line, the searched region
 *   seeding.ts       warm starts, locking found eigenpairs into a new shift, purification for singular M
 *   call.ts          the state of one call: operators, counters, checked and merged eigenpairs, the answer
 *   eigenpairs.ts    lists of eigenpairs: rightmost selection, conjugate pairs, multiplicity
 *   dense.ts         the dense path (ml-matrix) for tiny problems and as a reference
 *   types.ts         the public types
 *
 * The small projected problems are solved in schur.ts (ordered real Schur form).
 */
export type { Complex } from './schur.js';
export type { ComputeExtras, EigenOptions, EigenValue, EigenWarmStart, RightmostOptions, RightmostResult, SearchDisc, SearchedRegion } from './eigen/types.js';
export { EigenTracker, rightmostEigenvalues } from './eigen/tracker.js';
export { eigenvaluesDense } from './eigen/dense.js';
export { apolloniusDisc, applyShiftInvert, cayleyImage } from './eigen/transform.js';
