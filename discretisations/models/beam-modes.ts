/**
 * The critical (lowest-load) buckling mode of the straight beam on a linear foundation, on the
 * discrete grid: the eigenvector of
 *
 *     (EI D4 + kf) φ = P (−D2) φ
 *
 * with the smallest load P (D4, D2 the discrete fourth and second derivatives on the interior
 * unknowns with the end conditions built in). `beam-foundation` uses it as the shape of its
 * stress-free imperfection.
 *
 *   pinned ends: D4 = D2² exactly, so the modes are sin(nπx/L) at the nodes with loads
 *     P_n = EI μ_n + kf/μ_n, μ_n = (4/h²) sin²(nπh/(2L)) (Timoshenko & Gere); the critical n
 *     is the one with the smallest P_n (the lower n on a tie);
 *   clamped ends: inverse iteration φ ← (EI D4 + kf)⁻¹(−D2) φ (a banded Cholesky factor, the
 *     matrix being symmetric positive definite), which converges to the smallest load's mode.
 *
 * Normalisation: largest |φ_i| = 1, and positive correlation with sin(nπx/L) for its number of
 * half-waves n (so the first half-wave from x = 0 bulges upwards): the sign stays put as EI
 * and kf move.
 */
import type { LinearOperator } from '../operator.js';

export type BeamEndKind = 'pinned' | 'clamped';

/** Discrete −d²/dx² eigenvalue of mode n on N intervals of length L (Dirichlet ends). */
export function secondDifferenceEigenvalue(n: number, N: number, L: number): number {
  const h = L / N;
  return (4 / (h * h)) * Math.sin((n * Math.PI * h) / (2 * L)) ** 2;
}

/** The pinned beam's critical mode number: argmin over n of EI μ_n + kf / μ_n (lower n on ties). */
export function pinnedCriticalMode(N: number, L: number, EI: number, kf: number): number {
  let best = 1;
  let load = Infinity;
  for (let k = 1; k < N; k++) {
    const mu = secondDifferenceEigenvalue(k, N, L);
    const P = EI * mu + kf / mu;
    if (P < load * (1 - 1e-13)) {
      load = P;
      best = k;
    }
  }
  return best;
}

/** Normalise in place: max |φ| = 1, positive correlation with sin(nπ i/N), n = sign changes + 1. */
export function normaliseMode(phi: Float64Array, N: number): void {
  let changes = 0;
  let last = 0;
  let big = 0;
  for (const x of phi) big = Math.max(big, Math.abs(x));
  for (const x of phi) {
    if (Math.abs(x) < 1e-9 * big) continue;
    if (last !== 0 && Math.sign(x) !== last) changes++;
    last = Math.sign(x);
  }
  const n = changes + 1;
  let corr = 0;
  for (let i = 0; i < phi.length; i++) corr += phi[i] * Math.sin((n * Math.PI * (i + 1)) / N);
  const s = (corr < 0 ? -1 : 1) / big;
  for (let i = 0; i < phi.length; i++) phi[i] *= s;
}

/** Row-major band of a symmetric operator combination a·A + b·I (lower part, bandwidth p). */
function bandCholesky(op: LinearOperator, n: number, scale: number, shift: number, p: number): Float64Array {
  // L stored as n × (p + 1): L[i][p − (i − j)] for j = i − p .. i
  const w = p + 1;
  const A = new Float64Array(n * w);
  for (let i = 0; i < n; i++) {
    for (let k = op.rowPtr[i]; k < op.rowPtr[i + 1]; k++) {
      const j = op.col[k];
      if (j > i || i - j > p) continue;
      A[i * w + p - (i - j)] += scale * op.coef[k];
    }
    A[i * w + p] += shift;
  }
  for (let i = 0; i < n; i++) {
    for (let j = Math.max(0, i - p); j <= i; j++) {
      let s = A[i * w + p - (i - j)];
      for (let k = Math.max(0, i - p); k < j; k++) s -= A[i * w + p - (i - k)] * A[j * w + p - (j - k)];
      if (i === j) {
        if (!(s > 0)) throw new Error('the beam operator EI·D4 + kf is not positive definite (EI must be positive)');
        A[i * w + p] = Math.sqrt(s);
      } else {
        A[i * w + p - (i - j)] = s / A[j * w + p];
      }
    }
  }
  return A;
}

function bandSolve(Lb: Float64Array, n: number, p: number, b: Float64Array): void {
  const w = p + 1;
  for (let i = 0; i < n; i++) {
    let s = b[i];
    for (let k = Math.max(0, i - p); k < i; k++) s -= Lb[i * w + p - (i - k)] * b[k];
    b[i] = s / Lb[i * w + p];
  }
  for (let i = n - 1; i >= 0; i--) {
    let s = b[i];
    for (let k = i + 1; k <= Math.min(n - 1, i + p); k++) s -= Lb[k * w + p - (k - i)] * b[k];
    b[i] = s / Lb[i * w + p];
  }
}

/**
 * The critical mode of the clamped beam by inverse iteration (from `start`, or from the sines
 * whose pinned loads are lowest), until the normalised vector moves by less than 1e-14.
 */
export function clampedCriticalMode(d4: LinearOperator, d2: LinearOperator, n: number, N: number, EI: number, kf: number, start?: Float64Array): Float64Array {
  const Lb = bandCholesky(d4, n, EI, kf, 2);
  const applyB = (x: Float64Array, out: Float64Array): void => {
    for (let i = 0; i < n; i++) {
      let s = 0;
      for (let k = d2.rowPtr[i]; k < d2.rowPtr[i + 1]; k++) s -= d2.coef[k] * x[d2.col[k]];
      out[i] = s;
    }
  };
  let x = start?.slice();
  if (!x) {
    // a smooth start with every low mode in it
    x = new Float64Array(n);
    for (let k = 1; k <= Math.min(N - 1, 12); k++) for (let i = 0; i < n; i++) x[i] += Math.sin((k * Math.PI * (i + 1)) / N) / k;
  }
  const bx = new Float64Array(n);
  let norm0 = 0;
  for (let i = 0; i < n; i++) norm0 = Math.max(norm0, Math.abs(x[i]));
  for (let i = 0; i < n; i++) x[i] /= norm0;
  // A⁻¹B has positive eigenvalues: no sign flips; stop when the normalised vector stops moving
  for (let it = 0; it < 20000; it++) {
    applyB(x, bx);
    bandSolve(Lb, n, 2, bx);
    let norm = 0;
    for (let i = 0; i < n; i++) norm = Math.max(norm, Math.abs(bx[i]));
    let change = 0;
    for (let i = 0; i < n; i++) {
      const v = bx[i] / norm;
      change = Math.max(change, Math.abs(v - x[i]));
      x[i] = v;
    }
    if (change <= 1e-14) break;
  }
  normaliseMode(x, N);
  return x;
}

/**
 * The critical mode shape φ (interior unknowns, max |φ| = 1) and its derivatives in EI and kf
 * (zero for pinned ends, where the shape changes only by jumps between modes; central
 * differences for clamped ends), cached for the last (EI, kf).
 */
export class CriticalMode {
  private key = '';
  private phi: Float64Array = new Float64Array(0);
  private dEI: Float64Array = new Float64Array(0);
  private dkf: Float64Array = new Float64Array(0);
  private hasDerivatives = false;

  constructor(
    private readonly ends: BeamEndKind,
    private readonly d4: LinearOperator,
    private readonly d2: LinearOperator,
    private readonly n: number,
    private readonly N: number,
    private readonly L: number,
  ) {}

  private compute(EI: number, kf: number, start?: Float64Array): Float64Array {
    if (this.ends === 'pinned') {
      const k = pinnedCriticalMode(this.N, this.L, EI, kf);
      const phi = new Float64Array(this.n);
      for (let i = 0; i < this.n; i++) phi[i] = Math.sin((k * Math.PI * (i + 1)) / this.N);
      normaliseMode(phi, this.N);
      return phi;
    }
    return clampedCriticalMode(this.d4, this.d2, this.n, this.N, EI, kf, start);
  }

  shape(EI: number, kf: number): Float64Array {
    const key = `${EI}:${kf}`;
    if (key !== this.key) {
      this.phi = this.compute(EI, kf, this.phi.length ? this.phi : undefined);
      this.key = key;
      this.hasDerivatives = false;
    }
    return this.phi;
  }

  /** ∂φ/∂EI and ∂φ/∂kf at (EI, kf). */
  derivatives(EI: number, kf: number): { EI: Float64Array; kf: Float64Array } {
    const phi = this.shape(EI, kf);
    if (!this.hasDerivatives) {
      if (this.ends === 'pinned') {
        this.dEI = new Float64Array(this.n);
        this.dkf = new Float64Array(this.n);
      } else {
        const diff = (f: (s: number) => Float64Array, h: number): Float64Array => {
          const a = f(h);
          const b = f(-h);
          const out = new Float64Array(this.n);
          for (let i = 0; i < this.n; i++) out[i] = (a[i] - b[i]) / (2 * h);
          return out;
        };
        const hE = 1e-5 * Math.max(1, Math.abs(EI));
        const hk = 1e-5 * Math.max(1, Math.abs(kf));
        this.dEI = diff((s) => this.compute(EI + s, kf, phi), hE);
        this.dkf = diff((s) => this.compute(EI, kf + s, phi), hk);
      }
      this.hasDerivatives = true;
    }
    return { EI: this.dEI, kf: this.dkf };
  }
}
