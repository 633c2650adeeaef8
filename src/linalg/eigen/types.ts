/**
 * Public types of the rightmost-eigenvalue solver (re-exported by src/linalg/eigen.ts): the
 * options, the result with its searched region, and the JSON-safe warm start carried along a
 * branch.
 */
import type { LUOptions, SparseLU } from '../lu.js';

export interface EigenValue {
  re: number;
  im: number;
  /** ‖J x − μ M x‖₂ for the unit eigenvector x. */
  residual: number;
  /** residual / (‖J‖ + |μ|·max|M|): a normwise backward error. */
  relativeResidual: number;
  converged: boolean;
}

/** Plain-array warm start (JSON-safe) for the next call along a branch. */
export interface EigenWarmStart {
  /** Problem size the vectors belong to. */
  size: number;
  /** Orthonormal basis of the invariant subspace of the eigenvalues below (each length `size`). */
  vectors: number[][];
  /** The eigenvalues found at the previous point (count + guard of them), rightmost first. */
  values: { re: number; im: number }[];
  /** Last shift used. */
  shift: number;
}

export interface SearchDisc {
  transform: 'shift-invert' | 'cayley';
  /** Shift σ of the LU (J − σM). */
  shift: number;
  /** Cayley pole τ (null for shift-invert). */
  pole: number | null;
  /** The disc (centre on the real axis) inside which every eigenvalue was found. */
  center: number;
  radius: number;
}

export interface SearchedRegion {
  discs: SearchDisc[];
  /** Every eigenvalue with real part ≥ this (and inside the enclosure) is among those found; null: no such line. */
  certifiedAbove: number | null;
  /** Box holding every eigenvalue (Bendixson / Gershgorin); rigorous only for a positive diagonal mass. */
  enclosure: { realMax: number; imaginaryMax: number; rigorous: boolean } | null;
  /** Imaginary half-height the coverage was judged against. */
  imaginaryReach: number;
  /** True when the values returned are certified the rightmost (certifiedAbove ≤ last returned real part). */
  complete: boolean;
  /** Plain-words summary. */
  description: string;
}

export interface RightmostResult {
  values: EigenValue[];
  /** All returned values converged (and met the residual check). */
  converged: boolean;
  unconvergedReason?: string;
  searchedRegion: SearchedRegion;
  /** Linear solves (right-hand sides) and numeric factorisations in this call. */
  solves: number;
  factorisations: number;
  restarts: number;
  /** Shifts σ used, in order. */
  shifts: number[];
  warmStart: EigenWarmStart;
  /** 'krylov' normally; 'dense' for problems too small for a Krylov basis. */
  method: 'krylov' | 'dense';
}

export interface EigenOptions {
  /** How many rightmost eigenvalues are wanted (k). */
  count: number;
  /** Diagonal of M (undefined = identity); zeros mark algebraic unknowns. */
  mass?: Float64Array;
  /** Krylov convergence tolerance (relative, on the transformed operator); default 1e-8. */
  tolerance?: number;
  /** Maximum Krylov basis size; default max(20, 2·(count + guard) + 4). */
  basisSize?: number;
  /** Restarts allowed per search; default 60. */
  maxRestarts?: number;
  /** 'cayley' (default): rightmost with coverage checks and extra shifts; 'shift-invert': the eigenvalues nearest `shift` only. */
  transform?: 'cayley' | 'shift-invert';
  /** Shift-invert centre, and the first shift of a cold start; default 0. */
  shift?: number;
  /** Largest |Im μ| the coverage must reach (default: the Bendixson bound). */
  imaginaryReach?: number;
  /** Maximum number of Cayley shifts per call; default 3. */
  maxShifts?: number;
  /** Extra eigenvalues computed beyond `count` (they sharpen the searched region); default max(2, ⌈count/3⌉). */
  guard?: number;
  /** Seed of the pseudo-random start vectors (results are deterministic for a given seed). */
  seed?: number;
  /** Options for the sparse LU of J − σM. */
  lu?: LUOptions;
}

export interface ComputeExtras {
  /** Overrides the tracker's own warm start (null: cold start). */
  warmStart?: EigenWarmStart | null;
  /** An LU of J − shift·M already factored by the caller, used when it suits the plan. */
  factored?: { lu: SparseLU; shift: number };
}

export interface RightmostOptions extends EigenOptions, ComputeExtras {}
