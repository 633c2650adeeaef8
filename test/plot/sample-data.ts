/**
 * Invented, realistic-looking plot inputs shared by the plot tests and by make-samples.ts.
 * The shapes imitate what the engine produces (an S-shaped ignition curve with two folds, a
 * pitchfork, a 2D spot), but the numbers are synthetic.
 */
import type { DiagramInput } from '../../src/plot/diagram.js';
import type { HeatMapInput } from '../../src/plot/heatmap.js';
import type { LinePlotInput } from '../../src/plot/line.js';
import type { RefinementPlotInput } from '../../src/plot/refinement.js';
import { analyseRefinement } from '../../src/refine/index.js';

export const CAUTION =
  'Model results; not a substitute for design codes, safety standards or a licensed engineer\u2019s judgement. Local codes and licensed practice govern.';

/**
 * S-shaped branch λ(m) = a + b (m − c)³ − d (m − c), with folds at m = c ± 2 (b = 0.05,
 * c = 4.5, d = 12 b, a chosen so that λ(0) = 0). Stable below the lower fold and above the
 * upper one.
 */
export function sCurveDiagram(): DiagramInput {
  const b = 0.05;
  const c = 4.5;
  const d = 12 * b;
  const a = b * c ** 3 - d * c;
  const lam = (m: number): number => a + b * (m - c) ** 3 - d * (m - c);
  const points = [];
  for (let k = 0; k <= 90; k++) {
    const m = (9 * k) / 90 + 0.013 * Math.sin(k); // slightly uneven steps, like adaptive continuation
    points.push({ parameter: lam(m), monitor: m, stable: m < c - 2 || m > c + 2 });
  }
  return {
    title: 'Ignition and extinction of a slab reactor',
    subtitle: 'Invented example: 1D Arrhenius source, 400 intervals; max of temperature against the Damköhler number',
    parameterName: 'lambda',
    monitorName: 'max u',
    branches: [{ id: 1, points }],
    specialPoints: [
      { kind: 'end', branch: 1, parameter: points[0].parameter, monitor: points[0].monitor },
      { kind: 'fold', branch: 1, parameter: lam(c - 2), monitor: c - 2, label: 'fold (ignition)' },
      { kind: 'fold', branch: 1, parameter: lam(c + 2), monitor: c + 2, label: 'fold (extinction)' },
      { kind: 'end', branch: 1, parameter: points[points.length - 1].parameter, monitor: points[points.length - 1].monitor },
    ],
    caution: CAUTION,
  };
}

/** Trivial branch with pitchforks at π² and 4π², two symmetric branches from the first. */
export function pitchforkDiagram(): DiagramInput {
  const p1 = Math.PI ** 2;
  const p2 = 4 * Math.PI ** 2;
  const trivial = [];
  for (let k = 0; k <= 60; k++) {
    const lam = (50 * k) / 60;
    trivial.push({ parameter: lam, monitor: 0, stable: lam < p1 });
  }
  const arm = (sign: number): { parameter: number; monitor: number; stable: boolean }[] => {
    const pts = [];
    for (let k = 0; k <= 50; k++) {
      const s = (k / 50) * 1.9;
      // λ = π² (1 + s²/8 + ...) is the small-amplitude law of the Chafee–Infante arms, shaped here.
      pts.push({ parameter: p1 * (1 + 0.3 * s * s + 0.12 * s ** 4), monitor: sign * s, stable: true });
    }
    return pts;
  };
  return {
    title: 'Chafee–Infante: pitchforks from the zero state',
    subtitle: 'Invented example: u\u2032\u2032 + λ(u − u³) = 0 on (0, 1), Dirichlet; value of u at x = 0.5',
    parameterName: 'lambda',
    monitorName: 'u(0.5)',
    branches: [
      { id: 1, name: 'zero state', points: trivial },
      { id: 2, name: 'positive arm', points: arm(1) },
      { id: 3, name: 'negative arm', points: arm(-1) },
    ],
    specialPoints: [
      { kind: 'branch-point', branch: 1, parameter: p1, monitor: 0 },
      { kind: 'branch-point', branch: 1, parameter: p2, monitor: 0 },
      { kind: 'end', branch: 2, parameter: arm(1)[50].parameter, monitor: arm(1)[50].monitor },
      { kind: 'end', branch: 3, parameter: arm(-1)[50].parameter, monitor: arm(-1)[50].monitor },
    ],
  };
}

/** A branch whose stability was not computed at first, then stable, losing it at a Hopf point. */
export function hopfDiagram(): DiagramInput {
  const pts = [];
  for (let k = 0; k <= 80; k++) {
    const B = 1 + (3.5 * k) / 80;
    pts.push({ parameter: B, monitor: 1 + 0.35 * Math.sqrt(B), stable: k < 10 ? null : B < 2 + 0.0 ? true : false });
  }
  return {
    title: 'Brusselator <homogeneous> state & its Hopf point',
    subtitle: 'Invented example with "quotes", ampersands & angle <brackets> in text',
    parameterName: 'B',
    monitorName: 'l2-norm u',
    branches: [{ id: 'homogeneous', points: pts }],
    specialPoints: [{ kind: 'hopf', branch: 'homogeneous', parameter: 2, monitor: 1 + 0.35 * Math.sqrt(2) }],
  };
}

/** Exact 1D Bratu solution at its fold (Bratu 1914 closed form, θ from (θ/4) tanh(θ/4) = 1). */
export function bratuFoldProfile(n = 101): LinePlotInput {
  // Solve (t) tanh(t) = 1 for t = θ/4 by Newton.
  let t = 1.2;
  for (let i = 0; i < 50; i++) t -= (t * Math.tanh(t) - 1) / (Math.tanh(t) + t / Math.cosh(t) ** 2);
  const theta = 4 * t;
  const lambda = (2 * (theta / Math.cosh(theta / 4)) ** 2) / 4; // θ = √(2λ) cosh(θ/4)
  const x = Array.from({ length: n }, (_, i) => i / (n - 1));
  const u = x.map((xi) => -2 * Math.log(Math.cosh((xi - 0.5) * (theta / 2)) / Math.cosh(theta / 4)));
  return {
    title: `fold at lambda = ${lambda.toFixed(4)}`,
    subtitle: '1D Bratu problem, exact profile at the fold',
    x,
    fields: [{ name: 'u', values: u }],
    caution: CAUTION,
  };
}

/** Two invented fields on a line (Gray–Scott-like pulse). */
export function twoFieldProfile(n = 201): LinePlotInput {
  const x = Array.from({ length: n }, (_, i) => (2.5 * i) / (n - 1));
  const u = x.map((xi) => 1 - 0.55 * Math.exp(-(((xi - 1.25) / 0.18) ** 2)));
  const v = x.map((xi) => 0.32 * Math.exp(-(((xi - 1.25) / 0.13) ** 2)) + 0.02 * Math.cos(6 * xi));
  return {
    title: 'branch point at F = 0.0372',
    subtitle: 'Invented example: two-species pulse on a line of length 2.5',
    x,
    fields: [
      { name: 'u', values: u },
      { name: 'v', values: v },
    ],
  };
}

/** 2D spot: u dips where v peaks, on n × n nodes of the unit square. */
export function spotHeatMap(n = 65, m = n): HeatMapInput {
  const u = new Float64Array(n * m);
  const v = new Float64Array(n * m);
  for (let j = 0; j < m; j++) {
    for (let i = 0; i < n; i++) {
      const x = i / (n - 1);
      const y = j / (m - 1);
      const r2 = (x - 0.42) ** 2 + (y - 0.58) ** 2;
      const g = Math.exp(-r2 / 0.02);
      u[j * n + i] = 1 - 0.6 * g + 0.05 * x;
      v[j * n + i] = 0.25 * g * (1 + 0.3 * Math.cos(10 * x)) + 0.01 * y;
    }
  }
  return {
    title: 'branch point at F = 0.0291',
    subtitle: `Invented example: two-species spot on a ${n} × ${m} grid`,
    nx: n,
    ny: m,
    x: [0, 1],
    y: [0, 1],
    fields: [
      { name: 'u', values: u },
      { name: 'v', values: v },
    ],
  };
}

/** Refinement of a fold location: v(h) = v* − 0.96 h² + 1.3 h³ on four halving grids. */
export function foldRefinement(): RefinementPlotInput {
  const vStar = 3.513830719125;
  const hs = [1 / 16, 1 / 32, 1 / 64, 1 / 128];
  const samples = hs.map((h) => ({ h, value: vStar - 0.96 * h * h + 1.3 * h ** 3 }));
  const r = analyseRefinement(samples, { expectedOrder: 2 });
  return {
    title: 'Grid refinement of fold 1',
    subtitle: `Observed order ${(r.order as number).toFixed(3)}; Richardson extrapolation with grid convergence index`,
    valueName: 'lambda at fold 1',
    points: samples,
    extrapolated: r.extrapolated,
    errorEstimate: r.errorEstimate,
    order: r.order,
    expectedOrder: 2,
    caution: CAUTION,
  };
}

/** A snaking branch with twelve folds stacked closely, and a second branch crossing it. */
export function snakingDiagram(): DiagramInput {
  const pts = [];
  for (let k = 0; k <= 600; k++) {
    const m = (12 * k) / 600;
    const stable = Math.floor(m + 0.5) % 2 === 0;
    pts.push({ parameter: 0.4 + 0.08 * Math.sin(Math.PI * m) + 0.002 * m, monitor: m, stable });
  }
  const cross = [];
  for (let k = 0; k <= 100; k++) {
    const lam = 0.25 + (0.35 * k) / 100;
    cross.push({ parameter: lam, monitor: 20 * (lam - 0.25), stable: null });
  }
  const specialPoints: DiagramInput['specialPoints'] & object = [];
  const list = [];
  for (let i = 0; i < 12; i++) {
    const m = i + 0.5;
    list.push({ kind: 'fold' as const, branch: 'snake', parameter: 0.4 + 0.08 * Math.sin(Math.PI * m) + 0.002 * m, monitor: m });
  }
  list.push({ kind: 'branch-point' as const, branch: 'crossing', parameter: 0.4, monitor: 3 });
  list.push({ kind: 'hopf' as const, branch: 'crossing', parameter: 0.52, monitor: 5.4 });
  return {
    title: 'Snaking localised states (stress test for labels)',
    parameterName: 'r',
    monitorName: 'l2-norm',
    branches: [
      { id: 'snake', points: pts },
      { id: 'crossing', points: cross },
    ],
    specialPoints: [...specialPoints, ...list],
  };
}
