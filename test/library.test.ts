import { expect, test } from 'vitest';
// the README's library example, as a user would write it (here against the sources)
import { Continuation, defaultSettings, models, resolveParameters, type FoldPoint } from '../src/index.js';

test('the README library example finds the 1D Bratu fold', () => {
  const problem = models.bratu.factory({ grid: { intervals: [100] } });
  const params = resolveParameters(problem, { lambda: 0.5 });
  const engine = new Continuation(problem, params, {
    ...defaultSettings,
    parameter: 'lambda',
    bounds: [0, 5],
    stopWhen: [{ monitor: 'max', above: 4 }],
    stability: { eigenvalues: 3 },
  });
  const folds: FoldPoint[] = [];
  for (const event of engine.events()) {
    if (event.type === 'special' && event.point.kind === 'fold') folds.push(event.point);
  }
  engine.dispose();
  expect(folds).toHaveLength(1);
  // exact continuum value 3.513830719125 (Bratu 1914); h = 0.01 puts the discrete fold within 1e-3
  expect(Math.abs(folds[0].value - 3.513830719125)).toBeLessThan(1e-3);
});

test('the library follows a fold in two parameters (CurveContinuation)', async () => {
  const { CurveContinuation, defaultCurveSettings } = await import('../src/index.js');
  const problem = models.bratu.factory({ grid: { intervals: [40] }, boundary: 'robin' });
  const params = resolveParameters(problem, { lambda: 0.1, biot: 1 });
  const engine = new CurveContinuation(problem, params, { ...defaultCurveSettings, follow: 'fold', parameter: 'biot', free: 'lambda', bounds: [1, 3] });
  const points: { biot: number; lambda: number }[] = [];
  for (const event of engine.events()) if (event.type === 'point') points.push({ biot: event.point.parameter, lambda: event.point.free });
  engine.dispose();
  expect(points[0].biot).toBe(1);
  expect(points[points.length - 1].biot).toBe(3);
  // the ignition limit rises with the cooling
  for (let i = 1; i < points.length; i++) expect(points[i].lambda).toBeGreaterThan(points[i - 1].lambda);
});

test('the README time-integration example ends at a stable one-signed Allen–Cahn state (Chafee & Infante 1974)', async () => {
  const { TimeIntegration, defaultTimeSettings, initialStateBuilder } = await import('../src/index.js');
  const problem = models['allen-cahn'].factory({ grid: { intervals: [40] } });
  const params = resolveParameters(problem, { lambda: 60 });
  const start = initialStateBuilder(problem, { values: { u: 0 }, noise: { amplitude: 0.1, seed: 3 } }).build(params);
  const run = new TimeIntegration(problem, params, { ...defaultTimeSettings, end: 200, stability: { eigenvalues: 2 } }, { start });
  let kind = '';
  let centre = NaN;
  for (const event of run.events()) {
    if (event.type === 'end') {
      kind = event.outcome.kind;
      centre = event.monitors.centre;
    }
  }
  run.dispose();
  expect(kind).toBe('steady');
  // only the one-signed states ±u₁ are stable: the centre value is clear of zero
  expect(Math.abs(centre)).toBeGreaterThan(0.9);
});

test('the README deflation example finds both 1D Bratu states at λ = 2, as the closed form puts them (Bratu 1914)', async () => {
  const { DeflatedSearch, defaultSearchSettings, initialStateBuilder } = await import('../src/index.js');
  const problem = models.bratu.factory({ grid: { intervals: [100] } });
  const params = resolveParameters(problem, { lambda: 2 });
  const guess = { label: 'zero', u: initialStateBuilder(problem, { values: { u: 0 } }).build(params) };
  const search = new DeflatedSearch(problem, params, defaultSearchSettings, [guess]);
  const maxima: number[] = [];
  for (const event of search.events()) {
    if (event.type === 'solve' && event.state) maxima.push(event.state.monitors.max);
  }
  search.dispose();
  // u(½) = 2 ln cosh(θ/4) with θ = √(2λ)·cosh(θ/4) (two roots below the fold): fixed-point iteration
  // from below converges to the lower root; the upper one by bisection on [fold θ, 20]
  let low = 0;
  for (let i = 0; i < 200; i++) low = Math.sqrt(4) * Math.cosh(low / 4);
  let [a, b] = [7, 20]; // the fold's θ ≈ 4.8 lies below 7; g(7) > 0 > g(20)
  const g = (t: number) => t - 2 * Math.cosh(t / 4);
  for (let i = 0; i < 200; i++) [a, b] = g((a + b) / 2) > 0 ? [(a + b) / 2, b] : [a, (a + b) / 2];
  const exact = [low, a].map((t) => 2 * Math.log(Math.cosh(t / 4))).sort((x, y) => x - y);
  expect(maxima.length).toBe(2);
  maxima.sort((x, y) => x - y);
  // second-order discretisation error on 100 intervals: well below 1e-3
  for (let k = 0; k < 2; k++) expect(Math.abs(maxima[k] - exact[k])).toBeLessThan(1e-3);
});

test('the README Hopf example: l₁ of the Brusselator uniform Hopf point is negative (supercritical), from the package exports', async () => {
  const { hopfCriticality } = await import('../src/index.js');
  const problem = models.brusselator.factory({ grid: { intervals: [20] }, boundary: 'neumann' });
  const params = resolveParameters(problem, { a: 1, b: 2, Du: 1, Dv: 1 });
  // the uniform state (a, b/a) on the Hopf line b = 1 + a², ω = a (Prigogine & Lefever 1968)
  const { shape } = problem.toNodeArray(problem.initialGuess(params), params);
  const nodes = new Float64Array(shape.reduce((a, b) => a * b, 1));
  nodes.fill(1, 0, nodes.length / 2).fill(2, nodes.length / 2);
  const u = problem.fromNodeArray(shape, nodes, params);
  const r = hopfCriticality(problem, u, params, 1);
  expect(r.criticality).toBe('supercritical');
  expect(r.lyapunov).toBeLessThan(0);
  expect(Math.abs(r.eigenvalue!.im - 1)).toBeLessThan(1e-12);
});
