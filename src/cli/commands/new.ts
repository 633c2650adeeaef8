import type { Command } from 'commander';
import type { CommandContext } from '../io.js';
import { models } from '../../../discretisations/index.js';
import type { OptionSpec } from '../../../discretisations/models/options.js';
import type { ParameterSpec, Problem } from '../../problem/problem.js';
import { defaultSettings } from '../../continuation/types.js';
import { defaultCheckpoint } from '../../run/case.js';
import { defaultHopfEigenvalues } from '../../run/curve-case.js';
import { InputError } from '../../run/errors.js';

/**
 * Where a study of each built-in model usually starts: the continuation parameter, its range per
 * dimension, and whether branch switching and stability are worth switching on. Models without
 * an entry get a generic range around the parameter's default.
 */
interface Suggestion {
  parameter: string;
  bounds: (dim: number) => [number, number];
  step: { initial: number; min: number; max: number };
  maxPoints: number;
  eigenvalues: number;
  stopWhen?: string;
  /** Domain length per axis (default 1). */
  length?: number;
  note: string;
}

const suggestions: Record<string, Suggestion> = {
  bratu: {
    parameter: 'lambda',
    bounds: (d) => [0, [4, 8, 12][d - 1]],
    step: { initial: 0.05, min: 1e-8, max: 0.5 },
    maxPoints: 400,
    eigenvalues: 4,
    stopWhen: '{monitor: max, above: 10}',
    note: 'the lower states lose stability at the fold (ignition); past it the branch turns back through unstable states',
  },
  'allen-cahn': {
    parameter: 'lambda',
    bounds: () => [0, 100],
    step: { initial: 0.5, min: 1e-8, max: 2 },
    maxPoints: 300,
    eigenvalues: 4,
    note: 'u = 0 is a solution for every lambda; pitchforks leave it where lambda crosses the Laplacian eigenvalues',
  },
  'gray-scott': {
    parameter: 'F',
    bounds: () => [0.01, 0.1],
    step: { initial: 0.002, min: 1e-10, max: 0.01 },
    maxPoints: 300,
    eigenvalues: 6,
    note: 'from the uniform state (1, 0); start from initial: pulse to follow spot patterns instead',
  },
  brusselator: {
    parameter: 'b',
    bounds: () => [1, 8],
    step: { initial: 0.05, min: 1e-8, max: 0.25 },
    maxPoints: 300,
    eigenvalues: 6,
    length: 10,
    note: 'the uniform state (a, b/a) meets Turing branch points and a Hopf point as b grows (length 10 leaves room for patterns; following the pattern branches makes a longer run: depth 0 skips them)',
  },
  elastica: {
    parameter: 'lambda',
    bounds: () => [0, 50],
    step: { initial: 0.5, min: 1e-8, max: 2 },
    maxPoints: 300,
    eigenvalues: 4,
    note: 'the straight strut buckles at branch points near lambda = n²π²',
  },
  'beam-foundation': {
    parameter: 'P',
    bounds: () => [0, 60],
    step: { initial: 0.5, min: 1e-8, max: 2 },
    maxPoints: 300,
    eigenvalues: 4,
    note: 'the straight beam buckles at branch points; a softening foundation (k3 > 0) makes them subcritical',
  },
};

/**
 * Curve starters (`--follow`): which parameter moves, which adjusts, and where the first point
 * comes from, per model and kind; models with one parameter have none.
 */
interface CurveSuggestion {
  /** Model keys set for the curve (e.g. convective walls, a pulse to start from). */
  options?: Record<string, string>;
  parameters?: Record<string, number>;
  parameter: string;
  free: string;
  bounds: [number, number];
  freeBounds?: [number, number];
  step: { initial: number; max: number };
  /** Largest step of the search for the first point (when the default, 0.5, could step over it). */
  search?: number;
  /** Domain length per axis (default 1). */
  length?: number;
  /** The `initial:` line (a start state the first point is searched from). */
  initial?: string;
  /** Which way the free parameter moves in that search (default increase). */
  freeDirection?: 'increase' | 'decrease';
  note: string;
}

type StarterKind = 'fold' | 'branch-point' | 'hopf';
const starterKinds: readonly StarterKind[] = ['fold', 'branch-point', 'hopf'];

const curveSuggestions: Record<string, Partial<Record<StarterKind, CurveSuggestion>>> = {
  bratu: {
    fold: {
      options: { boundary: 'robin' },
      parameters: { lambda: 0.1, biot: 1 },
      parameter: 'biot',
      free: 'lambda',
      bounds: [0.01, 100],
      step: { initial: 0.05, max: 5 },
      note: 'the ignition limit against the Biot number: the fold met raising lambda at biot = 1, followed both ways (Semenov’s 2·biot/e for small biot; the cold-wall fold for large)',
    },
  },
  brusselator: {
    'branch-point': {
      options: { boundary: 'neumann' },
      length: 20,
      parameters: { a: 2, b: 2, Du: 1, Dv: 8 },
      parameter: 'a',
      free: 'b',
      bounds: [1, 4],
      step: { initial: 0.05, max: 0.1 },
      note: 'the Turing line: the first branch point of the uniform state met raising b, followed as a moves; where another mode takes over, a new curve follows it',
    },
    hopf: {
      options: { boundary: 'neumann' },
      length: Math.PI,
      parameters: { a: 1, b: 1.5, Du: 1, Dv: 4 },
      parameter: 'a',
      free: 'b',
      bounds: [0.5, 3],
      step: { initial: 0.05, max: 0.2 },
      note: 'the oscillation boundary of the uniform state: the first Hopf point met raising b, followed as a moves (b = 1 + a², ω = a), with zero-Hopf points where a pattern mode also goes unstable',
    },
  },
  'gray-scott': {
    hopf: {
      options: { boundary: 'neumann' },
      parameters: { F: 0.035, k: 0.05, Du: 1, Dv: 1 },
      initial: '{u: 0.2912622971971077, v: 0.2918331717423674}',
      freeDirection: 'decrease',
      parameter: 'k',
      free: 'F',
      bounds: [0.02, 0.07],
      freeBounds: [0, 1],
      step: { initial: 0.002, max: 0.005 },
      note: 'the oscillation boundary of the uniform fed state, (F + k)² = F·√k: the Hopf point met lowering F from the upper uniform state, followed both ways in k — to a Bautin point one way, to the Bogdanov–Takens point on the fold curve the other',
    },
  },
  'beam-foundation': {
    fold: {
      parameters: { P: 0, imperfection: 0.01 },
      parameter: 'imperfection',
      free: 'P',
      bounds: [0.0001, 0.05],
      step: { initial: 0.002, max: 0.01 },
      search: 0.1,
      note: 'imperfection sensitivity: the limit load met loading the slightly crooked beam, followed as the imperfection grows',
    },
    'branch-point': {
      parameter: 'kf',
      free: 'P',
      bounds: [0, 2000],
      step: { initial: 10, max: 50 },
      note: 'the buckling load of the straight beam against the foundation stiffness; where another mode buckles first, a new curve follows it',
    },
  },
};

/** A commented starter of a curve run (`branchline new MODEL --follow KIND`). */
export function curveStarterCase(id: string, follow: StarterKind, dimension?: number): string {
  const entry = Object.hasOwn(models, id) ? models[id] : undefined;
  if (!entry) throw new InputError(`'${id}' is not a known model (accepted: ${Object.keys(models).join(', ')})`);
  const s = curveSuggestions[id]?.[follow];
  if (!s) {
    const offered = Object.entries(curveSuggestions).flatMap(([m, k]) => Object.keys(k).map((kind) => `${m} --follow ${kind}`));
    throw new InputError(`--follow ${follow}: no curve starter for model '${id}' (offered: ${offered.join(', ')}); a curve needs two parameters — add continuation.follow and free to a starter of your own`);
  }
  const dim = dimension ?? entry.dimensions[0];
  if (!entry.dimensions.includes(dim)) throw new InputError(`--dimensions: model '${id}' supports ${entry.dimensions.map((d) => `${d}D`).join(', ')}, not ${dim}D`);
  const intervals = gridFor(dim);
  const problem: Problem = entry.factory({ ...(s.options ?? {}), grid: { intervals: intervals.map(() => 8), length: intervals.map(() => s.length ?? 1) } });
  const monitors = problem.monitors.map((m) => m.name);
  const what = follow === 'hopf' ? 'Hopf point' : follow.replace('-', ' ');
  const lines = [
    `# A starter case for a curve run of the model '${id}': a ${what} followed in two parameters.`,
    `# ${s.note}.`,
    '# Check it, then run it:',
    `#   branchline check ${id}-${follow}-curve.yaml && branchline run ${id}-${follow}-curve.yaml`,
    `name: ${id}-${follow}-curve`,
    `model: ${id}`,
    ...Object.entries(s.options ?? {}).map(([k, v]) => `${k}: ${v}`),
    'grid:',
    c(`  intervals: [${intervals.join(', ')}]`, `intervals per axis; h = length / intervals`),
    ...(s.length ? [c(`  length: [${intervals.map(() => s.length).join(', ')}]`, 'domain length per axis')] : []),
    ...(s.initial ? [c(`initial: ${s.initial}`, 'the start state (a uniform state)')] : []),
    c('parameters:', `start values; the first ${what} is searched for from here`),
    ...problem.parameters.map((p) => c(`  ${p.name}: ${yamlNumber(s.parameters?.[p.name] ?? p.default)}`, p.description)),
    'continuation:',
    c(`  follow: ${follow}`, 'fold | branch-point (of a uniform state) | hopf: follow it in two parameters'),
    c(`  parameter: ${s.parameter}`, 'moves along the curve'),
    c(`  bounds: [${yamlNumber(s.bounds[0])}, ${yamlNumber(s.bounds[1])}]`, `the curve ends when ${s.parameter} reaches either end`),
    c('  direction: both', 'increase | decrease | both (one curve each way from the first point)'),
    c(`  free: ${s.free}`, `adjusts to stay on the ${what}`),
    s.freeBounds ? c(`  free-bounds: [${yamlNumber(s.freeBounds[0])}, ${yamlNumber(s.freeBounds[1])}]`, `the curve ends there too`) : `  # free-bounds: [low, high]      # the curve ends there too`,
    c(`  free-direction: ${s.freeDirection ?? 'increase'}`, `the first ${what} is met moving ${s.free} this way from the start`),
    ...(s.search ? [c(`  search: {step: {max: ${yamlNumber(s.search)}}}`, `steps of that search (small enough not to step over it)`)] : []),
    '  # start from one of an earlier run instead: start: {run: runs/earlier, point: ' + `${follow}}` + (follow === 'hopf' ? '   # or a bogdanov-takens point of a fold curve' : ''),
    c(`  step: {initial: ${yamlNumber(s.step.initial)}, max: ${yamlNumber(s.step.max)}}`, 'arclength steps in the weighted norm (both parameters count)'),
    c('  max-points: 500', 'per curve'),
    `  # stop-when: [{monitor: ${monitors[0] ?? 'max'}, above: 10}]   # monitors: ${monitors.join(', ')}`,
    '  # newton: {tolerance: 1.0e-9, max-iterations: 10}',
    ...(follow === 'hopf' ? [c(`stability: {eigenvalues: ${defaultHopfEigenvalues}}`, 'rightmost eigenvalues per point, to find double-Hopf points (0: none, faster)')] : []),
    'output:',
    c('  solutions: special', `node arrays (.npy) at ${follow === 'hopf' ? 'zero-Hopf, Bautin, double-Hopf and Bogdanov–Takens points' : 'cusps, Bogdanov–Takens points, mode changes'} and ends | none | all`),
    'checkpoint:',
    c(`  every-points: ${defaultCheckpoint.everyPoints}`, 'write a checkpoint (for `branchline resume`) this often...'),
    c(`  every-seconds: ${defaultCheckpoint.everySeconds}`, '...and at least this often'),
  ];
  if (entry.caution) lines.push(`# Caution: ${entry.caution}`);
  return lines.join('\n') + '\n';
}

/** A line with its comment aligned (the comment starts at column 34). */
const c = (text: string, comment: string): string => `${text.padEnd(32)} # ${comment}`;

const gridFor = (dim: number): number[] => new Array(dim).fill([100, 64, 24][dim - 1]);

/** Numbers as YAML reads them back (exponents in the 1.0e-8 form that YAML 1.1 readers also take). */
function yamlNumber(x: number): string {
  const t = String(x);
  return /e/.test(t) && !/\./.test(t.split('e')[0]) ? t.replace('e', '.0e') : t;
}

function genericSuggestion(p: ParameterSpec): Suggestion {
  const lo = p.min ?? p.default - Math.max(1, Math.abs(p.default));
  const hi = p.max ?? p.default + Math.max(1, 3 * Math.abs(p.default));
  const span = hi - lo;
  return {
    parameter: p.name,
    bounds: () => [lo, hi],
    step: { initial: span / 100, min: span * 1e-9, max: span / 10 },
    maxPoints: 300,
    eigenvalues: 4,
    note: 'set the bounds to the range you want to explore',
  };
}

function optionLines(specs: readonly OptionSpec[]): string[] {
  const lines: string[] = [];
  for (const o of specs) {
    if (o.name === 'grid' || o.name === 'parameters') continue;
    if (o.choices) {
      lines.push(`# ${o.description} (one of: ${o.choices.join(', ')})`);
      lines.push(`${o.name}: ${o.choices[0]}`);
    } else {
      lines.push(`# ${o.description}`);
      lines.push(`# ${o.name}: false`);
    }
  }
  return lines;
}

/** Commented lines on the initial state and the time integration (`branchline settle`). */
function initialAndTimeLines(fields: readonly string[], dim: number): string[] {
  const centre = ['x', 'y', 'z'].slice(0, dim).map((c) => `(${c}-0.5)^2`).join(' + ');
  return [
    '# initial state (a continuation starts Newton from it; branchline settle integrates from it):',
    `# initial: {${fields.map((f, i) => (i === 0 ? `${f}: 1` : `${f}: "0.25*exp(-(${centre})/0.01)"`)).join(', ')}, noise: {amplitude: 0.001, seed: 1}}`,
    '#   per field a number or an expression in x, y, z and the parameters; noise on top (seed recorded);',
    '#   from: a named state of the model or a .npy file as the base; extra unknowns by name',
    '# time integration to a steady state (branchline settle; start a run from it: start: {run: DIR, point: final}):',
    '# time: {end: 10000, tolerance: {relative: 1.0e-4}, steady-tolerance: 1.0e-6}',
  ];
}

function commonTail(s: Suggestion, parameter: string, start: number, monitors: string[], dim: number): string[] {
  const [lo, hi] = s.bounds(dim);
  return [
    'continuation:',
    `  parameter: ${parameter}`,
    c(`  bounds: [${yamlNumber(lo)}, ${yamlNumber(hi)}]`, `the branch stops when ${parameter} reaches either end`),
    c(`  direction: ${start >= hi ? 'decrease' : 'increase'}`, `which way ${parameter} moves at the start: increase | decrease`),
    c('  method: arclength', 'arclength (passes folds) | natural (stops at the first fold)'),
    c(`  step: {initial: ${yamlNumber(s.step.initial)}, min: ${yamlNumber(s.step.min)}, max: ${yamlNumber(s.step.max)}}`, `arclength steps in the weighted (grid-independent) norm`),
    c(`  max-points: ${s.maxPoints}`, `per branch`),
    s.stopWhen ? `  stop-when: [${s.stopWhen}]` : `  # stop-when: [{monitor: ${monitors[0] ?? 'max'}, above: 10}]`,
    `  # monitors of this model: ${monitors.join(', ')}`,
    c(`  branch-switching: {depth: ${defaultSettings.branchSwitching.depth}}`, `follow the branches crossing at branch points this many levels deep (the default when left out; 0: none)`),
    '  # newton: {residual-tolerance: 1.0e-9, step-tolerance: 1.0e-9, max-iterations: 10}   # residual relative to its terms; step relative to 1 + |x|; tolerance: T sets both',
    '  # locate: {folds: true, branch-points: true}',
    'stability:',
    c(`  eigenvalues: ${s.eigenvalues}`, `rightmost eigenvalues per point, for stability and Hopf points (0: none)`),
    'output:',
    c('  solutions: special', 'node arrays (.npy) at special points | none | all (every point)'),
    '  # directory: runs/my-study     # default: runs/<name> in the current folder',
    'checkpoint:',
    c(`  every-points: ${defaultCheckpoint.everyPoints}`, `write a checkpoint (for \`branchline resume\`) this often...`),
    c(`  every-seconds: ${defaultCheckpoint.everySeconds}`, `...and at least this often`),
  ];
}

/** A commented starter case for a built-in model (valid as it stands: `run` accepts it). */
export function starterCase(id: string, dimension?: number): string {
  const entry = Object.hasOwn(models, id) ? models[id] : undefined;
  if (!entry) throw new InputError(`'${id}' is not a known model (accepted: ${Object.keys(models).join(', ')})`);
  const dim = dimension ?? entry.dimensions[0];
  if (!entry.dimensions.includes(dim)) {
    throw new InputError(`--dimensions: model '${id}' supports ${entry.dimensions.map((d) => `${d}D`).join(', ')}, not ${dim}D`);
  }
  const intervals = gridFor(dim);
  const head = [
    `# A starter case for the model '${id}': ${entry.description}.`,
    '# Every value below is a starting point to edit; `branchline models` lists the keys of every',
    '# model. Check it, then run it:',
    `#   branchline check ${id}-study.yaml && branchline run ${id}-study.yaml`,
    `name: ${id}-study`,
    `model: ${id}`,
  ];
  if (id === 'reaction-diffusion') {
    const s: Suggestion = {
      parameter: 'mu',
      bounds: () => [0, 4],
      step: { initial: 0.05, min: 1e-8, max: 0.5 },
      maxPoints: 400,
      eigenvalues: 4,
      stopWhen: '{monitor: max, above: 10}',
      note: '',
    };
    const lines = [
      ...head,
      '# The model is given by expressions: the fields, their reaction terms and diffusion',
      '# coefficients, the boundary conditions and the initial state. This one is an exothermic',
      '# reaction in one field u with strength mu (edit freely; more fields: fields: [u, v] and',
      '# one entry per field below).',
      'fields: [u]',
      c('parameters:', 'names with start values (or {default, description, min, max})'),
      '  mu: 0.1',
      c('reaction:', 'expressions in the fields, the parameters and x, y, z'),
      '  u: mu * exp(u)',
      c('diffusion:', 'a number, a parameter name or an expression in the parameters'),
      '  u: 1',
      c('boundary: dirichlet', 'neumann | dirichlet | robin | periodic, or per side / per field (see `branchline models`)'),
      '# robin (convective) sides: {kind: robin, coefficient: 2, value: 0} means ∂u/∂n + 2·u = 0',
      '# initial: {u: "0.1*sin(pi*x)"}  # initial state per field: a number or an expression in x, y, z and the parameters (default 0)',
      'grid:',
      c(`  intervals: [${intervals.join(', ')}]`, `intervals per axis (1 to 3 axes); h = length / intervals`),
      `  length: [${intervals.map(() => 1).join(', ')}]`,
      '# time integration to a steady state (branchline settle; start a run from it: start: {run: DIR, point: final}):',
      '# time: {end: 100, steady-tolerance: 1.0e-6}',
      ...commonTail(s, 'mu', 0.1, ['max', 'min', 'l2-norm'], dim),
      `# Caution: ${entry.caution ?? ''}`,
    ];
    return lines.join('\n') + '\n';
  }
  // build the problem with the default options on a small grid: its own parameters and monitors
  const problem: Problem = entry.factory({ grid: { intervals: intervals.map(() => 8), length: intervals.map(() => 1) } });
  const params = problem.parameters;
  const s = suggestions[id] ?? genericSuggestion(params[0]);
  const start = params.find((p) => p.name === s.parameter)?.default ?? 0;
  const [lo, hi] = s.bounds(dim);
  const startValue = start >= lo && start < hi ? start : lo + (hi - lo) / 100;
  const lines = [
    ...head,
    ...optionLines(entry.options),
    'grid:',
    c(`  intervals: [${intervals.join(', ')}]`, `intervals per axis (${entry.dimensions.map((d) => `${d}D`).join(', ')}); h = length / intervals`),
    c(`  length: [${intervals.map(() => s.length ?? 1).join(', ')}]`, `domain length per axis`),
    c('parameters:', 'start values (the model\'s defaults)'),
    ...params.map((p) => {
      const text = `${p.name}: ${yamlNumber(p.name === s.parameter ? startValue : p.default)}`;
      return c(`  ${text}`, p.description);
    }),
    `# ${s.note}`,
    ...initialAndTimeLines(problem.describe().fields, dim),
    ...commonTail(s, s.parameter, startValue, problem.monitors.map((m) => m.name), dim),
  ];
  if (entry.caution) lines.push(`# Caution: ${entry.caution}`);
  return lines.join('\n') + '\n';
}

/** `branchline new MODEL`: print a commented starter case. */
export function registerNew(program: Command, { io }: CommandContext): void {
  program
    .command('new')
    .description('print a commented starter case for a model on stdout (save it, edit it, run it)')
    .argument('<model>', `a model id: ${Object.keys(models).join(', ')}`)
    .option('--dimensions <d>', 'number of space dimensions (1, 2 or 3, as the model supports; default its first)')
    .option('--follow <kind>', 'a curve run instead: fold, branch-point or hopf followed in two parameters')
    .addHelpText(
      'after',
      '\nExamples:\n  branchline new bratu > slab.yaml && branchline run slab.yaml\n  branchline new bratu --follow fold > ignition-limit.yaml\n  branchline new brusselator --follow hopf > oscillation-boundary.yaml\nExit codes: 0 printed; 2 unknown model, dimension or curve kind.',
    )
    .action((id: string, opts: { dimensions?: string; follow?: string }) => {
      let dim: number | undefined;
      if (opts.dimensions !== undefined) {
        dim = Number(opts.dimensions);
        if (!Number.isInteger(dim) || dim < 1 || dim > 3) throw new InputError(`--dimensions: '${opts.dimensions}' is not accepted (accepted: 1, 2 or 3)`);
      }
      if (opts.follow !== undefined) {
        if (!(starterKinds as readonly string[]).includes(opts.follow)) throw new InputError(`--follow: '${opts.follow}' is not accepted (accepted: ${starterKinds.join(', ')})`);
        io.out(curveStarterCase(id, opts.follow as StarterKind, dim));
        return;
      }
      io.out(starterCase(id, dim));
    });
}
