/**
 * `elastica`: large deflections of an inextensible strut (Euler's elastica), pinned at both
 * ends, under end load. θ(s) is the tangent angle at arclength s ∈ (0, 1) (unit length), and
 * λ = P L²/EI the scaled load:
 *
 *     θ'' + λ sin θ − r cos θ = 0,   θ'(0) = θ'(1) = 0   (zero end moments, ghost nodes),
 *     ∫₀¹ sin θ ds = 0                                    (the ends stay level: y(1) = y(0)),
 *
 * with the multiplier r (the scaled transverse end reaction) as an extra unknown with zero
 * mass. Sign convention (M u_t = F): F = −δ(energy + r·constraint)/δθ with energy
 * ∫ ½θ'² − λ(1 − cos θ) ds, so the straight strut is stable below the first buckling load
 * (π² for the continuum; (4/h²) sin²(πh/2) for the grid). The constraint removes the rigid
 * rotation mode, which would otherwise make every state look unstable.
 *
 * Discretisation: nodes s_i = i·h, i = 0..N, all unknowns; second-order central differences;
 * the constraint by the trapezoid rule with the problem's weights (h, halved at the ends).
 */
import type { GridOptions, Monitor, ParameterSpec, Params, Problem, ProblemDescription, UnknownLocation } from '../../src/problem/problem.js';
import { Grid } from '../grid.js';
import { BoundaryData, OperatorBuilder, applyOperator } from '../operator.js';
import { PatternBuilder } from '../pattern.js';
import { fieldMonitors } from '../monitors.js';
import { type OptionSpec, checkOptions, dimensionCheck, gridOption } from './options.js';

export const bucklingCaution =
  'Model results for buckling: not a substitute for design codes, safety standards or a licensed engineer\'s judgement; local codes and licensed practice govern.';

export const elasticaOptions: readonly OptionSpec[] = [gridOption];

export const elasticaParameters: readonly ParameterSpec[] = [
  { name: 'lambda', default: 1, min: 0, description: 'scaled end load λ = P L²/EI' },
];

export function elastica(options: Record<string, unknown> & { grid: GridOptions }): Problem {
  const m = 'elastica';
  checkOptions(m, options, elasticaOptions);
  dimensionCheck(m, options.grid, [1]);
  if (options.grid.length && options.grid.length[0] !== 1) {
    throw new Error(`model '${m}': the strut is scaled to unit length (λ = P L²/EI); grid.length must be 1, got ${options.grid.length[0]}`);
  }
  const grid = new Grid(options.grid, ['theta'], { all: { kind: 'neumann', flux: 0 } });
  const N = grid.axes[0].intervals;
  const h = grid.axes[0].h;
  const n0 = grid.gridUnknowns; // N + 1
  const size = n0 + 1;
  const ir = n0; // index of r
  const op = new OperatorBuilder(grid).laplacian(0).build();
  const bd = new BoundaryData(grid).resolve({});

  const weights = new Float64Array(size);
  weights.set(grid.unknownWeights());
  weights[ir] = 1;
  const massDiagonal = new Float64Array(size);
  massDiagonal.fill(1, 0, n0);

  const pb = new PatternBuilder(size);
  const hOp = new Int32Array(op.col.length);
  for (let r = 0; r < n0; r++) for (let k = op.rowPtr[r]; k < op.rowPtr[r + 1]; k++) hOp[k] = pb.add(r, op.col[k]);
  const hDiag = Int32Array.from({ length: n0 }, (_, i) => pb.add(i, i));
  const hCol = Int32Array.from({ length: n0 }, (_, i) => pb.add(i, ir));
  const hRow = Int32Array.from({ length: n0 }, (_, i) => pb.add(ir, i));
  const pattern = pb.pattern();
  const pos = pb.positions();
  const opPos = hOp.map((x) => pos[x]);
  const diagPos = hDiag.map((x) => pos[x]);
  const colPos = hCol.map((x) => pos[x]);
  const rowPos = hRow.map((x) => pos[x]);

  const lam = (p: Params): number => {
    const v = p.lambda;
    if (v === undefined) throw new Error(`model '${m}': parameter 'lambda' has no value`);
    return v;
  };

  function residual(u: Float64Array, p: Params, out: Float64Array): void {
    const l = lam(p);
    const r = u[ir];
    applyOperator(op, grid, u, bd, out);
    let g = 0;
    for (let i = 0; i < n0; i++) {
      const s = Math.sin(u[i]);
      out[i] += l * s - r * Math.cos(u[i]);
      g += weights[i] * s;
    }
    out[ir] = g;
  }

  function jacobian(u: Float64Array, p: Params, values: Float64Array): void {
    const l = lam(p);
    const r = u[ir];
    values.fill(0);
    for (let k = 0; k < op.coef.length; k++) values[opPos[k]] += op.coef[k];
    for (let i = 0; i < n0; i++) {
      const s = Math.sin(u[i]);
      const c = Math.cos(u[i]);
      values[diagPos[i]] += l * c + r * s;
      values[colPos[i]] += -c;
      values[rowPos[i]] += weights[i] * c;
    }
  }

  function parameterDerivative(u: Float64Array, p: Params, name: string, out: Float64Array): void {
    if (name !== 'lambda') throw new Error(`unknown parameter '${name}' for model '${m}' (known: lambda)`);
    for (let i = 0; i < n0; i++) out[i] = Math.sin(u[i]);
    out[ir] = 0;
  }

  function secondDerivative(u: Float64Array, p: Params, a: Float64Array, b: Float64Array, out: Float64Array): void {
    const l = lam(p);
    const r = u[ir];
    let g = 0;
    for (let i = 0; i < n0; i++) {
      const s = Math.sin(u[i]);
      const c = Math.cos(u[i]);
      out[i] = (-l * s + r * c) * a[i] * b[i] + s * (a[ir] * b[i] + a[i] * b[ir]);
      g -= weights[i] * s * a[i] * b[i];
    }
    out[ir] = g;
  }

  function mixedDerivative(u: Float64Array, _p: Params, name: string, a: Float64Array, out: Float64Array): void {
    if (name !== 'lambda') throw new Error(`unknown parameter '${name}' for model '${m}' (known: lambda)`);
    for (let i = 0; i < n0; i++) out[i] = Math.cos(u[i]) * a[i];
    out[ir] = 0;
  }

  // trapezoid rule of f(θ) over [0, 1/2] (half a cell by linear interpolation when N is odd)
  const halfIntegral = (u: Float64Array, f: (t: number) => number): number => {
    const half = Math.floor(N / 2);
    let s = 0;
    for (let i = 0; i < half; i++) s += (h / 2) * (f(u[i]) + f(u[i + 1]));
    if (N % 2 === 1) {
      const a = f(u[half]);
      const mid = 0.5 * (a + f(u[half + 1]));
      s += (h / 4) * (a + mid);
    }
    return s;
  };

  const monitors: Monitor[] = [
    ...fieldMonitors(grid, weights),
    { name: 'end-rotation', description: 'tangent angle θ at the end s = 0 (radians)', evaluate: (u) => u[0] },
    {
      name: 'centre',
      description: 'transverse deflection at the centre of the strut, ∫₀^½ sin θ ds (in units of the strut length)',
      evaluate: (u) => halfIntegral(u, Math.sin),
    },
    {
      name: 'end-shortening',
      description: 'approach of the ends, 1 − ∫₀¹ cos θ ds (in units of the strut length)',
      evaluate: (u) => {
        let s = 0;
        for (let i = 0; i < n0; i++) s += weights[i] * Math.cos(u[i]);
        return 1 - s;
      },
    },
    { name: 'end-reaction', description: 'scaled transverse end reaction r (the constraint multiplier)', evaluate: (u) => u[ir] },
  ];

  const extraUnknowns = [{ name: 'end-reaction', description: 'scaled transverse end reaction r, multiplier of ∫ sin θ ds = 0' }];
  const description: ProblemDescription = {
    model: m,
    summary: 'Euler elastica, pinned–pinned strut under end load: θ″ + λ sin θ − r cos θ = 0, ∫ sin θ ds = 0',
    fields: ['theta'],
    axes: grid.describeAxes(),
    caution: bucklingCaution,
    layout: `theta at nodes s_i = i·h, i = 0..${N}; then the extra unknown end-reaction`,
  };

  return {
    model: m,
    size,
    gridUnknowns: n0,
    extraUnknowns,
    parameters: elasticaParameters,
    weights,
    massDiagonal,
    pattern: () => pattern,
    residual,
    jacobian,
    parameterDerivative,
    secondDerivative,
    mixedDerivative,
    initialGuess: () => new Float64Array(size),
    monitors,
    describe: () => description,
    toNodeArray: (u, p) => grid.toNodeArray(u, p),
    fromNodeArray(shape, data, p, extras) {
      const out = new Float64Array(size);
      grid.fromNodeArray(shape, data, out);
      if (extras) {
        if (extras.length !== 1) throw new Error(`model '${m}': expected 1 extra unknown (end-reaction), got ${extras.length}`);
        out[ir] = extras[0];
      }
      return out;
    },
    locateUnknown(index: number): UnknownLocation {
      if (index === ir) return { kind: 'extra', name: 'end-reaction' };
      if (!Number.isInteger(index) || index < 0 || index > ir) throw new RangeError(`unknown index ${index} outside 0..${ir}`);
      return { kind: 'grid', field: 'theta', node: [index] };
    },
  };
}
