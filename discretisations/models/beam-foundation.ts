/**
 * `beam-foundation`: a beam on a nonlinear (softening) elastic foundation under axial load P:
 *
 *     M w_t = F(w) = −(EI w'''' + P w'' + kf w − k3 w³)   on (0, L)
 *
 * (the energy ∫ ½EI w''² − ½P w'² + ½kf w² − ¼k3 w⁴ enters with a minus sign, so the straight
 * beam is stable for small P). Ends: pinned (w = w'' = 0) or clamped (w = w' = 0). The cubic
 * softening makes the buckling subcritical. w at nodes 1..N−1 are the unknowns (w = 0 at the
 * ends is eliminated); the fourth derivative uses ghost nodes from the end conditions.
 * For pinned ends the discrete branch points of w = 0 are P_n = EI μ_n + kf/μ_n with
 * μ_n = (4/h²) sin²(nπh/(2L)), the eigenvalues of the discrete −d²/dx² (for pinned ends the
 * discrete fourth derivative is exactly the square of the discrete second derivative).
 *
 * Imperfection (parameter `imperfection`, ε): the beam's stress-free shape is w0 = ε φ with φ the
 * critical (lowest-load) buckling mode of the straight beam at the current EI and kf (largest
 * deflection 1, first half-wave up: ./beam-modes.ts). Bending and the foundation act on the
 * deflection from it, the load on the whole deflection:
 *
 *     F(w) = −(EI (w − w0)'''' + P w'' + kf (w − w0) − k3 (w − w0)³),
 *
 * so w = w0 at P = 0, and the straight state and its branch point are gone for ε ≠ 0: the
 * buckling load becomes a limit load (a fold), which falls as ε grows (imperfection
 * sensitivity; Koiter 1945). For pinned ends φ jumps between modes where two modes buckle at one
 * load; for clamped ends it moves smoothly with kf/EI.
 */
import type { GridOptions, Monitor, ParameterSpec, Params, Problem, ProblemDescription, UnknownLocation } from '../../src/problem/problem.js';
import { Grid } from '../grid.js';
import { BoundaryData, OperatorBuilder, type BeamEnd, applyOperator, operatorRounding } from '../operator.js';
import { PatternBuilder } from '../pattern.js';
import { fieldMonitors, pointMonitor } from '../monitors.js';
import { type OptionSpec, checkOptions, choice, dimensionCheck, gridOption } from './options.js';
import { bucklingCaution } from './elastica.js';
import { CriticalMode } from './beam-modes.js';

export const beamFoundationOptions: readonly OptionSpec[] = [
  gridOption,
  { name: 'ends', description: 'pinned: w = w″ = 0 at both ends; clamped: w = w′ = 0 at both ends', choices: ['pinned', 'clamped'] },
];

// parameter order: P, EI, kf, k3, imperfection
export const beamFoundationParameters: readonly ParameterSpec[] = [
  { name: 'P', default: 0, description: 'axial compressive load P' },
  { name: 'EI', default: 1, min: 0, description: 'bending stiffness EI' },
  { name: 'kf', default: 100, min: 0, description: 'linear foundation stiffness kf (per unit length)' },
  { name: 'k3', default: 100, description: 'cubic softening coefficient k3 of the foundation (> 0 softens)' },
  { name: 'imperfection', default: 0, description: 'amplitude of the stress-free initial shape, the critical buckling mode (largest deflection of that shape)' },
];

export function beamFoundation(options: Record<string, unknown> & { grid: GridOptions }): Problem {
  const m = 'beam-foundation';
  checkOptions(m, options, beamFoundationOptions);
  dimensionCheck(m, options.grid, [1]);
  const ends = choice<BeamEnd>(m, options, beamFoundationOptions[1]);
  const grid = new Grid(options.grid, ['w'], { all: { kind: 'dirichlet', value: 0 } });
  const n = grid.gridUnknowns;
  const bd = new BoundaryData(grid).resolve({});
  const d4 = new OperatorBuilder(grid).fourthDerivative(0, [ends, ends]).build();
  const d2 = new OperatorBuilder(grid).laplacian(0).build();

  const pb = new PatternBuilder(n);
  const h4 = new Int32Array(d4.col.length);
  for (let r = 0; r < n; r++) for (let k = d4.rowPtr[r]; k < d4.rowPtr[r + 1]; k++) h4[k] = pb.add(r, d4.col[k]);
  const h2 = new Int32Array(d2.col.length);
  for (let r = 0; r < n; r++) for (let k = d2.rowPtr[r]; k < d2.rowPtr[r + 1]; k++) h2[k] = pb.add(r, d2.col[k]);
  const hd = Int32Array.from({ length: n }, (_, i) => pb.add(i, i));
  const pattern = pb.pattern();
  const pos = pb.positions();
  const p4 = h4.map((x) => pos[x]);
  const p2 = h2.map((x) => pos[x]);
  const pd = hd.map((x) => pos[x]);
  const weights = grid.unknownWeights();
  const t4 = new Float64Array(n);
  const t2 = new Float64Array(n);
  const names = beamFoundationParameters.map((s) => s.name);

  // the imperfection is optional in parameter sets (0 when absent: the perfect beam)
  const get = (p: Params): [number, number, number, number, number] => {
    const v = names.map((k) => (k === 'imperfection' ? (p[k] ?? 0) : p[k]));
    v.forEach((x, i) => {
      if (x === undefined) throw new Error(`model '${m}': parameter '${names[i]}' has no value`);
    });
    return v as [number, number, number, number, number];
  };

  const mode = new CriticalMode(ends, d4, d2, n, grid.axes[0].intervals, grid.axes[0].length);
  const y = new Float64Array(n);
  const t0 = new Float64Array(n);
  /** y = w − w0 (the deflection from the stress-free shape); returns φ, or null for ε = 0. */
  function relative(u: Float64Array, p: Params): Float64Array | null {
    const [, EI, kf, , eps] = get(p);
    if (eps === 0) {
      y.set(u.subarray(0, n));
      return null;
    }
    const phi = mode.shape(EI, kf);
    for (let i = 0; i < n; i++) y[i] = u[i] - eps * phi[i];
    return phi;
  }

  function residual(u: Float64Array, p: Params, out: Float64Array): void {
    const [P, EI, kf, k3] = get(p);
    relative(u, p);
    applyOperator(d4, grid, y, bd, t4);
    applyOperator(d2, grid, u, bd, t2);
    for (let i = 0; i < n; i++) {
      const w = y[i];
      out[i] = -(EI * t4[i] + P * t2[i] + kf * w - k3 * w * w * w);
    }
  }

  /** Terms for the convergence test: EI·w⁗, P·w″, kf·w and k3·w³ each as a whole. */
  function residualMagnitudes(u: Float64Array, p: Params, terms: Float64Array, rounding?: Float64Array): void {
    const [P, EI, kf, k3] = get(p);
    applyOperator(d4, grid, u, bd, t4);
    applyOperator(d2, grid, u, bd, t2);
    for (let i = 0; i < n; i++) {
      const w = u[i];
      terms[i] = Math.abs(EI * t4[i]) + Math.abs(P * t2[i]) + Math.abs(kf * w) + Math.abs(k3 * w * w * w);
    }
    if (!rounding) return;
    operatorRounding(d4, grid, u, bd, t4);
    operatorRounding(d2, grid, u, bd, t2);
    for (let i = 0; i < n; i++) {
      const w = u[i];
      rounding[i] = Math.abs(EI) * t4[i] + Math.abs(P) * t2[i] + Math.abs(kf) * Math.max(Math.abs(w), 1) + Math.abs(k3 * w * w * w);
    }
  }

  function jacobian(u: Float64Array, p: Params, values: Float64Array): void {
    const [P, EI, kf, k3] = get(p);
    relative(u, p);
    values.fill(0);
    for (let k = 0; k < d4.coef.length; k++) values[p4[k]] -= EI * d4.coef[k];
    for (let k = 0; k < d2.coef.length; k++) values[p2[k]] -= P * d2.coef[k];
    for (let i = 0; i < n; i++) values[pd[i]] += -kf + 3 * k3 * y[i] * y[i];
  }

  // linear operators applied to a direction (the ends are w = 0, so no boundary terms)
  const zero = new BoundaryData(grid).resolve({});
  /** out = (EI D4 + kf − 3 k3 y²) x: minus the Jacobian of F in w − w0, without the load term. */
  function stiffness(x: Float64Array, EI: number, kf: number, k3: number, out: Float64Array): void {
    applyOperator(d4, grid, x, zero, out);
    for (let i = 0; i < n; i++) out[i] = EI * out[i] + (kf - 3 * k3 * y[i] * y[i]) * x[i];
  }

  function parameterDerivative(u: Float64Array, p: Params, name: string, out: Float64Array): void {
    const [, EI, kf, k3, eps] = get(p);
    const phi = relative(u, p);
    switch (name) {
      case 'P':
        applyOperator(d2, grid, u, bd, out);
        for (let i = 0; i < n; i++) out[i] = -out[i];
        return;
      case 'EI':
      case 'kf': {
        // direct dependence, plus the shape's (clamped ends: φ moves with kf/EI)
        if (name === 'EI') {
          applyOperator(d4, grid, y, bd, out);
          for (let i = 0; i < n; i++) out[i] = -out[i];
        } else {
          for (let i = 0; i < n; i++) out[i] = -y[i];
        }
        if (phi && ends === 'clamped') {
          const d = mode.derivatives(EI, kf)[name];
          stiffness(d, EI, kf, k3, t0);
          for (let i = 0; i < n; i++) out[i] += eps * t0[i];
        }
        return;
      }
      case 'k3':
        for (let i = 0; i < n; i++) out[i] = y[i] * y[i] * y[i];
        return;
      case 'imperfection':
        stiffness(mode.shape(EI, kf), EI, kf, k3, out);
        return;
      default:
        throw new Error(`unknown parameter '${name}' for model '${m}' (known: ${names.join(', ')})`);
    }
  }

  function secondDerivative(u: Float64Array, p: Params, a: Float64Array, b: Float64Array, out: Float64Array): void {
    const k3 = get(p)[3];
    relative(u, p);
    for (let i = 0; i < n; i++) out[i] = 6 * k3 * y[i] * a[i] * b[i];
  }

  function mixedDerivative(u: Float64Array, p: Params, name: string, a: Float64Array, out: Float64Array): void {
    const [, EI, kf, k3, eps] = get(p);
    const phi = relative(u, p);
    switch (name) {
      case 'P':
        applyOperator(d2, grid, a, zero, out);
        for (let i = 0; i < n; i++) out[i] = -out[i];
        return;
      case 'EI':
      case 'kf': {
        if (name === 'EI') {
          applyOperator(d4, grid, a, zero, out);
          for (let i = 0; i < n; i++) out[i] = -out[i];
        } else {
          for (let i = 0; i < n; i++) out[i] = -a[i];
        }
        if (phi && ends === 'clamped') {
          // ∂/∂p of 3 k3 y² a with ∂y/∂p = −ε ∂φ/∂p
          const d = mode.derivatives(EI, kf)[name];
          for (let i = 0; i < n; i++) out[i] -= 6 * k3 * y[i] * eps * d[i] * a[i];
        }
        return;
      }
      case 'k3':
        for (let i = 0; i < n; i++) out[i] = 3 * y[i] * y[i] * a[i];
        return;
      case 'imperfection': {
        const shape = mode.shape(EI, kf);
        for (let i = 0; i < n; i++) out[i] = -6 * k3 * y[i] * shape[i] * a[i];
        return;
      }
      default:
        throw new Error(`unknown parameter '${name}' for model '${m}' (known: ${names.join(', ')})`);
    }
  }

  const L = grid.axes[0].length;
  const monitors: Monitor[] = [
    ...fieldMonitors(grid, weights),
    pointMonitor(grid, 'centre', 'deflection w at the centre of the span', 0, [L / 2]),
  ];
  const description: ProblemDescription = {
    model: m,
    summary: `beam on a softening elastic foundation under axial load, ${ends} ends: −(EI y⁗ + P w″ + kf y − k3 y³) = 0, y = w − imperfection·(critical mode)`,
    fields: ['w'],
    axes: grid.describeAxes(),
    caution: bucklingCaution,
    layout: grid.layoutText(),
  };
  return {
    model: m,
    size: n,
    gridUnknowns: n,
    extraUnknowns: [],
    parameters: beamFoundationParameters,
    weights,
    pattern: () => pattern,
    residual,
    residualMagnitudes,
    jacobian,
    parameterDerivative,
    secondDerivative,
    mixedDerivative,
    // the stress-free shape (w = 0 for the perfect beam)
    initialGuess: (p) => {
      const [, EI, kf, , eps] = get(p);
      const w = new Float64Array(n);
      if (eps !== 0) {
        const phi = mode.shape(EI, kf);
        for (let i = 0; i < n; i++) w[i] = eps * phi[i];
      }
      return w;
    },
    monitors,
    describe: () => description,
    toNodeArray: (u, p) => grid.toNodeArray(u, p),
    fromNodeArray(shape, data, _p, extras) {
      if (extras && extras.length) throw new Error(`model '${m}' has no extra unknowns, got ${extras.length}`);
      const out = new Float64Array(n);
      grid.fromNodeArray(shape, data, out);
      return out;
    },
    locateUnknown(index: number): UnknownLocation {
      if (!Number.isInteger(index) || index < 0 || index >= n) throw new RangeError(`unknown index ${index} outside 0..${n - 1}`);
      const { field, node } = grid.locate(index);
      return { kind: 'grid', field, node };
    },
  };
}
