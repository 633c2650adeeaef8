/**
 * The `initial:` key: the same forms for every model (named states, per-field numbers and
 * expressions in x, y, z and the parameters, extra unknowns, seeded noise, a .npy file), each
 * checked against the formula evaluated here; bad forms refused with one line naming the field.
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { models, reactionDiffusion } from '../../discretisations/index.js';
import { caseDocument, prepareCase, prepareCaseObject } from '../../src/run/case.js';
import { CaseError } from '../../src/run/errors.js';
import { writeNpy } from '../../src/run/writers.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-initial-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));
let counter = 0;
function caseFile(text: string): string {
  const file = join(tmp, `case-${++counter}.yaml`);
  writeFileSync(file, text);
  return file;
}

const spots = (initial: string, extra = '') => `
name: spots
model: gray-scott
boundary: periodic
grid: {intervals: [8, 6], length: [2, 1.5]}
parameters: {F: 0.03}
${extra}
initial: ${initial}
continuation: {parameter: F, bounds: [0.01, 0.1]}
`;

async function errorOf(text: string): Promise<CaseError> {
  const file = caseFile(text);
  try {
    await prepareCase(file);
  } catch (e) {
    expect(e).toBeInstanceOf(CaseError);
    expect((e as Error).message).not.toMatch(/\n/);
    return e as CaseError;
  }
  throw new Error('expected the case to be refused');
}

/** Node values of field f (the node array, x fastest). */
function field(prepared: Awaited<ReturnType<typeof prepareCase>>, f: number): Float64Array {
  const { data } = prepared.problem.toNodeArray(prepared.start!.u, prepared.params);
  const n = data.length / 2;
  return data.subarray(f * n, (f + 1) * n);
}

describe('initial states written down', () => {
  it('per field: a number and an expression in x, y and the parameters, evaluated at the nodes', async () => {
    const prepared = await prepareCase(caseFile(spots(`{u: 1, v: "F*10*exp(-((x-1)^2 + (y-0.75)^2)/0.1)"}`)));
    const u = field(prepared, 0);
    const v = field(prepared, 1);
    expect(Array.from(u).every((x) => x === 1)).toBe(true);
    const h = 0.25; // 2/8 and 1.5/6
    for (let j = 0; j < 6; j++) {
      for (let i = 0; i < 8; i++) {
        const x = i * h;
        const y = j * h;
        expect(v[j * 8 + i]).toBeCloseTo(0.3 * Math.exp(-((x - 1) ** 2 + (y - 0.75) ** 2) / 0.1), 14);
      }
    }
    expect(prepared.start!.from).toBe('the initial state of the case (u and v written down)');
  });

  it('noise on top is uniform in [−A, A], reproduced by its seed, and its seed is recorded when drawn', async () => {
    const a = await prepareCase(caseFile(spots('{u: 1, v: 0, noise: {amplitude: {v: 0.01}, seed: 42}}')));
    const b = await prepareCase(caseFile(spots('{u: 1, v: 0, noise: {amplitude: {v: 0.01}, seed: 42}}')));
    const c = await prepareCase(caseFile(spots('{u: 1, v: 0, noise: {amplitude: {v: 0.01}, seed: 43}}')));
    expect(Array.from(a.start!.u)).toEqual(Array.from(b.start!.u));
    expect(Array.from(a.start!.u)).not.toEqual(Array.from(c.start!.u));
    expect(Array.from(field(a, 0)).every((x) => x === 1)).toBe(true);
    const v = Array.from(field(a, 1));
    expect(Math.max(...v.map(Math.abs))).toBeLessThanOrEqual(0.01);
    expect(Math.max(...v) - Math.min(...v)).toBeGreaterThan(0.01);
    // without a seed one is drawn, recorded in the resolved case, and reproduces the state
    const d = await prepareCase(caseFile(spots('{u: 1, v: 0, noise: {amplitude: 0.01}}')));
    const doc = caseDocument(d.case) as { initial: { noise: { seed: number } } };
    expect(Number.isInteger(doc.initial.noise.seed)).toBe(true);
    const again = await prepareCaseObject(doc, { label: 'again', baseDir: tmp });
    expect(Array.from(again.start!.u)).toEqual(Array.from(d.start!.u));
  });

  it('a named state of the model stays a word (gray-scott: pulse), and values and noise can go on top of it', async () => {
    const named = await prepareCase(caseFile(spots('pulse')));
    expect(named.start).toBeUndefined();
    const problem = models['gray-scott'].factory({ grid: { intervals: [8, 6], length: [2, 1.5] }, boundary: 'periodic', initial: 'pulse' });
    expect(Array.from(named.problem.initialGuess(named.params))).toEqual(Array.from(problem.initialGuess(named.params)));
    expect(caseDocument(named.case).initial).toBe('pulse');
    const onTop = await prepareCase(caseFile(spots('{from: pulse, u: 0.5}')));
    expect(Array.from(field(onTop, 0)).every((x) => x === 0.5)).toBe(true);
    const pulse = problem.toNodeArray(problem.initialGuess(onTop.params), onTop.params).data;
    expect(Array.from(field(onTop, 1))).toEqual(Array.from(pulse.subarray(48)));
  });

  it('reads a .npy node array, alone or under values and noise', async () => {
    const data = Float64Array.from({ length: 96 }, (_, k) => k / 96);
    writeNpy(join(tmp, 'state.npy'), [2, 6, 8], data);
    const plain = await prepareCase(caseFile(spots('state.npy')));
    expect(Array.from(plain.problem.toNodeArray(plain.start!.u, plain.params).data)).toEqual(Array.from(data));
    const mixed = await prepareCase(caseFile(spots('{from: state.npy, v: 0}')));
    expect(Array.from(field(mixed, 0))).toEqual(Array.from(data.subarray(0, 48)));
    expect(Array.from(field(mixed, 1)).every((x) => x === 0)).toBe(true);
  });

  it('gives the expression model the same state as its own initial option', async () => {
    const text = `
name: pellet
model: reaction-diffusion
fields: [c, T]
parameters: {Da: 0.1}
reaction: {c: -Da*c*exp(T), T: Da*c*exp(T)}
diffusion: {c: 1, T: 1}
boundary: dirichlet
grid: {intervals: [10]}
initial: {c: "1 - x*(1-x)", T: "Da*sin(pi*x)"}
continuation: {parameter: Da, bounds: [0, 1]}
`;
    const prepared = await prepareCase(caseFile(text));
    const own = reactionDiffusion({
      grid: { intervals: [10] },
      fields: ['c', 'T'],
      parameters: { Da: 0.1 },
      reaction: { c: '-Da*c*exp(T)', T: 'Da*c*exp(T)' },
      diffusion: { c: 1, T: 1 },
      boundary: 'dirichlet',
      initial: { c: '1 - x*(1-x)', T: 'Da*sin(pi*x)' },
    });
    const expected = own.initialGuess(prepared.params);
    for (let i = 0; i < expected.length; i++) expect(prepared.start!.u[i]).toBeCloseTo(expected[i], 14);
  });

  it('sets extra unknowns by name (the elastica’s end reaction)', async () => {
    const text = `
name: strut
model: elastica
grid: {intervals: [20]}
parameters: {lambda: 12}
initial: {theta: "0.3*cos(pi*x)", end-reaction: 0.25}
continuation: {parameter: lambda, bounds: [0, 50]}
`;
    const prepared = await prepareCase(caseFile(text));
    const u = prepared.start!.u;
    expect(u[u.length - 1]).toBe(0.25);
    expect(u[0]).toBeCloseTo(0.3, 14);
    expect(u[20]).toBeCloseTo(-0.3, 14);
  });
});

describe('bad initial states', () => {
  it.each([
    ['a bad expression', spots('{u: 1, v: "exp((x"}'), /: initial\.v: .*(parenthesis|expected|Unexpected)/i],
    ['a symbol the grid lacks', spots('{u: 1, v: "z"}'), /: initial\.v: .*'z'/],
    ['an unknown name', spots('{w: 1}'), /: initial\.w: 'w' is not accepted here \(accepted: a field \(u, v\)/],
    ['a word that is not a named state', spots('hot'), /: initial: 'hot' is not accepted \(accepted: a named state of this model \(uniform, pulse\) or a \.npy file/],
    ['a negative noise amplitude', spots('{noise: {amplitude: -1}}'), /: initial\.noise\.amplitude: -1 is not accepted/],
    ['a fractional seed', spots('{noise: {amplitude: 0.1, seed: 1.5}}'), /: initial\.noise\.seed: 1\.5 is not accepted \(accepted: a whole number/],
    ['a missing file', spots('{from: nothing.npy}'), /: initial\.from: .*nothing\.npy: no such file/],
    ['two base states', spots('{from: state.npy}', `start: {solution: ${'state.npy'}}`), /: initial\.from: names a state file, and start: gives a state too/],
  ])('%s is refused with one line', async (_what, text, pattern) => {
    writeNpy(join(tmp, 'state.npy'), [2, 6, 8], new Float64Array(96));
    const err = await errorOf(text);
    expect(err.message).toMatch(pattern);
  });

  it('a model without named states says which forms it takes', async () => {
    const err = await errorOf(`
model: bratu
grid: {intervals: [8]}
initial: pulse
continuation: {parameter: lambda, bounds: [0, 3]}
`);
    expect(err.message).toMatch(/initial: 'pulse' is not accepted \(accepted: this model has no named states: a \.npy file; or a map of per-field values\)/);
  });
});
