/**
 * The case key `initial:` — the state a continuation starts Newton from and a time integration
 * starts from, written down in the same words for every model:
 *
 *   initial: pulse                     # a named state of the model (gray-scott: uniform, pulse;
 *                                      # brusselator: uniform, perturbed)
 *   initial: saved/state.npy           # a node array (.npy, as in a run's solutions/ folder)
 *   initial:                           # per field a number or an expression in x, y, z and the
 *     u: 1                             # parameters; per extra unknown a number; noise on top
 *     v: 0.25*exp(-((x-0.5)^2 + (y-0.5)^2)/0.003)
 *     noise: {amplitude: 0.01, seed: 7}        # uniform on [-A, A] per node; amplitude per field
 *                                              # too ({v: 0.01}); no seed: one is drawn and recorded
 *     from: pulse                      # the base state the values and noise apply to: a named
 *                                      # state or a .npy file (default: the model's own guess)
 *
 * With `start:` (a state of an earlier run or a solution file) the values and noise apply to that
 * state instead (`from:` a file is then refused: two base states).
 *
 * Parsing only checks shapes (the problem is not built yet); `resolveInitial` returns the resolved
 * form stored in run.json (absolute file path, the seed filled in) and `initialDocument` writes it
 * back as a case key. The state itself is built by discretisations/initial-state.ts.
 */
import { randomInt } from 'node:crypto';
import { resolve } from 'node:path';
import { maxSeed } from '../linalg/random.js';
import type { InitialStateSpec } from '../../discretisations/initial-state.js';

/** The `initial:` key, checked and resolved. */
export interface ResolvedInitial {
  /** A named state of the model (given to the model as its `initial` option). */
  named?: string;
  /** A node-array file (absolute path). */
  file?: string;
  /** Per field (number or expression) and per extra unknown (number). */
  values: Record<string, number | string>;
  noise?: { amplitude: number | Record<string, number>; seed: number };
}

export const initialAccepted =
  "a named state of the model, a .npy file, or a map of per-field numbers or expressions in x, y, z and the parameters with optional noise: {amplitude, seed} and from: (a named state or a .npy file)";

type Fail = (field: string, detail: string) => never;

function isMap(v: unknown): v is Record<string, unknown> {
  return v !== null && typeof v === 'object' && !Array.isArray(v);
}

const show = (v: unknown): string => (typeof v === 'string' ? `'${v}'` : JSON.stringify(v) ?? String(v));

/** A base-state word or file: `.npy` paths are files, other words named states. */
function base(v: unknown, field: string, named: readonly string[] | undefined, baseDir: string, fail: Fail): { named?: string; file?: string } {
  if (typeof v !== 'string' || v.trim() === '') fail(field, `${show(v)} is not accepted (accepted: ${named?.length ? `${named.join(', ')} or ` : ''}a .npy file)`);
  const text = (v as string).trim();
  if (/\.npy$/i.test(text)) return { file: resolve(baseDir, text) };
  if (named === undefined) return { named: text };
  if (!named.includes(text)) {
    fail(field, `${show(text)} is not accepted (accepted: ${named.length ? `a named state of this model (${named.join(', ')}) or ` : 'this model has no named states: '}a .npy file${field === 'initial' ? '; or a map of per-field values' : ''})`);
  }
  return { named: text };
}

/**
 * Check the `initial:` key's shape. `named`: the model's named states (undefined: not known, a code
 * model — any word is passed on). Without a seed, noise gets a random one (recorded).
 */
export function resolveInitial(raw: unknown, named: readonly string[] | undefined, baseDir: string, fail: Fail): ResolvedInitial | undefined {
  if (raw === undefined || raw === null) return undefined;
  if (typeof raw === 'string') return { ...base(raw, 'initial', named, baseDir, fail), values: {} };
  if (!isMap(raw)) fail('initial', `${show(raw)} is not accepted (accepted: ${initialAccepted})`);
  const out: ResolvedInitial = { values: {} };
  for (const [key, v] of Object.entries(raw as Record<string, unknown>)) {
    const where = /^[\w:-]+$/.test(key) ? `initial.${key}` : 'initial';
    if (key === 'from') {
      Object.assign(out, base(v, where, named, baseDir, fail));
    } else if (key === 'noise' && isMap(v)) {
      const extra = Object.keys(v).filter((k) => k !== 'amplitude' && k !== 'seed');
      if (extra.length) fail(`initial.noise`, `unknown key '${extra[0]}' (accepted: amplitude, seed)`);
      const a = v.amplitude;
      if (a === undefined) fail('initial.noise.amplitude', 'is missing (accepted: a number >= 0, or one per field, e.g. {v: 0.01})');
      if (!(typeof a === 'number' && Number.isFinite(a) && a >= 0) && !isMap(a)) {
        fail('initial.noise.amplitude', `${show(a)} is not accepted (accepted: a number >= 0, or one per field, e.g. {v: 0.01})`);
      }
      if (isMap(a)) {
        for (const [f, x] of Object.entries(a)) {
          if (!(typeof x === 'number' && Number.isFinite(x) && x >= 0)) fail(`initial.noise.amplitude`, `${show(x)} for ${show(f)} is not accepted (accepted: a number >= 0)`);
        }
      }
      const s = v.seed;
      if (s !== undefined && !(typeof s === 'number' && Number.isInteger(s) && s >= 0 && s <= maxSeed)) {
        fail('initial.noise.seed', `${show(s)} is not accepted (accepted: a whole number from 0 to ${maxSeed}; leave it out for a random one, recorded in run.json)`);
      }
      out.noise = { amplitude: a as number | Record<string, number>, seed: s === undefined ? randomInt(maxSeed) : (s as number) };
    } else if (typeof v === 'number' || typeof v === 'string') {
      if (typeof v === 'number' && !Number.isFinite(v)) fail(where, `${show(v)} is not accepted (accepted: a finite number or an expression)`);
      out.values[key] = v;
    } else {
      fail(where, `${show(v)} is not accepted (accepted: a number or an expression in x, y, z and the parameters)`);
    }
  }
  return out;
}

/** The spec the state builder takes (values and noise). */
export function initialSpec(r: ResolvedInitial): InitialStateSpec {
  return { values: r.values, ...(r.noise ? { noise: r.noise } : {}) };
}

/** The resolved key in case-file form (for run.json and resumes): a word alone stays a word. */
export function initialDocument(r: ResolvedInitial): unknown {
  const from = r.file ?? r.named;
  if (Object.keys(r.values).length === 0 && !r.noise && from !== undefined) return from;
  return { ...(from !== undefined ? { from } : {}), ...r.values, ...(r.noise ? { noise: { amplitude: r.noise.amplitude, seed: r.noise.seed } } : {}) };
}

/** The state in words (for messages): `the initial state of the case (u and v written down, noise 0.001 with seed 7)`. */
export function initialWords(r: ResolvedInitial): string {
  const names = Object.keys(r.values);
  const parts: string[] = [];
  const from = r.file ?? r.named;
  if (from !== undefined) parts.push(`from ${from}`);
  if (names.length) parts.push(`${names.length > 1 ? `${names.slice(0, -1).join(', ')} and ${names[names.length - 1]}` : names[0]} written down`);
  if (r.noise) parts.push(`noise ${typeof r.noise.amplitude === 'number' ? r.noise.amplitude : JSON.stringify(r.noise.amplitude)} with seed ${r.noise.seed}`);
  return `the initial state of the case${parts.length ? ` (${parts.join(', ')})` : ''}`;
}
