/**
 * The discrete Fourier transform of complex vectors of any length, and along chosen axes of a
 * C-ordered multi-dimensional array (the periodic axes of a node array):
 *
 *   X_k = Σ_j x_j e^{−2πi jk/n}   (forward),      x_j = (1/n) Σ_k X_k e^{+2πi jk/n}   (inverse).
 *
 * Lengths that are powers of two use the iterative radix-2 Cooley–Tukey algorithm; other lengths
 * Bluestein's algorithm (the transform as a convolution with a chirp, done by power-of-two
 * transforms; Bluestein 1970), so every length costs O(n log n). Real and imaginary parts are
 * kept in two Float64Arrays and transformed in place. Plans (twiddles, chirps) are cached per length.
 */

interface Radix2Plan {
  kind: 'radix2';
  n: number;
  cos: Float64Array;
  sin: Float64Array;
  bitReverse: Uint32Array;
}

interface BluesteinPlan {
  kind: 'bluestein';
  n: number;
  m: number;
  inner: Radix2Plan;
  /** The chirp e^{−πi j²/n}. */
  chirpRe: Float64Array;
  chirpIm: Float64Array;
  /** The transform of the conjugate chirp, wrapped to length m. */
  kernelRe: Float64Array;
  kernelIm: Float64Array;
  workRe: Float64Array;
  workIm: Float64Array;
}

type Plan = Radix2Plan | BluesteinPlan | { kind: 'trivial'; n: number };

const plans = new Map<number, Plan>();

function radix2Plan(n: number): Radix2Plan {
  const half = n >> 1;
  const cos = new Float64Array(half);
  const sin = new Float64Array(half);
  for (let k = 0; k < half; k++) {
    cos[k] = Math.cos((2 * Math.PI * k) / n);
    sin[k] = Math.sin((2 * Math.PI * k) / n);
  }
  const bits = Math.round(Math.log2(n));
  const bitReverse = new Uint32Array(n);
  for (let i = 0; i < n; i++) {
    let r = 0;
    for (let b = 0; b < bits; b++) r |= ((i >> b) & 1) << (bits - 1 - b);
    bitReverse[i] = r;
  }
  return { kind: 'radix2', n, cos, sin, bitReverse };
}

function planFor(n: number): Plan {
  let plan = plans.get(n);
  if (plan) return plan;
  if (n <= 1) plan = { kind: 'trivial', n };
  else if ((n & (n - 1)) === 0) plan = radix2Plan(n);
  else {
    let m = 1;
    while (m < 2 * n - 1) m <<= 1;
    const inner = radix2Plan(m);
    const chirpRe = new Float64Array(n);
    const chirpIm = new Float64Array(n);
    for (let j = 0; j < n; j++) {
      // j² mod 2n keeps the angle small (exact for j² below 2^53)
      const a = (Math.PI * ((j * j) % (2 * n))) / n;
      chirpRe[j] = Math.cos(a);
      chirpIm[j] = -Math.sin(a);
    }
    const kernelRe = new Float64Array(m);
    const kernelIm = new Float64Array(m);
    kernelRe[0] = chirpRe[0];
    kernelIm[0] = -chirpIm[0];
    for (let j = 1; j < n; j++) {
      kernelRe[j] = kernelRe[m - j] = chirpRe[j];
      kernelIm[j] = kernelIm[m - j] = -chirpIm[j];
    }
    radix2(inner, kernelRe, kernelIm, false);
    plan = { kind: 'bluestein', n, m, inner, chirpRe, chirpIm, kernelRe, kernelIm, workRe: new Float64Array(m), workIm: new Float64Array(m) };
  }
  plans.set(n, plan);
  return plan;
}

/** In-place radix-2 transform (forward: e^{−2πi jk/n}; inverse: e^{+...}, not scaled). */
function radix2(plan: Radix2Plan, re: Float64Array, im: Float64Array, inverse: boolean): void {
  const { n, cos, sin, bitReverse } = plan;
  for (let i = 0; i < n; i++) {
    const j = bitReverse[i];
    if (j > i) {
      let t = re[i];
      re[i] = re[j];
      re[j] = t;
      t = im[i];
      im[i] = im[j];
      im[j] = t;
    }
  }
  const sign = inverse ? 1 : -1;
  for (let size = 2; size <= n; size <<= 1) {
    const half = size >> 1;
    const stride = n / size;
    for (let start = 0; start < n; start += size) {
      for (let k = 0; k < half; k++) {
        const wr = cos[k * stride];
        const wi = sign * sin[k * stride];
        const a = start + k;
        const b = a + half;
        const tr = re[b] * wr - im[b] * wi;
        const ti = re[b] * wi + im[b] * wr;
        re[b] = re[a] - tr;
        im[b] = im[a] - ti;
        re[a] += tr;
        im[a] += ti;
      }
    }
  }
}

function bluestein(plan: BluesteinPlan, re: Float64Array, im: Float64Array, inverse: boolean): void {
  const { n, m, inner, chirpRe, kernelRe, kernelIm, workRe, workIm } = plan;
  // the inverse transform is the forward one with conjugated chirps
  const s = inverse ? -1 : 1;
  const chirpIm = plan.chirpIm;
  workRe.fill(0);
  workIm.fill(0);
  for (let j = 0; j < n; j++) {
    const cr = chirpRe[j];
    const ci = s * chirpIm[j];
    workRe[j] = re[j] * cr - im[j] * ci;
    workIm[j] = re[j] * ci + im[j] * cr;
  }
  radix2(inner, workRe, workIm, false);
  for (let k = 0; k < m; k++) {
    const kr = kernelRe[k];
    const ki = s * kernelIm[k];
    const r = workRe[k] * kr - workIm[k] * ki;
    workIm[k] = workRe[k] * ki + workIm[k] * kr;
    workRe[k] = r;
  }
  radix2(inner, workRe, workIm, true);
  for (let k = 0; k < n; k++) {
    const ar = workRe[k] / m;
    const ai = workIm[k] / m;
    const cr = chirpRe[k];
    const ci = s * chirpIm[k];
    re[k] = ar * cr - ai * ci;
    im[k] = ar * ci + ai * cr;
  }
}

/** In-place transform of (re, im) of length n: forward, or the inverse (scaled by 1/n). */
export function fft(re: Float64Array, im: Float64Array, inverse = false): void {
  const n = re.length;
  if (im.length !== n) throw new Error(`fft: real and imaginary parts have lengths ${n} and ${im.length}`);
  const plan = planFor(n);
  if (plan.kind === 'radix2') radix2(plan, re, im, inverse);
  else if (plan.kind === 'bluestein') bluestein(plan, re, im, inverse);
  if (inverse && n > 1) {
    for (let i = 0; i < n; i++) {
      re[i] /= n;
      im[i] /= n;
    }
  }
}

/**
 * Transform a C-ordered array of `shape` along each axis listed in `axes` (indices into shape),
 * in place: every line along those axes, for every index of the other axes.
 */
export function fftAxes(re: Float64Array, im: Float64Array, shape: readonly number[], axes: readonly number[], inverse = false): void {
  const total = shape.reduce((a, b) => a * b, 1);
  if (re.length !== total || im.length !== total) throw new Error(`fftAxes: arrays of length ${re.length}, ${im.length} for shape (${shape.join(', ')})`);
  for (const axis of axes) {
    const n = shape[axis];
    if (n <= 1) continue;
    let stride = 1;
    for (let a = axis + 1; a < shape.length; a++) stride *= shape[a];
    const outer = total / (n * stride);
    const lineRe = new Float64Array(n);
    const lineIm = new Float64Array(n);
    for (let o = 0; o < outer; o++) {
      for (let s = 0; s < stride; s++) {
        const base = o * n * stride + s;
        for (let j = 0; j < n; j++) {
          lineRe[j] = re[base + j * stride];
          lineIm[j] = im[base + j * stride];
        }
        fft(lineRe, lineIm, inverse);
        for (let j = 0; j < n; j++) {
          re[base + j * stride] = lineRe[j];
          im[base + j * stride] = lineIm[j];
        }
      }
    }
  }
}

/** The signed wavenumber of index k of a length-n transform: 0, 1, …, ⌊n/2⌋, then −⌈n/2⌉+1, …, −1. */
export function signedWavenumber(k: number, n: number): number {
  return k <= n / 2 ? k : k - n;
}
