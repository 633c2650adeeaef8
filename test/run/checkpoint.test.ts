/**
 * Checkpoints: the file format round-trips every value bit for bit, any damage is detected and
 * never read, the previous checkpoint survives a crash in the middle of a replacement, and the
 * real engine resumed from a checkpoint (through the file format) repeats the uninterrupted run
 * event for event — with branch switching (the queue of branches) and stability (eigen-solver
 * warm starts) on, and on a non-symmetric problem whose eigenvalues are sensitive.
 */
import { existsSync, mkdtempSync, readFileSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import fc from 'fast-check';
import { afterAll, describe, expect, it } from 'vitest';
import { models } from '../../discretisations/index.js';
import { Continuation, type EngineState, syncIndex } from '../../src/continuation/engine.js';
import { type ContinuationSettings, type EngineEvent, defaultSettings } from '../../src/continuation/types.js';
import { resolveParameters } from '../../src/problem/problem.js';
import {
  type CheckpointDocument,
  CheckpointError,
  checkpointFile,
  decodeCheckpoint,
  encodeCheckpoint,
  previousCheckpointFile,
  readCheckpoint,
  writeCheckpoint,
} from '../../src/run/checkpoint.js';
import { emptyLedger } from '../../src/run/run-directory.js';
import { syncEvery } from '../../src/run/run-case.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-checkpoint-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));
const fresh = (): string => mkdtempSync(join(tmp, 'd'));

function document(engine: unknown, sequence = 1): CheckpointDocument {
  return {
    format: 'branchline checkpoint',
    version: 1,
    sequence,
    written: '2030-01-01T00:00:00.000Z',
    reason: 'points',
    run: { started: '2030-01-01T00:00:00.000Z', seconds: 1.5, caseFile: '/cases/a.yaml', resumes: [] },
    case: { name: 'a', model: 'bratu' },
    ledger: { ...emptyLedger(), points: 3, csvLengths: { 'branches/1.csv': 120 } },
    engine,
  };
}

/** Deep equality that tells -0 from 0 and compares NaN with NaN (Object.is on every number). */
function same(a: unknown, b: unknown): boolean {
  if (typeof a === 'number' || typeof b === 'number') return Object.is(a, b);
  if (ArrayBuffer.isView(a) || ArrayBuffer.isView(b)) {
    if (!ArrayBuffer.isView(a) || !ArrayBuffer.isView(b) || a.constructor !== b.constructor) return false;
    const x = a as unknown as ArrayLike<number>;
    const y = b as unknown as ArrayLike<number>;
    return x.length === y.length && Array.from(x).every((v, i) => Object.is(v, y[i]));
  }
  if (Array.isArray(a) || Array.isArray(b)) {
    return Array.isArray(a) && Array.isArray(b) && a.length === b.length && a.every((v, i) => same(v, b[i]));
  }
  if (a && b && typeof a === 'object' && typeof b === 'object') {
    const ka = Object.keys(a).filter((k) => (a as Record<string, unknown>)[k] !== undefined).sort();
    const kb = Object.keys(b).filter((k) => (b as Record<string, unknown>)[k] !== undefined).sort();
    return same(ka, kb) && ka.every((k) => same((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k]));
  }
  return a === b;
}

const anyDouble = fc.double({ noDefaultInfinity: false, noNaN: false });
const value = fc.letrec((tie) => ({
  leaf: fc.oneof(anyDouble, fc.string(), fc.boolean(), fc.constant(null), fc.constantFrom(-0, NaN, Infinity, -Infinity, 5e-324, Number.MAX_VALUE)),
  f64: fc.float64Array({ maxLength: 40 }),
  i32: fc.int32Array({ maxLength: 10 }),
  numbers: fc.array(anyDouble, { minLength: 0, maxLength: 40 }),
  node: fc.oneof(
    { depthSize: 'small' },
    tie('leaf'),
    tie('f64'),
    tie('i32'),
    tie('numbers'),
    fc.array(tie('node'), { maxLength: 4 }),
    fc.dictionary(fc.oneof(fc.string({ maxLength: 6 }), fc.constantFrom('$f64', '$num', '$object', '__proto__x')), tie('node'), { maxKeys: 4 }),
  ),
}));

describe('the checkpoint file format', () => {
  it('gives back every value bit for bit (nan, ±inf, -0, typed arrays, long number lists, keys starting with $)', () => {
    fc.assert(
      fc.property(value.node, (v) => {
        const back = decodeCheckpoint(encodeCheckpoint(document(v)));
        return same(back.engine, v) && same(back.ledger, document(v).ledger);
      }),
      { numRuns: 300 },
    );
  });

  it('detects any damaged byte and any truncation (never reads a wrong document)', () => {
    const bytes = encodeCheckpoint(document({ x: Float64Array.from([1, 2, 3, Math.PI]), warm: { vectors: [Array.from({ length: 20 }, (_, i) => i / 7)] } }));
    fc.assert(
      fc.property(fc.nat(bytes.length - 1), fc.integer({ min: 1, max: 255 }), (at, flip) => {
        const damaged = Uint8Array.from(bytes);
        damaged[at] ^= flip;
        expect(() => decodeCheckpoint(damaged)).toThrow(CheckpointError);
        return true;
      }),
      { numRuns: 300 },
    );
    fc.assert(
      fc.property(fc.nat(bytes.length - 1), (length) => {
        expect(() => decodeCheckpoint(bytes.subarray(0, length))).toThrow(CheckpointError);
        return true;
      }),
      { numRuns: 200 },
    );
    expect(() => decodeCheckpoint(Buffer.concat([bytes, Buffer.from([0])]))).toThrow(/incomplete or damaged/);
  });

  it('keeps the previous checkpoint until the new one is in place, and falls back to it', () => {
    const dir = fresh();
    expect(() => readCheckpoint(dir)).toThrow(/no checkpoint was written/);
    writeCheckpoint(dir, document({ a: 1 }, 1));
    writeCheckpoint(dir, document({ a: 2 }, 2));
    expect(readCheckpoint(dir).document.engine).toEqual({ a: 2 });
    expect(readCheckpoint(dir).file).toBe(checkpointFile);
    // a crash between the two renames of a replacement: only the previous one is in place
    renameSync(join(dir, checkpointFile), join(dir, '.checkpoint.bin.1.1.tmp'));
    expect(readCheckpoint(dir)).toMatchObject({ file: previousCheckpointFile, document: { sequence: 1 } });
    // a damaged newest checkpoint: the previous one is used, and the damage is reported
    writeCheckpoint(dir, document({ a: 3 }, 3));
    const bytes = readFileSync(join(dir, checkpointFile));
    writeFileSync(join(dir, checkpointFile), bytes.subarray(0, bytes.length - 10));
    const found = readCheckpoint(dir);
    expect(found.document.engine).toEqual({ a: 1 });
    expect(found.skipped.join()).toMatch(/checkpoint\.bin is incomplete or damaged/);
    // both damaged: refused
    writeFileSync(join(dir, previousCheckpointFile), 'BLCHKPT1 and then nothing useful');
    expect(() => readCheckpoint(dir)).toThrow(/no usable checkpoint: checkpoint\.bin is incomplete or damaged.*; checkpoint\.previous\.bin/);
    expect(existsSync(join(dir, checkpointFile))).toBe(true);
  });
});

// ---------------------------------------------------------------------------------------------
// The engine resumed through checkpoint files

function flat(e: EngineEvent): unknown[] {
  switch (e.type) {
    case 'point': {
      const p = e.point;
      return ['point', p.branch, p.index, p.arclength, p.parameter, p.step, p.newtonIterations, p.residual, p.determinantSign, ...p.u, ...(p.stability ? [p.stability.leadingReal, p.stability.leadingImag, p.stability.unstableCount, p.stability.stable] : [])];
    }
    case 'special':
      return ['special', e.point.kind, e.point.branch, e.point.value, e.point.arclength, ...e.point.u];
    case 'branch-start':
      return ['start', e.branch.id, e.branch.depth];
    case 'branch-end':
      return ['end', e.branch, e.reason];
    case 'log':
      return ['log', e.message];
  }
}

/** Drive an engine as runCase does: restart its linear algebra at every sync point and take the checkpoint there. */
function* drive(c: Continuation, startPoints: number): Generator<{ e: EngineEvent; checkpoint?: { state: EngineState; points: number } }> {
  let points = startPoints;
  let seen = startPoints;
  let due = false;
  for (const e of c.events()) {
    if (e.type === 'point') {
      points++;
      // sync points count along each branch (syncIndex)
      if (syncIndex(e.point.index, syncEvery)) due = true;
    }
    let checkpoint: { state: EngineState; points: number } | undefined;
    if (c.canSnapshot && points > seen) {
      seen = points;
      if (due) {
        due = false;
        checkpoint = { state: c.snapshot(), points };
        c.restartLinearAlgebra();
      }
    }
    yield { e, ...(checkpoint ? { checkpoint } : {}) };
  }
}

const cases: [string, string, Record<string, unknown>, Record<string, number>, Partial<ContinuationSettings>][] = [
  [
    'Allen–Cahn, two levels of branch switching, 3 eigenvalues',
    'allen-cahn',
    { grid: { intervals: [60] } },
    { lambda: 1 },
    { parameter: 'lambda', bounds: [0, 45], step: { initial: 0.5, min: 1e-8, max: 3 }, maxPoints: 40, branchSwitching: { depth: 2 }, stability: { eigenvalues: 3 } },
  ],
  [
    'Brusselator on a no-flux line (non-symmetric, complex eigenvalues), 4 eigenvalues',
    'brusselator',
    { grid: { intervals: [24], length: [3] }, boundary: 'neumann' },
    { a: 2, b: 1.5 },
    { parameter: 'b', bounds: [1, 6], step: { initial: 0.1, min: 1e-8, max: 0.4 }, maxPoints: 40, branchSwitching: { depth: 1 }, stability: { eigenvalues: 4 } },
  ],
];

describe('the engine resumed from checkpoint files repeats the uninterrupted run', () => {
  for (const [what, model, options, given, partial] of cases) {
    it(what, () => {
      const problem = models[model].factory(options as never);
      const params = resolveParameters(problem, given);
      const settings = { ...defaultSettings, ...partial } as ContinuationSettings;
      const whole: unknown[][] = [];
      const checkpoints: { at: number; bytes: Uint8Array; points: number }[] = [];
      const c = new Continuation(problem, params, settings);
      for (const { e, checkpoint } of drive(c, 0)) {
        whole.push(flat(e));
        if (checkpoint) checkpoints.push({ at: whole.length, bytes: encodeCheckpoint(document(checkpoint.state)), points: checkpoint.points });
      }
      c.dispose();
      expect(whole.filter((f) => f[0] === 'start').length).toBeGreaterThan(1); // the queue of branches is exercised
      if (model === 'brusselator') expect(whole.some((f) => f[0] === 'special' && f[1] === 'hopf')).toBe(true);
      expect(checkpoints.length).toBeGreaterThan(8);
      // resume from a spread of checkpoints: every later event the same, every number within
      // 1e-10 (relative) — in fact bit for bit, since sync points remove every hidden history
      const picks = checkpoints.filter((_, i) => i % Math.ceil(checkpoints.length / 6) === 1);
      let compared = 0;
      let worst = 0;
      let differing = 0;
      for (const k of picks) {
        const state = decodeCheckpoint(k.bytes).engine as EngineState;
        const r = new Continuation(problem, params, settings, { state });
        let j = k.at;
        for (const { e } of drive(r, k.points)) {
          const a = flat(e);
          const b = whole[j++];
          expect(a.length, `event ${j - 1} resumed at ${k.at}`).toBe(b.length);
          for (let i = 0; i < a.length; i++) {
            if (typeof a[i] === 'number' && typeof b[i] === 'number') {
              const x = a[i] as number;
              const y = b[i] as number;
              if (!Object.is(x, y)) differing++;
              worst = Math.max(worst, Math.abs(x - y) / Math.max(1, Math.abs(y)));
              compared++;
            } else expect(a[i]).toEqual(b[i]);
          }
        }
        r.dispose();
        expect(j, `events after resuming at ${k.at}`).toBe(whole.length);
      }
      expect(compared).toBeGreaterThan(1000);
      expect(worst).toBeLessThanOrEqual(1e-10);
      expect(differing).toBe(0);
    });
  }
});
