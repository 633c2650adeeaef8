/**
 * Algebraic unknowns of M u_t = F(u, p): those with zero mass (constraint multipliers, phase-
 * condition drift speeds, algebraic fields of code models). The implicit integrator treats the
 * system as a differential–algebraic one of index 1: that needs the algebraic block of the
 * Jacobian, J_AA = ∂F_A/∂u_A, to be regular, so that the algebraic unknowns follow from the
 * others at every instant. A constraint whose equation does not involve its own multiplier (a
 * phase condition, an integral constraint) has J_AA = 0 — index 2 — and is refused with a
 * sentence saying why.
 *
 * `consistentStart` solves F_A(u) = 0 for the algebraic unknowns (the others fixed) by Newton's
 * method on J_AA, so that the integration starts on the constraint manifold.
 */
import { SparseLU, SparseLUError } from '../linalg/lu.js';
import { type CscMatrix, type CscPattern } from '../linalg/sparse.js';
import { infNorm } from '../linalg/vector.js';
import type { Params, Problem } from '../problem/problem.js';

/** Indices of the unknowns with zero mass (empty when the mass is the identity). */
export function algebraicUnknowns(problem: Problem): number[] {
  const m = problem.massDiagonal;
  if (!m) return [];
  const out: number[] = [];
  for (let i = 0; i < m.length; i++) if (m[i] === 0) out.push(i);
  return out;
}

/** Names of unknowns for messages (extra unknowns by name, grid unknowns by field and node). */
function unknownNames(problem: Problem, indices: readonly number[]): string {
  const names = indices.slice(0, 4).map((i) => {
    const loc = problem.locateUnknown?.(i);
    if (!loc) return `unknown ${i}`;
    return loc.kind === 'extra' ? loc.name : `${loc.field} at node (${loc.node.join(', ')})`;
  });
  return names.join(', ') + (indices.length > 4 ? ` and ${indices.length - 4} more` : '');
}

/** The algebraic block J_AA of the Jacobian values `J` (on the problem's pattern), as a CSC matrix. */
function algebraicBlock(pattern: CscPattern, J: Float64Array, alg: readonly number[], n: number): CscMatrix {
  const local = new Int32Array(n).fill(-1);
  alg.forEach((i, k) => (local[i] = k));
  const colPtr = new Int32Array(alg.length + 1);
  const rows: number[] = [];
  const values: number[] = [];
  alg.forEach((j, k) => {
    for (let p = pattern.colPtr[j]; p < pattern.colPtr[j + 1]; p++) {
      const r = local[pattern.rowIdx[p]];
      if (r >= 0) {
        rows.push(r);
        values.push(J[p]);
      }
    }
    colPtr[k + 1] = rows.length;
  });
  return { rows: alg.length, cols: alg.length, colPtr, rowIdx: Int32Array.from(rows), values: Float64Array.from(values) };
}

const indexTwoText =
  'do not enter their own equations (a constraint of index 2, such as a phase condition or an integral constraint with its multiplier); ' +
  'time integration treats algebraic unknowns of index 1 only: switch the constraint off for the integration (e.g. phase-condition: false) and on again for a continuation from the settled state';

/**
 * Why the problem cannot be integrated as an index-1 system (one sentence), or undefined when it
 * can. The structural test needs no state; with `u` and `p` the block is also factorised.
 */
export function algebraicIndexProblem(problem: Problem, u?: Float64Array, p?: Params): string | undefined {
  const alg = algebraicUnknowns(problem);
  if (alg.length === 0) return undefined;
  const n = problem.size;
  const pattern = problem.pattern();
  const isAlg = new Uint8Array(n);
  for (const i of alg) isAlg[i] = 1;
  // structurally: every algebraic row needs an entry in an algebraic column
  const rowHit = new Uint8Array(n);
  for (const j of alg) for (let q = pattern.colPtr[j]; q < pattern.colPtr[j + 1]; q++) if (isAlg[pattern.rowIdx[q]]) rowHit[pattern.rowIdx[q]] = 1;
  const empty = alg.filter((i) => !rowHit[i]);
  if (empty.length > 0) return `the algebraic unknowns ${unknownNames(problem, empty)} (zero mass) ${indexTwoText}`;
  if (!u || !p) return undefined;
  const J = new Float64Array(pattern.colPtr[n]);
  problem.jacobian(u, p, J);
  const block = algebraicBlock(pattern, J, alg, n);
  const lu = new SparseLU(block, { ordering: 'amd' });
  try {
    lu.factor(block.values);
    if (lu.rcond() < 1e-14) throw new SparseLUError('singular', 'numerically singular');
  } catch (e) {
    if (e instanceof SparseLUError) {
      return `the algebraic unknowns ${unknownNames(problem, alg)} (zero mass) are not determined by their own equations at the initial state (their block of the Jacobian is singular, index 2 or higher); time integration treats algebraic unknowns of index 1 only`;
    }
    throw e;
  } finally {
    lu.dispose();
  }
  return undefined;
}

/**
 * Solve F_A(u) = 0 for the algebraic unknowns of u in place (the differential unknowns fixed) by
 * Newton's method on J_AA; returns the final max-norm of F_A. No-op without algebraic unknowns.
 */
export function consistentStart(problem: Problem, u: Float64Array, p: Params, options: { tolerance?: number; maxIterations?: number } = {}): number {
  const alg = algebraicUnknowns(problem);
  if (alg.length === 0) return 0;
  const n = problem.size;
  const pattern = problem.pattern();
  const f = new Float64Array(n);
  const J = new Float64Array(pattern.colPtr[n]);
  const rhs = new Float64Array(alg.length);
  const dx = new Float64Array(alg.length);
  const tol = options.tolerance ?? 1e-12;
  const maxIt = options.maxIterations ?? 20;
  let lu: SparseLU | undefined;
  let res = Infinity;
  try {
    for (let it = 0; ; it++) {
      problem.residual(u, p, f);
      res = 0;
      for (let k = 0; k < alg.length; k++) {
        rhs[k] = -f[alg[k]];
        res = Math.max(res, Math.abs(f[alg[k]]));
      }
      if (!(res > tol * (1 + infNorm(u))) || it >= maxIt) return res;
      problem.jacobian(u, p, J);
      const block = algebraicBlock(pattern, J, alg, n);
      lu ??= new SparseLU(block, { ordering: 'amd' });
      lu.factor(block.values);
      lu.solve(rhs, dx);
      for (let k = 0; k < alg.length; k++) u[alg[k]] += dx[k];
    }
  } finally {
    lu?.dispose();
  }
}
