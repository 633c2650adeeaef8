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
