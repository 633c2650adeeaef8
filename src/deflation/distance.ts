/**
 * The distance between two states of a Problem, in the root-mean-square sense
 *
 *     d(u, r) = √( Σ_i w_i (u_i − r_i)² / Σ_grid w_i )
 *
 * (w the problem's quadrature weights, the sum under the root over every unknown, extras with
 * their weight 1; divided by the domain's measure so that d means the same on every grid and
 * every domain size), and on domains with periodic axes the distance modulo translation:
 *
 *     d_T(u, r) = min over shifts c of d(u, T_c r),
 *
 * T_c r the copy of r shifted by c (a real number of nodes per periodic axis) by trigonometric
 * interpolation along the periodic axes: T_c r = Re F⁻¹[ r̂_k e^{−2πi k·c/N} ]. A pattern on a
 * periodic grid and its shifted copies are one state; shifts by whole nodes are exact symmetries
 * of the discrete problem, and shifts in between are what Newton's method reaches along the
 * (nearly) neutral translation mode.
 *
 * The best shift: the weighted cross-correlation C(c) = Σ w u·T_c r is evaluated at every whole
 * shift at once by FFT (C(s) = Re F[conj(û) r̂](s) / N), and its three largest peaks are refined to a
 * fraction of a node by Newton's method on d(u, T_c r)² written in Fourier space (analytic first
 * and second derivatives; on axes of even length the Nyquist mode makes ‖T_c r‖ depend on c, which
 * is accounted for). Since the best shift minimises the distance, the gradient of d_T with
 * respect to u is that of d(u, T_c r) at that shift (the envelope theorem), which is what
 * deflation needs (./deflation.ts).
 *
 * Periodic axes are recognised from the problem's description: a periodic axis has as many nodes
 * as intervals (see AxisDescription). Everything works on node arrays (toNodeArray /
 * fromNodeArray), so any model with periodic axes is served, built-in, expression or code.
 */
import { fftAxes, signedWavenumber } from '../linalg/fft.js';
import type { Params, Problem } from '../problem/problem.js';

/** A state prepared for distance measurements: its vector and, with periodic axes, its transform. */
export interface StateReference {
  readonly u: Float64Array;
  /** The transform of its node array along the periodic axes (with periodic axes only). */
  readonly re?: Float64Array;
  readonly im?: Float64Array;
  /** Σ ω r̂_k r̂_{−k} per periodic mode (periodic axes of even length only): how ‖T_c r‖ varies with c. */
  readonly sre?: Float64Array;
  readonly sim?: Float64Array;
}

/** A state being measured against several references (its transform computed once). */
export interface Probe {
  readonly u: Float64Array;
  readonly re?: Float64Array;
  readonly im?: Float64Array;
}

export interface Nearest {
  /** The root-mean-square distance (modulo translation when periodic axes are measured so). */
  distance: number;
  /** The shift of the reference, in nodes per periodic axis (x first); empty without translation. */
  shift: number[];
  /** The nearest copy of the reference (the reference itself without translation): a full state vector. */
  copy: Float64Array;
}

/** Periodic axes of a problem (indices into describe().axes, x = 0), from their node counts. */
export function periodicAxes(problem: Problem): number[] {
  return problem
    .describe()
    .axes.map((a, i) => (a.nodes === a.intervals ? i : -1))
    .filter((i) => i >= 0);
}

export class StateDistance {
  /** Whether distances are taken modulo translation (the problem has periodic axes and it was asked for). */
  readonly translation: boolean;
  /** Periodic axes measured modulo translation (indices into describe().axes). */
  readonly axes: readonly number[];
  private readonly n: number;
  private readonly weightSum: number;
  private readonly shape: number[] = [];
  /** The periodic axes as indices into the node array's shape (fields first, x last). */
  private readonly arrayAxes: number[] = [];
  /** Node counts of the periodic axes, x first. */
  private readonly lengths: number[] = [];
  /** Weights on the node array (zero on boundary nodes that are not unknowns). */
  private nodeWeights = new Float64Array(0);
  /** Flat index of the periodic part of every node-array index. */
  private periodicIndex = new Int32Array(0);
  private periodicSize = 1;
  /** Signed wavenumbers per periodic mode, x first: waves[a][m]. */
  private waves: Float64Array[] = [];
  /** Per node-array index, the index of the same node with the periodic wavenumbers negated. */
  private negated = new Int32Array(0);
  /** Whether any periodic axis has an even length (a Nyquist mode, whose shifted copies change norm). */
  private nyquist = false;
  /** The periodic modes at the Nyquist wavenumber of some axis, and per axis (x first) whether they are at it there. */
  private nyquistModes = new Int32Array(0);
  private nyquistAxes: Uint8Array[] = [];
  /** −2π k_a / N_a per periodic mode and axis (x first): the phase of a shift by c_a nodes is Σ_a omega[a][q]·c_a. */
  private omega: Float64Array[] = [];

  constructor(
    readonly problem: Problem,
    readonly params: Params,
    options: { translation: boolean },
  ) {
    this.n = problem.size;
    let s = 0;
    for (let i = 0; i < problem.gridUnknowns; i++) s += problem.weights[i];
    this.weightSum = s > 0 ? s : 1;
    const periodic = options.translation ? periodicAxes(problem) : [];
    this.translation = periodic.length > 0;
    this.axes = periodic;
    if (!this.translation) return;
    const zero = problem.toNodeArray(new Float64Array(this.n), params);
    const weighted = problem.toNodeArray(problem.weights, params);
    this.shape = zero.shape.slice();
    this.nodeWeights = new Float64Array(zero.data.length);
    for (let k = 0; k < zero.data.length; k++) this.nodeWeights[k] = weighted.data[k] - zero.data[k];
    const dim = this.shape.length - 1;
    // axis a (x = 0) is array dimension dim − a (x varies fastest)
    for (const a of periodic) {
      this.arrayAxes.push(dim - a);
      this.lengths.push(this.shape[dim - a]);
    }
    // flat index over the periodic dimensions (in array order) of every node-array index
    const total = zero.data.length;
    const strides = this.shape.map((_, d) => this.shape.slice(d + 1).reduce((x, y) => x * y, 1));
    const order = this.arrayAxes.slice().sort((x, y) => x - y);
    this.periodicSize = order.reduce((x, d) => x * this.shape[d], 1);
    this.periodicIndex = new Int32Array(total);
    for (let k = 0; k < total; k++) {
      let q = 0;
      for (const d of order) q = q * this.shape[d] + (Math.floor(k / strides[d]) % this.shape[d]);
      this.periodicIndex[k] = q;
    }
    // wavenumbers of every periodic mode along each periodic axis (x first)
    this.waves = this.arrayAxes.map((d) => {
      const out = new Float64Array(this.periodicSize);
      let stride = 1;
      for (const e of order) if (e > d) stride *= this.shape[e];
      const len = this.shape[d];
      for (let q = 0; q < this.periodicSize; q++) out[q] = signedWavenumber(Math.floor(q / stride) % len, len);
      return out;
    });
    this.nyquist = this.lengths.some((len) => len % 2 === 0);
    this.omega = this.lengths.map((len, a) => this.waves[a].map((k) => (-2 * Math.PI * k) / len));
    const modes: number[] = [];
    for (let q = 0; q < this.periodicSize; q++) if (this.lengths.some((len, a) => len % 2 === 0 && this.waves[a][q] === len / 2)) modes.push(q);
    this.nyquistModes = Int32Array.from(modes);
    this.nyquistAxes = this.lengths.map((len, a) => Uint8Array.from(modes, (q) => (len % 2 === 0 && this.waves[a][q] === len / 2 ? 1 : 0)));
    this.negated = new Int32Array(total);
    for (let k = 0; k < total; k++) {
      let target = k;
      for (const d of this.arrayAxes) {
        const i = Math.floor(k / strides[d]) % this.shape[d];
        target += (((this.shape[d] - i) % this.shape[d]) - i) * strides[d];
      }
      this.negated[k] = target;
    }
  }

  /** The periodic-only shape (in array order) and its axes (for the FFT of correlations). */
  private periodicShape(): number[] {
    return this.arrayAxes
      .slice()
      .sort((x, y) => x - y)
      .map((d) => this.shape[d]);
  }

  /** Transform of a state's node array along the periodic axes (optionally weighted). */
  private transform(u: Float64Array, weighted: boolean): { re: Float64Array; im: Float64Array } {
    const { data } = this.problem.toNodeArray(u, this.params);
    const re = Float64Array.from(data);
    if (weighted) for (let k = 0; k < re.length; k++) re[k] *= this.nodeWeights[k];
    const im = new Float64Array(re.length);
    fftAxes(re, im, this.shape, this.arrayAxes);
    return { re, im };
  }

  /** Prepare a reference state (a copy of u is kept). */
  reference(u: Float64Array): StateReference {
    const copy = Float64Array.from(u);
    if (!this.translation) return { u: copy };
    const { re, im } = this.transform(copy, false);
    if (!this.nyquist) return { u: copy, re, im };
    // S_q = Σ ω r̂_k r̂_{−k} over the nodes k of periodic mode q: the part of ‖T_c r‖² that
    // depends on c (only modes at the Nyquist wavenumber of some axis contribute)
    const sre = new Float64Array(this.periodicSize);
    const sim = new Float64Array(this.periodicSize);
    for (let k = 0; k < re.length; k++) {
      const j = this.negated[k];
      const q = this.periodicIndex[k];
      const w = this.nodeWeights[k];
      sre[q] += w * (re[k] * re[j] - im[k] * im[j]);
      sim[q] += w * (re[k] * im[j] + im[k] * re[j]);
    }
    return { u: copy, re, im, sre, sim };
  }

  /** Prepare a state to be measured against references (u is not copied: do not change it meanwhile). */
  probe(u: Float64Array): Probe {
    if (!this.translation) return { u };
    return { u, ...this.transform(u, true) };
  }

  /** The plain root-mean-square distance d(u, r), no translation. */
  plain(u: Float64Array, r: Float64Array): number {
    const w = this.problem.weights;
    let s = 0;
    for (let i = 0; i < this.n; i++) {
      const e = u[i] - r[i];
      s += w[i] * e * e;
    }
    return Math.sqrt(s / this.weightSum);
  }

  /** Root-mean-square norm of a vector (the distance to zero). */
  norm(v: Float64Array): number {
    return this.plain(v, new Float64Array(this.n));
  }

  /** Sum of the grid unknowns' weights (the domain's measure in the discrete sense). */
  get measure(): number {
    return this.weightSum;
  }

  /** The nearest copy of `ref` to the probed state and the distance to it. */
  nearest(probe: Probe, ref: StateReference): Nearest {
    if (!this.translation || !probe.re || !ref.re) return { distance: this.plain(probe.u, ref.u), shift: [], copy: ref.u };
    const shift = this.bestShift(probe, ref);
    const copy = this.shifted(ref, shift);
    return { distance: this.plain(probe.u, copy), shift, copy };
  }

  /** Convenience: the distance of u from r (modulo translation when measured so). */
  distance(u: Float64Array, r: Float64Array): number {
    return this.nearest(this.probe(u), this.reference(r)).distance;
  }

  /** The shift c (nodes per periodic axis, x first) maximising the weighted correlation ⟨u, T_c r⟩. */
  private bestShift(probe: Probe, ref: StateReference): number[] {
    const m = this.periodicSize;
    // P_q = Σ over fields and the other axes of conj(û)·r̂
    const pre = new Float64Array(m);
    const pim = new Float64Array(m);
    const ur = probe.re!;
    const ui = probe.im!;
    const rr = ref.re!;
    const ri = ref.im!;
    for (let k = 0; k < ur.length; k++) {
      const q = this.periodicIndex[k];
      pre[q] += ur[k] * rr[k] + ui[k] * ri[k];
      pim[q] += ur[k] * ri[k] - ui[k] * rr[k];
    }
    // C at every whole shift: the forward transform of P (real part; the 1/N is immaterial here)
    const cre = pre.slice();
    const cim = pim.slice();
    const pshape = this.periodicShape();
    fftAxes(cre, cim, pshape, pshape.map((_, i) => i));
    // refine the three best whole shifts that are local maxima (their neighbours along every
    // periodic axis are lower): the correlation of rough states has several humps
    const order = this.arrayAxes.slice().sort((x, y) => x - y);
    const strides = order.map((d) => order.filter((e) => e > d).reduce((x, e) => x * this.shape[e], 1));
    const isPeak = (q: number): boolean =>
      order.every((d, i) => {
        const len = this.shape[d];
        if (len < 3) return true;
        const j = Math.floor(q / strides[i]) % len;
        const up = q + ((((j + 1) % len) - j) * strides[i]);
        const down = q + ((((j + len - 1) % len) - j) * strides[i]);
        return cre[q] >= cre[up] && cre[q] >= cre[down];
      });
    const candidates = Array.from({ length: m }, (_, q) => q)
      .filter(isPeak)
      .sort((a, b) => cre[b] - cre[a])
      .slice(0, 3);
    let best: { c: number[]; value: number } | undefined;
    for (const q of candidates) {
      // the whole-node shift of index q, per periodic axis (x first)
      const start = this.arrayAxes.map((d) => Math.floor(q / strides[order.indexOf(d)]) % this.shape[d]);
      const r = this.refineShift(pre, pim, ref, start);
      if (!best || r.value > best.value) best = r;
    }
    return best!.c;
  }

  /**
   * The part of −N·d(u, T_c r)²·|Ω| that depends on c, with its gradient and Hessian in c:
   *
   *     2 Re Σ_q P_q e^{iφ_q} − ½ Re Σ_q S_q e^{iψ_q},
   *
   * φ_q = −2π Σ_a k_a c_a / N_a the shift's phase of mode q, the first sum the correlation
   * ⟨u, T_c r⟩, the second how ‖T_c r‖² varies: T_c r = Re z with z the complex shifted copy,
   * ‖Re z‖² = ½‖z‖² + ½ Re Σ z², and Σ z² = (1/N) Σ_q ẑ_q ẑ_{−q} varies only through modes at
   * the Nyquist wavenumber of some axis (ψ_q = −2π Σ over those axes of c_a; elsewhere the phases
   * of q and −q cancel).
   */
  private correlation(pre: Float64Array, pim: Float64Array, ref: StateReference, c: readonly number[]): { value: number; g: Float64Array; H: Float64Array } {
    const na = c.length;
    const g = new Float64Array(na);
    const H = new Float64Array(na * na);
    const omega = this.omega;
    let value = 0;
    for (let q = 0; q < this.periodicSize; q++) {
      let phase = 0;
      for (let a = 0; a < na; a++) phase += omega[a][q] * c[a];
      const cs = Math.cos(phase);
      const sn = Math.sin(phase);
      // Re(P e^{iφ}) = pre cos − pim sin;  d/dφ: −pre sin − pim cos;  d²/dφ²: −(pre cos − pim sin)
      const v = 2 * (pre[q] * cs - pim[q] * sn);
      const dv = 2 * (-pre[q] * sn - pim[q] * cs);
      value += v;
      for (let a = 0; a < na; a++) {
        const oa = omega[a][q];
        g[a] += dv * oa;
        for (let b = 0; b < na; b++) H[a * na + b] -= v * oa * omega[b][q];
      }
    }
    if (ref.sre && ref.sim) {
      const modes = this.nyquistModes;
      const at = this.nyquistAxes;
      const twoPi = 2 * Math.PI;
      for (let m = 0; m < modes.length; m++) {
        const q = modes[m];
        // ψ = −2π Σ c_a over the axes where mode q sits at the Nyquist wavenumber
        let psi = 0;
        for (let a = 0; a < na; a++) if (at[a][m]) psi -= twoPi * c[a];
        const cs = Math.cos(psi);
        const sn = Math.sin(psi);
        const v = -0.5 * (ref.sre[q] * cs - ref.sim[q] * sn);
        const dv = -0.5 * (-ref.sre[q] * sn - ref.sim[q] * cs);
        value += v;
        for (let a = 0; a < na; a++) {
          if (!at[a][m]) continue;
          g[a] -= twoPi * dv;
          for (let b = 0; b < na; b++) if (at[b][m]) H[a * na + b] -= v * twoPi * twoPi;
        }
      }
    }
    return { value, g, H };
  }

  /**
   * The largest C(c) near a whole shift: Newton steps on ∇C = 0 where the Hessian is negative
   * definite along the step, gradient steps of half a node otherwise, each halved until C does
   * not decrease; at most 40 steps, ended when a step is below 10⁻¹² nodes.
   */
  private refineShift(pre: Float64Array, pim: Float64Array, ref: StateReference, start: number[]): { c: number[]; value: number } {
    const na = start.length;
    let c = start.slice();
    let here = this.correlation(pre, pim, ref, c);
    for (let it = 0; it < 40; it++) {
      const { g, H } = here;
      let step = solveSmall(H, g, na);
      let quad = 0;
      if (step) for (let a = 0; a < na; a++) for (let b = 0; b < na; b++) quad += step[a] * H[a * na + b] * step[b];
      // a maximum: c − H⁻¹g when H is negative along the step; else uphill along g
      let dir: number[];
      if (step && quad < 0) dir = Array.from(step, (x) => -x);
      else {
        const big = Math.max(...Array.from(g, Math.abs));
        if (!(big > 0)) break;
        dir = Array.from(g, (x) => (0.5 * x) / big);
      }
      const size = Math.max(...dir.map(Math.abs));
      if (size > 0.5) dir = dir.map((x) => (0.5 * x) / size);
      let moved = false;
      for (let k = 0; k < 30; k++) {
        const trial = c.map((x, a) => x + dir[a]);
        const there = this.correlation(pre, pim, ref, trial);
        if (there.value >= here.value) {
          c = trial;
          here = there;
          moved = true;
          break;
        }
        dir = dir.map((x) => x / 2);
      }
      if (!moved || Math.max(...dir.map(Math.abs)) < 1e-10) break;
    }
    return { c, value: here.value };
  }

  /** T_c r: the reference shifted by c nodes per periodic axis (x first), as a full state vector. */
  shifted(ref: StateReference, c: readonly number[]): Float64Array {
    if (!this.translation || !ref.re || !ref.im) return ref.u;
    if (c.every((x) => x === 0)) return ref.u;
    const re = new Float64Array(ref.re.length);
    const im = new Float64Array(ref.re.length);
    for (let k = 0; k < re.length; k++) {
      const q = this.periodicIndex[k];
      let phase = 0;
      for (let a = 0; a < c.length; a++) phase += (-2 * Math.PI * this.waves[a][q] * c[a]) / this.lengths[a];
      const cs = Math.cos(phase);
      const sn = Math.sin(phase);
      re[k] = ref.re[k] * cs - ref.im[k] * sn;
      im[k] = ref.re[k] * sn + ref.im[k] * cs;
    }
    fftAxes(re, im, this.shape, this.arrayAxes, true);
    const extras = this.problem.extraUnknowns.length ? ref.u.slice(this.problem.gridUnknowns) : undefined;
    return this.problem.fromNodeArray(this.shape, re, this.params, extras);
  }
}

/** Solve the small symmetric system H x = g (1 to 3 unknowns) by Gaussian elimination; null when singular. */
function solveSmall(H: Float64Array, g: Float64Array, n: number): Float64Array | null {
  const a = Float64Array.from(H);
  const b = Float64Array.from(g);
  for (let k = 0; k < n; k++) {
    let p = k;
    for (let i = k + 1; i < n; i++) if (Math.abs(a[i * n + k]) > Math.abs(a[p * n + k])) p = i;
    if (!(Math.abs(a[p * n + k]) > 0)) return null;
    if (p !== k) {
      for (let j = 0; j < n; j++) [a[k * n + j], a[p * n + j]] = [a[p * n + j], a[k * n + j]];
      [b[k], b[p]] = [b[p], b[k]];
    }
    for (let i = k + 1; i < n; i++) {
      const f = a[i * n + k] / a[k * n + k];
      for (let j = k; j < n; j++) a[i * n + j] -= f * a[k * n + j];
      b[i] -= f * b[k];
    }
  }
  const x = new Float64Array(n);
  for (let i = n - 1; i >= 0; i--) {
    let s = b[i];
    for (let j = i + 1; j < n; j++) s -= a[i * n + j] * x[j];
    x[i] = s / a[i * n + i];
  }
  return x.every(Number.isFinite) ? x : null;
}
