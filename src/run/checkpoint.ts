/**
 * Checkpoints: everything a stopped or killed run needs to continue exactly where it was — the
 * engine's state (current point, tangent, step, event-detector state, eigen-solver warm start,
 * the queue of branches still to follow), the run layer's ledger (branches, special points,
 * every CSV's byte length, counts) and the resolved case — in one file per run directory.
 *
 * File format (our own; little-endian throughout):
 *
 *   bytes 0..7     magic "BLCHKPT1"
 *   bytes 8..11    uint32: length H of the header (UTF-8 JSON)
 *   bytes 12..15   uint32: 0 (reserved)
 *   bytes 16..23   two uint32 (low, high): length P of the payload in bytes (a multiple of 8)
 *   24 .. 24+H     the header: JSON of the checkpoint document, in which every Float64Array
 *                  (and every long plain array of numbers) is replaced by a reference
 *                  {"$f64": [offset, length]} into the payload, and every number JSON cannot
 *                  hold exactly (nan, ±inf, -0) by {"$num": "nan" | "inf" | "-inf" | "-0"}
 *   padding        zero bytes up to a multiple of 8
 *   payload        P bytes of float64 values (so every double comes back bit for bit)
 *   last 32 bytes  SHA-256 of everything before them
 *
 * A file whose length, magic, lengths or checksum do not agree is corrupt and is never read.
 *
 * Writing (`writeCheckpoint`): the new file goes to a temporary name in the run directory and is
 * fsynced; then the current checkpoint is renamed to `checkpoint.previous.bin`, the new one to
 * `checkpoint.bin`, and the directory is fsynced. At every instant at least one complete
 * checkpoint is in place: a crash between the two renames leaves the previous one, which
 * `readCheckpoint` falls back to. Before a checkpoint records the CSV byte lengths, the CSVs are
 * fsynced (`RunDirectory.syncAll`), so the recorded rows are on the disk.
 *
 * The `Checkpointer` decides when to write, only ever at sync points (run-hooks.ts, `syncEvery`:
 * between steps, where the engine has just restarted its linear algebra, so that a resumed run
 * repeats the uninterrupted one bit for bit): after the first point (so any run that got going
 * can be resumed), then at the first sync point after `every-points` points were computed or
 * `every-seconds` passed since the last checkpoint (case keys `checkpoint.every-points`,
 * `checkpoint.every-seconds`), and once more when the run stops on request — from the last sync
 * point, so a stop costs at most `syncEvery - 1` points that the resumed run computes again.
 */
import { createHash } from 'node:crypto';
import { existsSync, renameSync, unlinkSync } from 'node:fs';
import { FileReadError, checkpointFileLimit, readRegularFile } from './read-file.js';
import { join } from 'node:path';
import type { RunLedger } from './run-directory.js';
import type { CheckpointContext } from './run-hooks.js';
import { checkpointFile, previousCheckpointFile } from './manifest.js';
import { fsyncDirectory, writeTemporary } from './writers.js';

export { checkpointFile, previousCheckpointFile };
export const checkpointFormat = 'branchline checkpoint';
export const checkpointVersion = 1;

const magic = Buffer.from('BLCHKPT1', 'ascii');
const fixedHeader = 24;
const digestBytes = 32;
/** Plain number arrays at least this long go to the binary payload. */
const longArray = 16;

/** Why a checkpoint was written (a search for steady states: after a solve, after a trace). */
export type CheckpointReason = 'first-point' | 'points' | 'time' | 'stop' | 'solve' | 'trace';

export interface CheckpointDocument {
  format: typeof checkpointFormat;
  version: typeof checkpointVersion;
  /** Increases by one with every checkpoint of a run (across resumes). */
  sequence: number;
  /** When it was written (ISO time). */
  written: string;
  reason: CheckpointReason;
  run: {
    /** When the run first started (ISO time). */
    started: string;
    /** Seconds of work so far (all sessions). */
    seconds: number;
    /** The case file the run came from (for messages), or null. */
    caseFile: string | null;
    /** When the run was resumed before (ISO times). */
    resumes: string[];
  };
  /** The resolved case (caseDocument form) that `prepareCaseObject` reads back. */
  case: Record<string, unknown>;
  ledger: RunLedger;
  /** The engine's state (Continuation.snapshot()). */
  engine: unknown;
}

/** A checkpoint document of this format and version from its parts (runs, settle and find-states). */
export function checkpointDocument(parts: Omit<CheckpointDocument, 'format' | 'version'>): CheckpointDocument {
  return { format: checkpointFormat, version: checkpointVersion, ...parts };
}

/** A checkpoint that cannot be read (missing, half-written, corrupt, or of another format). */
export class CheckpointError extends Error {
  override name = 'CheckpointError';
}

// ---------------------------------------------------------------------------------------------
// Encoding

type Json = null | boolean | number | string | Json[] | { [k: string]: Json };

class Payload {
  private chunks: Float64Array[] = [];
  length = 0;
  add(values: ArrayLike<number>): [number, number] {
    const at = this.length;
    this.chunks.push(Float64Array.from(values));
    this.length += values.length;
    return [at, values.length];
  }
  bytes(): Uint8Array {
    const out = new Uint8Array(this.length * 8);
    const view = new DataView(out.buffer);
    let k = 0;
    for (const c of this.chunks) for (let i = 0; i < c.length; i++, k++) view.setFloat64(k * 8, c[i], true);
    return out;
  }
}

function numberJson(x: number): Json {
  if (Number.isNaN(x)) return { $num: 'nan' };
  if (x === Infinity) return { $num: 'inf' };
  if (x === -Infinity) return { $num: '-inf' };
  if (x === 0 && Object.is(x, -0)) return { $num: '-0' };
  return x;
}

const typedNames = ['Float64Array', 'Float32Array', 'Int32Array', 'Uint32Array', 'Int16Array', 'Uint16Array', 'Int8Array', 'Uint8Array'] as const;
type TypedName = (typeof typedNames)[number];

function encodeValue(v: unknown, payload: Payload, where: string): Json | undefined {
  if (v === undefined) return undefined;
  if (v === null || typeof v === 'boolean' || typeof v === 'string') return v;
  if (typeof v === 'number') return numberJson(v);
  if (ArrayBuffer.isView(v)) {
    const name = v.constructor.name as TypedName;
    if (!typedNames.includes(name)) throw new Error(`cannot checkpoint a ${v.constructor.name} at ${where}`);
    const ref = payload.add(v as unknown as ArrayLike<number>);
    return name === 'Float64Array' ? { $f64: ref } : { $typed: name, at: ref };
  }
  if (Array.isArray(v)) {
    if (v.length >= longArray && v.every((x) => typeof x === 'number')) return { $numbers: payload.add(v as number[]) };
    return v.map((x, i) => (x === undefined ? { $undefined: true } : encodeValue(x, payload, `${where}[${i}]`)!));
  }
  if (typeof v === 'object') {
    const proto = Object.getPrototypeOf(v);
    if (proto !== Object.prototype && proto !== null) throw new Error(`cannot checkpoint a ${(v as object).constructor?.name ?? 'value'} at ${where}`);
    const out: { [k: string]: Json } = {};
    let escaped = false;
    for (const [k, x] of Object.entries(v as Record<string, unknown>)) {
      if (k.startsWith('$')) escaped = true;
      const e = encodeValue(x, payload, `${where}.${k}`);
      if (e !== undefined) out[k] = e;
    }
    return escaped ? { $object: out } : out;
  }
  throw new Error(`cannot checkpoint a ${typeof v} at ${where}`);
}

function decodeValue(v: Json, payload: Float64Array, where: string): unknown {
  if (v === null || typeof v !== 'object') return v;
  if (Array.isArray(v)) return v.map((x, i) => decodeValue(x, payload, `${where}[${i}]`));
  const slice = (ref: Json): Float64Array => {
    if (!Array.isArray(ref) || ref.length !== 2 || typeof ref[0] !== 'number' || typeof ref[1] !== 'number') throw new CheckpointError(`bad payload reference at ${where}`);
    const [at, len] = ref as [number, number];
    if (!Number.isInteger(at) || !Number.isInteger(len) || at < 0 || len < 0 || at + len > payload.length) throw new CheckpointError(`payload reference out of range at ${where}`);
    return payload.slice(at, at + len);
  };
  if ('$num' in v) {
    switch (v.$num) {
      case 'nan':
        return NaN;
      case 'inf':
        return Infinity;
      case '-inf':
        return -Infinity;
      case '-0':
        return -0;
      default:
        throw new CheckpointError(`bad number at ${where}`);
    }
  }
  if ('$f64' in v) return slice(v.$f64);
  if ('$numbers' in v) return Array.from(slice(v.$numbers));
  if ('$typed' in v) {
    const name = v.$typed as TypedName;
    if (!typedNames.includes(name)) throw new CheckpointError(`unknown array type at ${where}`);
    const ctor = globalThis[name] as unknown as { from(a: ArrayLike<number>): unknown };
    return ctor.from(slice(v.at));
  }
  if ('$undefined' in v) return undefined;
  const obj = '$object' in v ? (v.$object as { [k: string]: Json }) : v;
  if (obj === null || typeof obj !== 'object' || Array.isArray(obj)) throw new CheckpointError(`bad object at ${where}`);
  const out: Record<string, unknown> = {};
  for (const [k, x] of Object.entries(obj)) out[k] = decodeValue(x, payload, `${where}.${k}`);
  return out;
}

/** The bytes of a checkpoint file for `doc` (see the header for the layout). */
export function encodeCheckpoint(doc: CheckpointDocument): Uint8Array {
  const payload = new Payload();
  const header = Buffer.from(JSON.stringify(encodeValue(doc, payload, 'checkpoint')), 'utf8');
  const pad = (8 - ((fixedHeader + header.length) % 8)) % 8;
  const data = payload.bytes();
  const total = fixedHeader + header.length + pad + data.length + digestBytes;
  const out = Buffer.alloc(total);
  magic.copy(out, 0);
  out.writeUInt32LE(header.length, 8);
  out.writeUInt32LE(0, 12);
  out.writeUInt32LE(data.length % 2 ** 32, 16);
  out.writeUInt32LE(Math.floor(data.length / 2 ** 32), 20);
  header.copy(out, fixedHeader);
  out.set(data, fixedHeader + header.length + pad);
  const digest = createHash('sha256').update(out.subarray(0, total - digestBytes)).digest();
  digest.copy(out, total - digestBytes);
  return out;
}

/** Read checkpoint bytes; any inconsistency is a CheckpointError naming what is wrong. */
export function decodeCheckpoint(bytes: Uint8Array, where = 'checkpoint'): CheckpointDocument {
  const buf = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  if (buf.length < fixedHeader + digestBytes) throw new CheckpointError(`${where} is truncated (${buf.length} bytes)`);
  if (!buf.subarray(0, 8).equals(magic)) throw new CheckpointError(`${where} is not a branchline checkpoint`);
  const h = buf.readUInt32LE(8);
  const p = buf.readUInt32LE(16) + buf.readUInt32LE(20) * 2 ** 32;
  const pad = (8 - ((fixedHeader + h) % 8)) % 8;
  const expected = fixedHeader + h + pad + p + digestBytes;
  if (p % 8 !== 0 || expected !== buf.length) {
    throw new CheckpointError(`${where} is incomplete or damaged (${buf.length} bytes, its header announces ${expected})`);
  }
  const digest = createHash('sha256').update(buf.subarray(0, buf.length - digestBytes)).digest();
  if (!digest.equals(buf.subarray(buf.length - digestBytes))) throw new CheckpointError(`${where} is damaged (checksum mismatch)`);
  let header: Json;
  try {
    header = JSON.parse(buf.subarray(fixedHeader, fixedHeader + h).toString('utf8')) as Json;
  } catch (e) {
    throw new CheckpointError(`${where} has an unreadable header (${(e as Error).message})`);
  }
  const start = fixedHeader + h + pad;
  const payload = new Float64Array(p / 8);
  const view = new DataView(buf.buffer, buf.byteOffset + start, p);
  for (let i = 0; i < payload.length; i++) payload[i] = view.getFloat64(i * 8, true);
  const doc = decodeValue(header, payload, 'checkpoint') as CheckpointDocument;
  checkDocument(doc, where);
  return doc;
}

function checkDocument(doc: CheckpointDocument, where: string): void {
  const bad = (what: string): never => {
    throw new CheckpointError(`${where} ${what}`);
  };
  if (doc === null || typeof doc !== 'object') bad('holds no checkpoint document');
  if (doc.format !== checkpointFormat) bad(`is of another format (${String(doc.format)})`);
  if (doc.version !== checkpointVersion) bad(`is of format version ${String(doc.version)}; this program reads version ${checkpointVersion}`);
  if (!Number.isInteger(doc.sequence) || doc.sequence < 1) bad('has no sequence number');
  if (!doc.run || typeof doc.run.started !== 'string' || typeof doc.run.seconds !== 'number') bad('has no run times');
  if (!doc.case || typeof doc.case !== 'object') bad('holds no case');
  const l = doc.ledger;
  if (!l || !Array.isArray(l.branches) || !Array.isArray(l.specials) || typeof l.points !== 'number' || !l.csvLengths || typeof l.csvLengths !== 'object') bad('holds no run ledger');
  if (doc.engine === undefined) bad('holds no engine state');
}

// ---------------------------------------------------------------------------------------------
// Files

/**
 * Write `doc` as the run directory's checkpoint, keeping the previous one until the new one is
 * complete and in place (see the header). Returns the number of bytes written.
 */
export function writeCheckpoint(dir: string, doc: CheckpointDocument): number {
  const bytes = encodeCheckpoint(doc);
  const current = join(dir, checkpointFile);
  const tmp = writeTemporary(current, bytes);
  if (existsSync(current)) renameSync(current, join(dir, previousCheckpointFile));
  renameSync(tmp, current);
  fsyncDirectory(dir);
  return bytes.length;
}

/** Read one checkpoint file (CheckpointError when missing or unusable). */
export function readCheckpointFile(path: string, label = path): CheckpointDocument {
  let bytes: Buffer;
  try {
    bytes = readRegularFile(path, checkpointFileLimit, 'a checkpoint');
  } catch (e) {
    if (!(e instanceof FileReadError)) throw e;
    throw new CheckpointError(e.code === 'ENOENT' ? `${label} does not exist` : `${label}: ${e.reason}`);
  }
  return decodeCheckpoint(bytes, label);
}

export interface CheckpointFound {
  document: CheckpointDocument;
  /** The file it came from (relative to the run directory). */
  file: string;
  /** Newer files that could not be used, with the reason (e.g. a damaged checkpoint.bin). */
  skipped: string[];
}

/**
 * The newest usable checkpoint of a run directory: `checkpoint.bin`, else (when it is missing or
 * damaged) `checkpoint.previous.bin`. CheckpointError when neither can be used.
 */
export function readCheckpoint(dir: string): CheckpointFound {
  const skipped: string[] = [];
  let found: CheckpointFound | undefined;
  for (const file of [checkpointFile, previousCheckpointFile]) {
    const path = join(dir, file);
    if (!existsSync(path)) continue;
    try {
      const document = readCheckpointFile(path, file);
      if (!found || document.sequence > found.document.sequence) found = { document, file, skipped: [] };
    } catch (e) {
      if (!(e instanceof CheckpointError)) throw e;
      skipped.push(e.message);
    }
    if (found) break;
  }
  if (!found) {
    throw new CheckpointError(skipped.length ? `no usable checkpoint: ${skipped.join('; ')}` : 'no checkpoint was written (the run stopped before its first point)');
  }
  found.skipped = skipped;
  return found;
}

/** Remove the checkpoint files of a run (after it finished: nothing is left to resume). */
export function removeCheckpoints(dir: string): void {
  for (const f of [checkpointFile, previousCheckpointFile]) {
    try {
      unlinkSync(join(dir, f));
    } catch {
      /* not there */
    }
  }
}

// ---------------------------------------------------------------------------------------------
// When to write

export interface CheckpointPolicy {
  /** Write after this many points since the last checkpoint. */
  everyPoints: number;
  /** ...or when this many seconds passed since the last checkpoint. */
  everySeconds: number;
}

/** What the run records about the last checkpoint (run.json). */
export interface CheckpointNote {
  file: string;
  sequence: number;
  written: string;
  points: number;
  bytes: number;
}

/**
 * Decides when to write checkpoints during a run and writes them; pass `hook` as runCase's
 * `checkpoint` option. `sequence` continues the numbering of a resumed run.
 */
export class Checkpointer {
  private sequence: number;
  private lastPoints: number;
  private lastTime: number;
  /** Checkpoints written by this session. */
  written = 0;
  last: CheckpointNote | undefined;

  constructor(
    private readonly policy: CheckpointPolicy,
    options: { sequence?: number; points?: number; now?: () => number } = {},
  ) {
    this.sequence = options.sequence ?? 0;
    this.lastPoints = options.points ?? 0;
    this.now = options.now ?? Date.now;
    this.lastTime = this.now();
  }

  private readonly now: () => number;

  /** runCase's checkpoint hook: writes when due and the engine is between steps. */
  readonly hook = (c: CheckpointContext): CheckpointNote | undefined => {
    if (c.reason === 'stop') {
      // a stop between sync points goes back to the last one (at most syncEvery - 1 points
      // are computed again on resume); before the first point, the state as it is
      if (c.lastSync) {
        // nothing newer than the checkpoint already written
        if (this.sequence > 0 && c.lastSync.points === this.lastPoints) return undefined;
        return this.write(c, 'stop', c.lastSync.ledger, () => c.lastSync!.snapshot);
      }
      if (!c.canSnapshot) return undefined;
      return this.write(c, 'stop', c.ledger, c.snapshot);
    }
    if (!c.canSnapshot || !c.sync) return undefined;
    const points = c.ledger.points;
    let reason: CheckpointReason | undefined;
    if (this.sequence === 0 && points > 0) reason = 'first-point';
    else if (points - this.lastPoints >= this.policy.everyPoints) reason = 'points';
    else if (points > this.lastPoints && this.now() - this.lastTime >= this.policy.everySeconds * 1000) reason = 'time';
    if (!reason) return undefined;
    return this.write(c, reason, c.ledger, c.snapshot);
  };

  private write(c: CheckpointContext, reason: CheckpointReason, ledger: RunLedger, snapshot: () => unknown): CheckpointNote {
    // the rows the ledger counts must be on the disk before a checkpoint records their lengths
    c.directory.syncAll();
    const written = new Date(this.now()).toISOString();
    const doc = checkpointDocument({
      sequence: this.sequence + 1,
      written,
      reason,
      run: { started: c.run.started, seconds: c.run.seconds(), caseFile: c.run.caseFile, resumes: c.run.resumes.slice() },
      case: c.caseDocument,
      ledger,
      engine: snapshot(),
    });
    const bytes = writeCheckpoint(c.directory.path, doc);
    this.sequence++;
    this.written++;
    this.lastPoints = ledger.points;
    this.lastTime = this.now();
    this.last = { file: checkpointFile, sequence: this.sequence, written, points: ledger.points, bytes };
    return this.last;
  }
}
