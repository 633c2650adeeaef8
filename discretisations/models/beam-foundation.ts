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
 */
import type { GridOptions, Monitor, ParameterSpec, Params, Problem, ProblemDescription, UnknownLocation } from '../../src/problem/problem.js';
import { Grid } from '../grid.js';
import { BoundaryData, OperatorBuilder, type BeamEnd, applyOperator } from '../operator.js';
import { PatternBuilder } from '../pattern.js';
import { fieldMonitors, pointMonitor } from '../monitors.js';
import { type OptionSpec, checkOptions, choice, dimensionCheck, gridOption } from './options.js';
import { bucklingCaution } from './elastica.js';

export const beamFoundationOptions: readonly OptionSpec[] = [
  gridOption,
  { name: 'ends', description: 'pinned: w = w″ = 0 at both ends; clamped: w = w′ = 0 at both ends', choices: ['pinned', 'clamped'] },
];

// parameter order: P, EI, kf, k3
export const beamFoundationParameters: readonly ParameterSpec[] = [
  { name: 'P', default: 0, description: 'axial compressive load P' },
  { name: 'EI', default: 1, min: 0, description: 'bending stiffness EI' },
  { name: 'kf', default: 100, min: 0, description: 'linear foundation stiffness kf (per unit length)' },
  { name: 'k3', default: 100, description: 'cubic softening coefficient k3 of the foundation (> 0 softens)' },
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

  const get = (p: Params): [number, number, number, number] => {
    const v = names.map((k) => p[k]);
    v.forEach((x, i) => {
      if (x === undefined) throw new Error(`model '${m}': parameter '${names[i]}' has no value`);
    });
    return v as [number, number, number, number];
  };

  function residual(u: Float64Array, p: Params, out: Float64Array): void {
    const [P, EI, kf, k3] = get(p);
    applyOperator(d4, grid, u, bd, t4);
    applyOperator(d2, grid, u, bd, t2);
    for (let i = 0; i < n; i++) {
      const w = u[i];
      out[i] = -(EI * t4[i] + P * t2[i] + kf * w - k3 * w * w * w);
    }
  }

  function jacobian(u: Float64Array, p: Params, values: Float64Array): void {
    const [P, EI, kf, k3] = get(p);
    values.fill(0);
    for (let k = 0; k < d4.coef.length; k++) values[p4[k]] -= EI * d4.coef[k];
    for (let k = 0; k < d2.coef.length; k++) values[p2[k]] -= P * d2.coef[k];
    for (let i = 0; i < n; i++) values[pd[i]] += -kf + 3 * k3 * u[i] * u[i];
  }

  function parameterDerivative(u: Float64Array, p: Params, name: string, out: Float64Array): void {
    get(p);
    switch (name) {
      case 'P':
        applyOperator(d2, grid, u, bd, out);
        for (let i = 0; i < n; i++) out[i] = -out[i];
        return;
      case 'EI':
        applyOperator(d4, grid, u, bd, out);
        for (let i = 0; i < n; i++) out[i] = -out[i];
        return;
      case 'kf':
        for (let i = 0; i < n; i++) out[i] = -u[i];
        return;
      case 'k3':
        for (let i = 0; i < n; i++) out[i] = u[i] * u[i] * u[i];
        return;
      default:
        throw new Error(`unknown parameter '${name}' for model '${m}' (known: ${names.join(', ')})`);
    }
  }

  function secondDerivative(u: Float64Array, p: Params, a: Float64Array, b: Float64Array, out: Float64Array): void {
    const k3 = get(p)[3];
    for (let i = 0; i < n; i++) out[i] = 6 * k3 * u[i] * a[i] * b[i];
  }

  // linear operators applied to a direction (the ends are w = 0, so no boundary terms)
  const zero = new BoundaryData(grid).resolve({});
  function mixedDerivative(u: Float64Array, p: Params, name: string, a: Float64Array, out: Float64Array): void {
    get(p);
    switch (name) {
      case 'P':
        applyOperator(d2, grid, a, zero, out);
        for (let i = 0; i < n; i++) out[i] = -out[i];
        return;
      case 'EI':
        applyOperator(d4, grid, a, zero, out);
        for (let i = 0; i < n; i++) out[i] = -out[i];
        return;
      case 'kf':
        for (let i = 0; i < n; i++) out[i] = -a[i];
        return;
      case 'k3':
        for (let i = 0; i < n; i++) out[i] = 3 * u[i] * u[i] * a[i];
        return;
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
    summary: `beam on a softening elastic foundation under axial load, ${ends} ends: −(EI w⁗ + P w″ + kf w − k3 w³) = 0`,
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
    jacobian,
    parameterDerivative,
    secondDerivative,
    mixedDerivative,
    initialGuess: () => new Float64Array(n),
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
