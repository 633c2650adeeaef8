/** The Problem contract and its tools: names, second-order derivatives, the Jacobian checker, residual sizes for convergence tests. */
export * from './problem.js';
export * from './names.js';
export * from './derivatives.js';
export * from './check.js';
export * from './residual-size.js';
