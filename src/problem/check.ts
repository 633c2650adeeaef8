/**
 * Jacobian checker: compares a Problem's analytic Jacobian (every stored entry, and entries the
 * pattern lacks) and its parameter derivatives with central finite differences at one state.
 * Works on any Problem — built-in, expression-defined or written in code.
 *
 * Method (column-coloured finite differences, Curtis–Powell–Reid 1974):
 *  - columns are grouped so that no two columns of a group share a row of the pattern (greedy
 *    colouring; rows with very many entries — constraint and phase-condition rows — are left out
 *    of the colouring and checked as group sums instead);
 *  - for each group G one central difference d = (F(u + Σ_G h_j e_j) − F(u − Σ_G h_j e_j))/2
 *    is compared, row by row, with the analytic Σ_{j∈G} J_ij h_j. For an ordinary row this is
 *    exactly one stored entry (or none); an entry missing from the pattern shows up as a
 *    difference where the analytic sum has none;
 *  - every row that disagrees is resolved by bisecting the group (halves, quarters, … down to
 *    single columns), which names the wrong entry, stored or missing, at a cost of about
 *    2·log2|G| residual pairs per culprit.
 * Steps: h_j = δ·max(|u_j|, 1), δ = ε_mach^(1/3); parameters likewise.
 * When the model supplies exact second derivatives (F_uu[a, b], F_up[a]) they are compared, for
 * random directions, with fourth-order differences of Jacobian values / parameter derivatives.
 * Before any of this, `checkContract` verifies the shapes the contract promises (lengths of
 * weights, mass, initial guess; the pattern's size and invariants; finite residual values).
 *
 * Error measure, per entry (in "difference units", a·h versus d):
 *     |a h − d| / max(|a h|, |d|, floor_i),   floor_i = 10⁻³ · δ · m_i,
 *     m_i = Σ_k |J_ik|·max(|u_k|, 1) + |F_i|  (the magnitude of the terms of row i).
 * Rounding in the differences is about ε_mach·m_i, so the floor sits well above it (ratio
 * ~4·10⁻⁸) while a wrong entry is caught once its error exceeds ~10⁻⁹ of its row's magnitude
 * (times the tolerance). Entries comparable to their row are compared in plain relative error.
 */
import type { Params, Problem, UnknownLocation } from './problem.js';
import { resolveParameters } from './problem.js';
import { validatePattern } from '../linalg/sparse.js';
import { centralDifferenceStep } from './derivatives.js';

export interface JacobianCheckOptions {
  /** State to check at (default: the problem's initial guess, slightly perturbed). */
  readonly state?: Float64Array;
  /** Parameter values (default: the defaults). */
  readonly parameters?: Params;
  /** Pass/fail threshold on the relative error (default 1e-6). */
  readonly tolerance?: number;
  /** Number of worst entries to report (default 10). */
  readonly worst?: number;
  /** Parameters to check (default: all). */
  readonly parameterNames?: readonly string[];
  /** Budget of extra residual pairs for bisection (default 4000). */
  readonly maxBisectionEvaluations?: number;
  /** Check exact second derivatives (when the model supplies them) against differences (default true). */
  readonly secondOrder?: boolean;
}

export interface EntryReport {
  readonly row: number;
  readonly column: number;
  readonly analytic: number;
  readonly finiteDifference: number;
  readonly relativeError: number;
  /** False when the pattern has no such entry (the analytic value is then 0). */
  readonly inPattern: boolean;
  readonly rowLocation?: UnknownLocation;
  readonly columnLocation?: UnknownLocation;
}

export interface ParameterEntryReport {
  readonly row: number;
  readonly analytic: number;
  readonly finiteDifference: number;
  readonly relativeError: number;
  readonly rowLocation?: UnknownLocation;
}

export interface ParameterReport {
  readonly name: string;
  readonly passed: boolean;
  readonly maxRelativeError: number;
  readonly worst: readonly ParameterEntryReport[];
}

export interface SecondOrderReport {
  readonly what: string;
  readonly relativeError: number;
  readonly passed: boolean;
}

export interface JacobianCheckReport {
  readonly model: string;
  readonly passed: boolean;
  readonly tolerance: number;
  readonly size: number;
  readonly storedEntries: number;
  /** Column groups used for the coloured differences. */
  readonly groups: number;
  /** Rows checked as group sums (many-entry rows). */
  readonly denseRows: number;
  /** Residual evaluations used in all. */
  readonly residualEvaluations: number;
  readonly jacobian: {
    readonly passed: boolean;
    readonly maxRelativeError: number;
    /** Worst entries compared (stored entries, failing or not, and any failing missing entries). */
    readonly worst: readonly EntryReport[];
    /** Entries that fail the tolerance (stored or missing), worst first (at most `worst`·10). */
    readonly failures: readonly EntryReport[];
    readonly failureCount: number;
    /** Entries the pattern lacks but the differences find (non-negligible). */
    readonly missingCount: number;
    /** Rows whose mismatch could not be pinned to a column within the bisection budget. */
    readonly unresolvedRows: readonly number[];
  };
  readonly parameters: readonly ParameterReport[];
  readonly secondOrder: readonly SecondOrderReport[];
}

/** A small deterministic generator (for the random directions of the second-order checks). */
function lcg(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return s / 4294967296;
  };
}

interface Csr {
  rowPtr: Int32Array;
  col: Int32Array;
  pos: Int32Array; // position in the CSC value array
}

function toCsr(n: number, colPtr: Int32Array, rowIdx: Int32Array): Csr {
  const nz = colPtr[n];
  const rowPtr = new Int32Array(n + 1);
  for (let k = 0; k < nz; k++) rowPtr[rowIdx[k] + 1]++;
  for (let i = 0; i < n; i++) rowPtr[i + 1] += rowPtr[i];
  const next = rowPtr.slice(0, n);
  const col = new Int32Array(nz);
  const pos = new Int32Array(nz);
  for (let j = 0; j < n; j++) {
    for (let k = colPtr[j]; k < colPtr[j + 1]; k++) {
      const q = next[rowIdx[k]]++;
      col[q] = j;
      pos[q] = k;
    }
  }
  return { rowPtr, col, pos };
}

/**
 * Greedy column colouring: columns sharing a row (other than the excluded dense rows) get
 * different colours. Returns colour per column and the number of colours.
 */
export function colourColumns(n: number, colPtr: Int32Array, rowIdx: Int32Array, csr: Csr, dense: Uint8Array): { colour: Int32Array; count: number } {
  const colour = new Int32Array(n).fill(-1);
  const stamp = new Int32Array(n + 1).fill(-1);
  let count = 0;
  for (let j = 0; j < n; j++) {
    for (let k = colPtr[j]; k < colPtr[j + 1]; k++) {
      const i = rowIdx[k];
      if (dense[i]) continue;
      for (let q = csr.rowPtr[i]; q < csr.rowPtr[i + 1]; q++) {
        const c = colour[csr.col[q]];
        if (c >= 0) stamp[c] = j;
      }
    }
    let c = 0;
    while (stamp[c] === j) c++;
    colour[j] = c;
    if (c + 1 > count) count = c + 1;
  }
  return { colour, count };
}

/**
 * Shape checks of the Problem contract; throws a one-line Error naming the first violation.
 * Useful on models written in code before anything else runs.
 */
export function checkContract(problem: Problem, p: Params = resolveParameters(problem)): void {
  const m = `model '${problem.model}'`;
  const n = problem.size;
  if (!Number.isInteger(n) || n < 1) throw new Error(`${m}: size must be a positive integer, got ${n}`);
  if (problem.gridUnknowns + problem.extraUnknowns.length !== n) {
    throw new Error(`${m}: gridUnknowns (${problem.gridUnknowns}) + extra unknowns (${problem.extraUnknowns.length}) must equal size (${n})`);
  }
  if (problem.weights.length !== n) throw new Error(`${m}: weights has length ${problem.weights.length}, expected size ${n}`);
  for (let i = 0; i < n; i++) {
    if (!(problem.weights[i] > 0)) throw new Error(`${m}: weight ${i} is ${problem.weights[i]}, weights must be positive`);
  }
  if (problem.massDiagonal && problem.massDiagonal.length !== n) {
    throw new Error(`${m}: massDiagonal has length ${problem.massDiagonal.length}, expected size ${n}`);
  }
  const pat = problem.pattern();
  if (pat.rows !== n || pat.cols !== n) throw new Error(`${m}: pattern is ${pat.rows}x${pat.cols}, expected ${n}x${n}`);
  try {
    validatePattern(pat);
  } catch (e) {
    throw new Error(`${m}: invalid pattern: ${(e as Error).message}`);
  }
  if (problem.pattern() !== pat) throw new Error(`${m}: pattern() must return the same object on every call`);
  const u = problem.initialGuess(p);
  if (u.length !== n) throw new Error(`${m}: initialGuess has length ${u.length}, expected size ${n}`);
  const f = new Float64Array(n);
  problem.residual(u, p, f);
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(f[i])) throw new Error(`${m}: residual entry ${i} is ${f[i]} at the initial guess`);
  }
}

export function checkJacobian(problem: Problem, options: JacobianCheckOptions = {}): JacobianCheckReport {
  const n = problem.size;
  const tol = options.tolerance ?? 1e-6;
  const nWorst = options.worst ?? 10;
  const budget = options.maxBisectionEvaluations ?? 4000;
  const p = options.parameters ?? resolveParameters(problem);
  const delta = centralDifferenceStep;
  const locate = problem.locateUnknown ? (i: number) => problem.locateUnknown!(i) : undefined;
  checkContract(problem, p);

  let u: Float64Array;
  if (options.state) {
    if (options.state.length !== n) throw new Error(`check: state has length ${options.state.length}, model '${problem.model}' has ${n} unknowns`);
    u = options.state.slice();
  } else {
    u = problem.initialGuess(p);
    const rnd = lcg(12345);
    for (let i = 0; i < n; i++) u[i] += 0.1 * (rnd() - 0.5) * Math.max(1, Math.abs(u[i]));
  }

  const pat = problem.pattern();
  if (pat.rows !== n || pat.cols !== n) throw new Error(`check: pattern is ${pat.rows}x${pat.cols}, model '${problem.model}' has ${n} unknowns`);
  const { colPtr, rowIdx } = pat;
  const nz = colPtr[n];
  const A = new Float64Array(nz);
  problem.jacobian(u, p, A);
  const F0 = new Float64Array(n);
  problem.residual(u, p, F0);
  let evaluations = 1;

  const h = new Float64Array(n);
  for (let j = 0; j < n; j++) h[j] = delta * Math.max(Math.abs(u[j]), 1);
  const csr = toCsr(n, colPtr, rowIdx);

  // row magnitudes and floors
  const floor = new Float64Array(n);
  let maxMag = 0;
  for (let i = 0; i < n; i++) {
    let m = Math.abs(F0[i]);
    for (let q = csr.rowPtr[i]; q < csr.rowPtr[i + 1]; q++) m += Math.abs(A[csr.pos[q]]) * Math.max(Math.abs(u[csr.col[q]]), 1);
    floor[i] = m;
    if (m > maxMag) maxMag = m;
  }
  for (let i = 0; i < n; i++) floor[i] = 1e-3 * delta * Math.max(floor[i], 1e-12 * maxMag, 1e-300);

  // dense rows and colouring
  const avg = nz / Math.max(n, 1);
  const threshold = Math.max(64, 10 * Math.ceil(avg));
  const dense = new Uint8Array(n);
  let denseCount = 0;
  for (let i = 0; i < n; i++) {
    if (csr.rowPtr[i + 1] - csr.rowPtr[i] > threshold) {
      dense[i] = 1;
      denseCount++;
    }
  }
  const { colour, count } = colourColumns(n, colPtr, rowIdx, csr, dense);
  const groups: number[][] = Array.from({ length: count }, () => []);
  for (let j = 0; j < n; j++) groups[colour[j]].push(j);

  const w = new Float64Array(n);
  const fp = new Float64Array(n);
  const fm = new Float64Array(n);
  const diff = new Float64Array(n);
  const sums = new Float64Array(n);
  const owner = new Int32Array(n).fill(-1);

  const relErr = (a: number, d: number, fl: number): number => {
    const den = Math.max(Math.abs(a), Math.abs(d), fl);
    return den === 0 ? 0 : Math.abs(a - d) / den;
  };

  /** diff = (F(u + Σ_S h e) − F(u − Σ_S h e))/2 ; sums = Σ_S J h (analytic). */
  const evaluate = (S: readonly number[]): void => {
    w.set(u);
    for (const j of S) w[j] = u[j] + h[j];
    problem.residual(w, p, fp);
    for (const j of S) w[j] = u[j] - h[j];
    problem.residual(w, p, fm);
    evaluations += 2;
    for (let i = 0; i < n; i++) diff[i] = 0.5 * (fp[i] - fm[i]);
    sums.fill(0);
    for (const j of S) for (let k = colPtr[j]; k < colPtr[j + 1]; k++) sums[rowIdx[k]] += A[k] * h[j];
  };

  const entryAt = (i: number, j: number): number => {
    for (let q = csr.rowPtr[i]; q < csr.rowPtr[i + 1]; q++) if (csr.col[q] === j) return csr.pos[q];
    return -1;
  };

  const compared: EntryReport[] = [];
  const failures: EntryReport[] = [];
  let failureCount = 0;
  let missingCount = 0;
  let maxErr = 0;
  let bisectionPairs = 0;
  const unresolved = new Set<number>();
  const makeEntry = (i: number, j: number, a: number, fd: number, e: number, inPattern: boolean): EntryReport => ({
    row: i,
    column: j,
    analytic: a,
    finiteDifference: fd,
    relativeError: e,
    inPattern,
    ...(locate ? { rowLocation: locate(i), columnLocation: locate(j) } : {}),
  });
  const keepWorst = (list: EntryReport[], e: EntryReport, cap: number): void => {
    if (list.length < cap) {
      list.push(e);
      list.sort((a, b) => b.relativeError - a.relativeError);
    } else if (e.relativeError > list[list.length - 1].relativeError) {
      list[list.length - 1] = e;
      list.sort((a, b) => b.relativeError - a.relativeError);
    }
  };

  const bisect = (S: number[], rows: number[]): void => {
    if (S.length === 1) {
      const j = S[0];
      for (const i of rows) {
        const k = entryAt(i, j);
        const a = k >= 0 ? A[k] : 0;
        // rows were found to disagree with S = {j} just before this call
        const fd = diff[i] / h[j];
        const e = relErr(a * h[j], diff[i], floor[i]);
        if (e > maxErr) maxErr = e;
        if (e > tol) {
          failureCount++;
          if (k < 0) missingCount++;
          keepWorst(failures, makeEntry(i, j, a, fd, e, k >= 0), nWorst * 10);
        }
      }
      return;
    }
    const halves = [S.slice(0, S.length >> 1), S.slice(S.length >> 1)];
    for (const half of halves) {
      if (bisectionPairs >= budget) {
        for (const i of rows) unresolved.add(i);
        return;
      }
      bisectionPairs++;
      evaluate(half);
      const bad = rows.filter((i) => relErr(sums[i], diff[i], floor[i]) > tol);
      if (bad.length) bisect(half, bad);
    }
  };

  for (let g = 0; g < count; g++) {
    const G = groups[g];
    evaluate(G);
    // owners (the stored entry of each sparse row within the group)
    for (const j of G) for (let k = colPtr[j]; k < colPtr[j + 1]; k++) if (!dense[rowIdx[k]]) owner[rowIdx[k]] = j;
    const bad: number[] = [];
    for (let i = 0; i < n; i++) {
      const e = relErr(sums[i], diff[i], floor[i]);
      const j = owner[i];
      if (j >= 0) {
        // a single stored entry: this is its check when it passes
        if (e <= tol) {
          if (e > maxErr) maxErr = e;
          const k = entryAt(i, j);
          keepWorst(compared, makeEntry(i, j, A[k], diff[i] / h[j], e, true), nWorst);
        }
      } else if (e <= tol && e > maxErr) {
        maxErr = e;
      }
      if (e > tol) bad.push(i);
    }
    for (const j of G) for (let k = colPtr[j]; k < colPtr[j + 1]; k++) owner[rowIdx[k]] = -1;
    if (bad.length) {
      // with one column the differences just computed already name it; otherwise split
      bisect(G, bad);
    }
  }
  for (const f of failures) keepWorst(compared, f, nWorst);
  for (const i of unresolved) {
    maxErr = Math.max(maxErr, 1);
  }
  const jacobianPassed = failureCount === 0 && unresolved.size === 0;

  // parameter derivatives
  const names = options.parameterNames ?? problem.parameters.map((s) => s.name);
  const paramReports: ParameterReport[] = [];
  const an = new Float64Array(n);
  for (const name of names) {
    if (p[name] === undefined) throw new Error(`check: unknown parameter '${name}' for model '${problem.model}'`);
    problem.parameterDerivative(u, p, name, an);
    const hp = delta * Math.max(Math.abs(p[name]), 1);
    problem.residual(u, { ...p, [name]: p[name] + hp }, fp);
    problem.residual(u, { ...p, [name]: p[name] - hp }, fm);
    evaluations += 2;
    let worstList: ParameterEntryReport[] = [];
    let maxE = 0;
    for (let i = 0; i < n; i++) {
      const d = 0.5 * (fp[i] - fm[i]);
      const e = relErr(an[i] * hp, d, floor[i]);
      if (e > maxE) maxE = e;
      const entry: ParameterEntryReport = { row: i, analytic: an[i], finiteDifference: d / hp, relativeError: e, ...(locate ? { rowLocation: locate(i) } : {}) };
      if (worstList.length < nWorst || e > worstList[worstList.length - 1].relativeError) {
        worstList.push(entry);
        worstList.sort((a, b) => b.relativeError - a.relativeError);
        if (worstList.length > nWorst) worstList = worstList.slice(0, nWorst);
      }
    }
    paramReports.push({ name, passed: maxE <= tol, maxRelativeError: maxE, worst: worstList });
  }

  // exact second-order derivatives, when supplied
  const second: SecondOrderReport[] = [];
  if (options.secondOrder !== false && (problem.secondDerivative || problem.mixedDerivative)) {
    const rnd = lcg(777);
    const a = Float64Array.from({ length: n }, () => rnd() - 0.5);
    const b = Float64Array.from({ length: n }, () => rnd() - 0.5);
    const ex = new Float64Array(n);
    const ap = new Float64Array(n);
    // relative error in the ∞-norm over all rows (linear parts of F cancel exactly in the
    // differences, so the vectors compare at their own scale); both zero counts as agreement
    const tiny = 1e-10 * maxMag;
    const cmp = (x: Float64Array, y: Float64Array): number => {
      let d = 0;
      let s = 0;
      for (let i = 0; i < n; i++) {
        d = Math.max(d, Math.abs(x[i] - y[i]));
        s = Math.max(s, Math.abs(x[i]), Math.abs(y[i]));
      }
      const den = Math.max(s, tiny);
      return den === 0 ? 0 : d / den;
    };
    if (problem.secondDerivative) {
      problem.secondDerivative(u, p, a, b, ex);
      fourthOrderSecond(problem, u, p, a, b, ap);
      evaluations += 4;
      const e = cmp(ex, ap);
      second.push({ what: 'second derivative F_uu[a, b]', relativeError: e, passed: e <= tol });
    }
    if (problem.mixedDerivative) {
      for (const name of names) {
        problem.mixedDerivative(u, p, name, a, ex);
        fourthOrderMixed(problem, u, p, name, a, ap);
        const e = cmp(ex, ap);
        second.push({ what: `mixed derivative F_u${name}[a]`, relativeError: e, passed: e <= tol });
      }
    }
  }

  const passed = jacobianPassed && paramReports.every((r) => r.passed) && second.every((s) => s.passed);
  return {
    model: problem.model,
    passed,
    tolerance: tol,
    size: n,
    storedEntries: nz,
    groups: count,
    denseRows: denseCount,
    residualEvaluations: evaluations,
    jacobian: {
      passed: jacobianPassed,
      maxRelativeError: maxErr,
      worst: compared,
      failures,
      failureCount,
      missingCount,
      unresolvedRows: [...unresolved].sort((x, y) => x - y).slice(0, 100),
    },
    parameters: paramReports,
    secondOrder: second,
  };
}

/**
 * Fourth-order central differences along a, used as the reference for exact second derivatives:
 * f'(0) ≈ (−f(2ε) + 8f(ε) − 8f(−ε) + f(−2ε))/(12ε), ε = ε_mach^(1/5)·max(1, ‖u‖∞)/‖a‖∞. The larger step
 * keeps rounding small where a Jacobian value mixes large linear and small nonlinear parts.
 */
function fourthOrderStep(u: Float64Array, a: Float64Array): number {
  let nu = 1;
  let na = 0;
  for (let i = 0; i < u.length; i++) {
    nu = Math.max(nu, Math.abs(u[i]));
    na = Math.max(na, Math.abs(a[i]));
  }
  return na === 0 ? 0 : (Math.pow(Number.EPSILON, 0.2) * nu) / na;
}

function fourthOrderSecond(problem: Problem, u: Float64Array, p: Params, a: Float64Array, b: Float64Array, out: Float64Array): void {
  const n = problem.size;
  const pat = problem.pattern();
  const nz = pat.colPtr[n];
  const v = new Float64Array(nz);
  const acc = new Float64Array(nz);
  const w = new Float64Array(n);
  const eps = fourthOrderStep(u, a);
  out.fill(0);
  if (eps === 0) return;
  for (const [k, c] of [[2, -1], [1, 8], [-1, -8], [-2, 1]] as const) {
    for (let i = 0; i < n; i++) w[i] = u[i] + k * eps * a[i];
    problem.jacobian(w, p, v);
    for (let q = 0; q < nz; q++) acc[q] += c * v[q];
  }
  for (let j = 0; j < n; j++) {
    for (let q = pat.colPtr[j]; q < pat.colPtr[j + 1]; q++) out[pat.rowIdx[q]] += (acc[q] / (12 * eps)) * b[j];
  }
}

function fourthOrderMixed(problem: Problem, u: Float64Array, p: Params, name: string, a: Float64Array, out: Float64Array): void {
  const n = problem.size;
  const v = new Float64Array(n);
  const w = new Float64Array(n);
  const eps = fourthOrderStep(u, a);
  out.fill(0);
  if (eps === 0) return;
  for (const [k, c] of [[2, -1], [1, 8], [-1, -8], [-2, 1]] as const) {
    for (let i = 0; i < n; i++) w[i] = u[i] + k * eps * a[i];
    problem.parameterDerivative(w, p, name, v);
    for (let i = 0; i < n; i++) out[i] += (c * v[i]) / (12 * eps);
  }
}

function where(loc: UnknownLocation | undefined): string {
  if (!loc) return '';
  return loc.kind === 'extra' ? ` (${loc.name})` : ` (${loc.field} at node ${loc.node.join(', ')})`;
}

/** A few human-readable lines summarising a report (for the command line). */
export function summariseCheck(r: JacobianCheckReport): string[] {
  const lines: string[] = [];
  lines.push(
    `${r.model}: ${r.passed ? 'passed' : 'FAILED'} — ${r.size} unknowns, ${r.storedEntries} stored entries, ${r.groups} column groups, ${r.residualEvaluations} residual evaluations, tolerance ${r.tolerance}`,
  );
  lines.push(`jacobian: largest relative error ${r.jacobian.maxRelativeError.toExponential(2)}${r.jacobian.passed ? '' : `, ${r.jacobian.failureCount} failing entries (${r.jacobian.missingCount} missing from the pattern)`}`);
  for (const e of r.jacobian.failures.slice(0, 10)) {
    lines.push(
      `  row ${e.row}${where(e.rowLocation)}, column ${e.column}${where(e.columnLocation)}: analytic ${e.analytic.toPrecision(8)}, finite difference ${e.finiteDifference.toPrecision(8)}, relative error ${e.relativeError.toExponential(2)}${e.inPattern ? '' : ' — not in the pattern'}`,
    );
  }
  if (r.jacobian.unresolvedRows.length) lines.push(`  rows not resolved within the budget: ${r.jacobian.unresolvedRows.slice(0, 10).join(', ')}`);
  for (const pr of r.parameters) {
    lines.push(`parameter ${pr.name}: ${pr.passed ? 'passed' : 'FAILED'}, largest relative error ${pr.maxRelativeError.toExponential(2)}`);
    if (!pr.passed) {
      for (const e of pr.worst.slice(0, 5)) {
        lines.push(`  row ${e.row}${where(e.rowLocation)}: analytic ${e.analytic.toPrecision(8)}, finite difference ${e.finiteDifference.toPrecision(8)}, relative error ${e.relativeError.toExponential(2)}`);
      }
    }
  }
  for (const s of r.secondOrder) lines.push(`${s.what}: ${s.passed ? 'passed' : 'FAILED'}, relative error ${s.relativeError.toExponential(2)}`);
  return lines;
}
