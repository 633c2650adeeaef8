/**
 * File writers of the run layer: numbers that read back to the same double, atomic JSON
 * replacement, an appending CSV writer whose byte length a checkpoint can record, and NumPy
 * `.npy` files (format version 1.0, little-endian float64, C order) with a matching reader.
 *
 * Numbers: JavaScript's `String(x)` is already the shortest text that parses back to the same
 * double (ECMAScript Number::toString), so it is used as is, with three additions: negative zero
 * is written `-0` (String gives `0`), and the non-finite values are written `nan`, `inf`, `-inf`
 * in CSV (what NumPy, pandas and most spreadsheet importers read). JSON has no non-finite
 * numbers: there they become the strings "nan", "inf", "-inf" rather than a lossy `null`.
 */
import { closeSync, existsSync, fstatSync, fsyncSync, ftruncateSync, mkdirSync, openSync, renameSync, statSync, truncateSync, unlinkSync, writeSync } from 'node:fs';
import { csvFileLimit, npyFileLimit, readFileStart, readRegularFile, readTextFile } from './read-file.js';
import { basename, dirname, join } from 'node:path';

// ---------------------------------------------------------------------------------------------
// Numbers

/** Shortest text that reads back to the same double; `nan`, `inf`, `-inf`, `-0` spelled out. */
export function formatNumber(x: number): string {
  if (Number.isNaN(x)) return 'nan';
  if (x === Infinity) return 'inf';
  if (x === -Infinity) return '-inf';
  if (x === 0 && Object.is(x, -0)) return '-0';
  return String(x);
}

/** Inverse of formatNumber (also accepts what other tools write: NaN, Infinity, +inf, ...). */
export function parseNumber(text: string): number {
  const t = text.trim();
  const lower = t.toLowerCase();
  if (lower === 'nan' || lower === '+nan' || lower === '-nan') return NaN;
  if (lower === 'inf' || lower === '+inf' || lower === 'infinity' || lower === '+infinity') return Infinity;
  if (lower === '-inf' || lower === '-infinity') return -Infinity;
  if (t === '') return NaN;
  const v = Number(t);
  if (Number.isNaN(v)) throw new Error(`'${text}' is not a number`);
  return v;
}

// ---------------------------------------------------------------------------------------------
// JSON

/**
 * JSON text with 2-space indentation. Numbers are written as by formatNumber (so `-0` survives);
 * non-finite numbers become the strings "nan", "inf", "-inf"; typed arrays become arrays;
 * `undefined` members are left out (as JSON.stringify does). Short arrays of numbers stay on one line.
 */
export function toJson(value: unknown): string {
  return encode(value, '') + '\n';
}

function encode(v: unknown, indent: string): string {
  if (v === null || v === undefined) return 'null';
  if (typeof v === 'number') return Number.isFinite(v) ? formatNumber(v) : JSON.stringify(formatNumber(v));
  if (typeof v === 'string') return JSON.stringify(v);
  if (typeof v === 'boolean') return v ? 'true' : 'false';
  if (typeof v === 'bigint') return v.toString();
  if (ArrayBuffer.isView(v) && !(v instanceof DataView)) v = Array.from(v as unknown as ArrayLike<number>);
  if (v instanceof Date) return JSON.stringify(v.toISOString());
  const inner = indent + '  ';
  if (Array.isArray(v)) {
    if (v.length === 0) return '[]';
    const items = v.map((x) => encode(x === undefined ? null : x, inner));
    const flat = `[${items.join(', ')}]`;
    if (v.every((x) => typeof x === 'number' || typeof x === 'string' || typeof x === 'boolean' || x === null) && flat.length + indent.length <= 100) {
      return flat;
    }
    return `[\n${items.map((s) => inner + s).join(',\n')}\n${indent}]`;
  }
  if (typeof v === 'object') {
    const entries = Object.entries(v as Record<string, unknown>).filter(([, x]) => x !== undefined && typeof x !== 'function');
    if (entries.length === 0) return '{}';
    return `{\n${entries.map(([k, x]) => `${inner}${JSON.stringify(k)}: ${encode(x, inner)}`).join(',\n')}\n${indent}}`;
  }
  return 'null';
}

/**
 * Inverse of toJson for the values it writes: the strings "nan", "inf", "-inf" in positions
 * where numbers are expected cannot be told apart from text, so this only parses; callers map
 * known numeric fields with parseJsonNumber.
 */
export function parseJsonNumber(v: unknown): number {
  if (typeof v === 'number') return v;
  if (v === 'nan') return NaN;
  if (v === 'inf') return Infinity;
  if (v === '-inf') return -Infinity;
  throw new Error(`expected a number, got ${JSON.stringify(v)}`);
}

// ---------------------------------------------------------------------------------------------
// Atomic replacement

/** fsync a folder so that renames inside it are durable (best effort where unsupported). */
export function fsyncDirectory(dir: string): void {
  let fd: number | undefined;
  try {
    fd = openSync(dir, 'r');
    fsyncSync(fd);
  } catch {
    // some platforms cannot open or fsync a directory (Windows); the rename is still atomic there
  } finally {
    if (fd !== undefined) closeSync(fd);
  }
}

let tempCounter = 0;

/**
 * Write `data` completely to a new temporary file next to `path` and fsync it; returns the
 * temporary file's path (removed again when writing fails). The caller renames it into place.
 */
export function writeTemporary(path: string, data: string | Uint8Array): string {
  const tmp = join(dirname(path), `.${basename(path)}.${process.pid}.${++tempCounter}.tmp`);
  const fd = openSync(tmp, 'w');
  try {
    const bytes = typeof data === 'string' ? Buffer.from(data, 'utf8') : data;
    let off = 0;
    while (off < bytes.length) off += writeSync(fd, bytes, off, bytes.length - off);
    fsyncSync(fd);
  } catch (e) {
    closeSync(fd);
    try {
      unlinkSync(tmp);
    } catch {
      /* already gone */
    }
    throw (e as NodeJS.ErrnoException).code ? new WriteError(path, e) : e;
  }
  closeSync(fd);
  return tmp;
}

/**
 * Replace `path` atomically with `data`: write a temporary file in the same folder, fsync it,
 * rename it over the target, fsync the folder. A reader (or a crash at any instant) sees either
 * the old complete file or the new complete file, never a mixture.
 */
export function writeFileAtomic(path: string, data: string | Uint8Array): void {
  renameSync(writeTemporary(path, data), path);
  fsyncDirectory(dirname(path));
}

/** Atomic JSON replacement (see toJson for the number conventions). */
export function writeJsonAtomic(path: string, value: unknown): void {
  writeFileAtomic(path, toJson(value));
}

// ---------------------------------------------------------------------------------------------
// CSV

export type CsvCell = number | string | boolean | null | undefined;

function csvText(cell: CsvCell): string {
  if (cell === null || cell === undefined) return '';
  if (typeof cell === 'number') return formatNumber(cell);
  if (typeof cell === 'boolean') return cell ? 'true' : 'false';
  if (/[",\r\n]/.test(cell) || cell !== cell.trim()) return `"${cell.replace(/"/g, '""')}"`;
  return cell;
}

/** One CSV line (comma separated, `\n` terminated, RFC 4180 quoting for text cells). */
export function csvLine(cells: readonly CsvCell[]): string {
  return cells.map(csvText).join(',') + '\n';
}

export interface CsvWriterOptions {
  /** fsync after every row (default false: rows are written straight to the file, unbuffered). */
  fsyncEachRow?: boolean;
}

/**
 * Appends one row per call straight to the file (no buffering in the process, so a crash loses
 * no written row). `byteLength` is the file length after the last complete row: a checkpoint
 * records it, and `CsvWriter.reopen` truncates back to it before continuing.
 */
export class CsvWriter {
  readonly path: string;
  readonly columns: readonly string[];
  private fd: number | undefined;
  private bytes: number;
  private readonly fsyncEachRow: boolean;
  private rowCount = 0;

  private constructor(path: string, columns: readonly string[], fd: number, bytes: number, options: CsvWriterOptions) {
    this.path = path;
    this.columns = columns;
    this.fd = fd;
    this.bytes = bytes;
    this.fsyncEachRow = options.fsyncEachRow ?? false;
  }

  /** Create a new file (refuses to overwrite) and write the header row. */
  static create(path: string, columns: readonly string[], options: CsvWriterOptions = {}): CsvWriter {
    const fd = openSync(path, 'wx');
    const w = new CsvWriter(path, columns, fd, 0, options);
    try {
      w.writeText(csvLine(columns));
      fsyncSync(fd);
    } catch (e) {
      // not even the header: no file rather than an empty one
      closeSync(fd);
      unlinkSync(path);
      throw e;
    }
    return w;
  }

  /**
   * Reopen an existing file for appending after truncating it to `byteLength` (a length a
   * checkpoint recorded). The header is checked against `columns`.
   */
  static reopen(path: string, columns: readonly string[], byteLength: number, options: CsvWriterOptions = {}): CsvWriter {
    const size = statSync(path).size;
    if (size < byteLength) {
      throw new Error(`${path}: the file has ${size} bytes, fewer than the ${byteLength} the checkpoint recorded`);
    }
    const header = csvLine(columns);
    const head = readFileStart(path, Buffer.byteLength(header)).toString('utf8');
    if (head !== header) throw new Error(`${path}: the header row does not match the expected columns (${columns.join(', ')})`);
    truncateSync(path, byteLength);
    const fd = openSync(path, 'a');
    fsyncSync(fd);
    const w = new CsvWriter(path, columns, fd, fstatSync(fd).size, options);
    return w;
  }

  /** Bytes in the file after the last complete row. */
  get byteLength(): number {
    return this.bytes;
  }

  /** Rows written by this writer (not counting the header or rows of an earlier session). */
  get rows(): number {
    return this.rowCount;
  }

  append(cells: readonly CsvCell[]): void {
    if (cells.length !== this.columns.length) {
      throw new Error(`${this.path}: a row has ${cells.length} cells, the header ${this.columns.length} columns`);
    }
    this.writeText(csvLine(cells));
    this.rowCount++;
    if (this.fsyncEachRow) this.sync();
  }

  /** Flush to the disk (fsync). */
  sync(): void {
    if (this.fd !== undefined) fsyncSync(this.fd);
  }

  close(): void {
    if (this.fd === undefined) return;
    fsyncSync(this.fd);
    closeSync(this.fd);
    this.fd = undefined;
  }

  private writeText(text: string): void {
    if (this.fd === undefined) throw new Error(`${this.path}: the CSV writer is closed`);
    const b = Buffer.from(text, 'utf8');
    let off = 0;
    try {
      while (off < b.length) off += writeSync(this.fd, b, off, b.length - off);
    } catch (e) {
      // a write that fails half-way (a full disk, a file-size limit) leaves part of a row: cut the
      // file back to its last complete row at once, so that no reader ever sees a half row
      let cut = '; the file ends at its last complete row';
      try {
        ftruncateSync(this.fd, this.bytes);
      } catch {
        cut = `; it could not be cut back to its last complete row (${this.bytes} bytes)`;
      }
      throw new WriteError(this.path, e, cut);
    }
    this.bytes += b.length;
  }
}

/** Why a write failed, in words (errno codes of a full disk, a quota, a file-size limit). */
export function writeFailureText(e: unknown): string {
  const code = (e as NodeJS.ErrnoException).code;
  switch (code) {
    case 'EFBIG':
      return 'EFBIG: the file grew past the file-size limit of this process (ulimit -f)';
    case 'ENOSPC':
      return 'ENOSPC: the disk is full';
    case 'EDQUOT':
      return 'EDQUOT: the disk quota is used up';
    case 'EIO':
      return 'EIO: input/output error of the device';
    default:
      return code ?? (e as Error).message;
  }
}

/** A write that failed, naming the file and the cause. */
export class WriteError extends Error {
  override name = 'WriteError';
  readonly code: string | undefined;
  constructor(path: string, cause: unknown, remark = '') {
    super(`writing ${path} failed: ${writeFailureText(cause)}${remark}`);
    this.code = (cause as NodeJS.ErrnoException).code;
  }
}

/**
 * Read a CSV file written by CsvWriter: header and numeric rows. Cells of the columns named in
 * `textColumns` read as NaN (their text is not needed by numeric readers); text anywhere else is an
 * error.
 */
export function readCsv(path: string, textColumns: readonly string[] = []): { columns: string[]; rows: number[][] } {
  const text = readTextFile(path, csvFileLimit, 'a branch file');
  const lines = text.split('\n');
  if (lines[lines.length - 1] === '') lines.pop();
  if (lines.length === 0) throw new Error(`${path}: empty file, expected a header row`);
  const columns = lines[0].split(',');
  const rows = lines.slice(1).map((l, i) => {
    const cells = l.split(',');
    if (cells.length !== columns.length) throw new Error(`${path}: row ${i + 1} has ${cells.length} cells, the header ${columns.length}`);
    return cells.map((c, j) => (c === 'true' ? 1 : c === 'false' ? 0 : textColumns.includes(columns[j]) ? NaN : parseNumber(c)));
  });
  return { columns, rows };
}

// ---------------------------------------------------------------------------------------------
// NumPy .npy (format version 1.0)
//
// Layout per the NumPy format specification (numpy.lib.format): the magic string \x93NUMPY,
// one byte major version, one byte minor version, a little-endian uint16 header length (uint32
// in version 2.0 and 3.0), then the header: the text of a Python dict literal with keys 'descr',
// 'fortran_order' and 'shape', padded with spaces and ended by a newline so that the total of
// magic + version + length + header is divisible by 64; then the raw array data.

const MAGIC = [0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59]; // \x93NUMPY

function shapeText(shape: readonly number[]): string {
  if (shape.length === 0) return '()';
  if (shape.length === 1) return `(${shape[0]},)`;
  return `(${shape.join(', ')})`;
}

function checkShape(shape: readonly number[], length: number, what: string): void {
  for (const s of shape) {
    if (!Number.isInteger(s) || s < 0) throw new Error(`${what}: shape (${shape.join(', ')}) must hold non-negative integers`);
  }
  const count = shape.reduce((a, s) => a * s, 1);
  if (count !== length) throw new Error(`${what}: shape (${shape.join(', ')}) holds ${count} values, the data has ${length}`);
}

/** The bytes of a version 1.0 `.npy` file holding `data` as little-endian float64 in C order. */
export function encodeNpy(shape: readonly number[], data: Float64Array): Uint8Array {
  checkShape(shape, data.length, 'npy');
  const dict = `{'descr': '<f8', 'fortran_order': False, 'shape': ${shapeText(shape)}, }`;
  const prefix = MAGIC.length + 2 + 2;
  const unpadded = prefix + dict.length + 1; // + newline
  const total = Math.ceil(unpadded / 64) * 64;
  const headerLength = total - prefix;
  if (headerLength > 0xffff) throw new Error(`npy: shape (${shape.join(', ')}) gives a header too long for format version 1.0`);
  const header = dict + ' '.repeat(total - unpadded) + '\n';
  const out = new Uint8Array(total + data.length * 8);
  out.set(MAGIC, 0);
  out[6] = 1;
  out[7] = 0;
  out[8] = headerLength & 0xff;
  out[9] = headerLength >> 8;
  for (let i = 0; i < header.length; i++) out[prefix + i] = header.charCodeAt(i);
  const view = new DataView(out.buffer, out.byteOffset + total, data.length * 8);
  for (let i = 0; i < data.length; i++) view.setFloat64(i * 8, data[i], true);
  return out;
}

/** Write a `.npy` file atomically (float64, C order). */
export function writeNpy(path: string, shape: readonly number[], data: Float64Array): void {
  writeFileAtomic(path, encodeNpy(shape, data));
}

/** Parse the header dict of a `.npy` file (the subset NumPy writes). */
function parseHeaderDict(text: string, where: string): { descr: string; fortranOrder: boolean; shape: number[] } {
  const body = text.trim();
  if (!body.startsWith('{') || !body.endsWith('}')) throw new Error(`${where}: the header is not a dictionary: ${JSON.stringify(body.slice(0, 80))}`);
  const descr = /['"]descr['"]\s*:\s*['"]([^'"]*)['"]/.exec(body);
  const fortran = /['"]fortran_order['"]\s*:\s*(True|False)/.exec(body);
  const shape = /['"]shape['"]\s*:\s*\(([^)]*)\)/.exec(body);
  if (!descr) throw new Error(`${where}: the header has no 'descr' (dtype) entry`);
  if (!fortran) throw new Error(`${where}: the header has no 'fortran_order' entry`);
  if (!shape) throw new Error(`${where}: the header has no 'shape' entry`);
  const dims = shape[1]
    .split(',')
    .map((s) => s.trim())
    .filter((s) => s !== '')
    .map((s) => {
      const n = Number(s.replace(/L$/, ''));
      if (!Number.isInteger(n) || n < 0) throw new Error(`${where}: the shape entry '${s}' is not a non-negative integer`);
      return n;
    });
  return { descr: descr[1], fortranOrder: fortran[1] === 'True', shape: dims };
}

/**
 * Decode a `.npy` file holding float64 values in C order (little- or big-endian; format
 * versions 1.0, 2.0, 3.0). Other dtypes, Fortran order and truncated data are clear errors.
 */
export function decodeNpy(bytes: Uint8Array, where = 'npy'): { shape: number[]; data: Float64Array } {
  if (bytes.length < 10 || MAGIC.some((b, i) => bytes[i] !== b)) throw new Error(`${where}: not a NumPy .npy file (the magic string \\x93NUMPY is missing)`);
  const major = bytes[6];
  const minor = bytes[7];
  const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  let headerLength: number;
  let start: number;
  if (major === 1) {
    headerLength = dv.getUint16(8, true);
    start = 10;
  } else if (major === 2 || major === 3) {
    if (bytes.length < 12) throw new Error(`${where}: the file ends inside the header`);
    headerLength = dv.getUint32(8, true);
    start = 12;
  } else {
    throw new Error(`${where}: .npy format version ${major}.${minor} is not supported (accepted: 1.0, 2.0, 3.0)`);
  }
  if (start + headerLength > bytes.length) throw new Error(`${where}: the file ends inside the header`);
  const headerText = Buffer.from(bytes.subarray(start, start + headerLength)).toString(major === 3 ? 'utf8' : 'latin1');
  const h = parseHeaderDict(headerText, where);
  const little = h.descr === '<f8' || h.descr === 'f8' || h.descr === '=f8' || h.descr === '<d';
  const big = h.descr === '>f8' || h.descr === '>d';
  if (!little && !big) throw new Error(`${where}: the array has dtype '${h.descr}'; expected float64 ('<f8')`);
  if (h.fortranOrder) throw new Error(`${where}: the array is stored in Fortran order; expected C order (save it with numpy.ascontiguousarray)`);
  const count = h.shape.reduce((a, s) => a * s, 1);
  const dataStart = start + headerLength;
  const available = bytes.length - dataStart;
  if (available !== count * 8) {
    throw new Error(`${where}: shape (${h.shape.join(', ')}) needs ${count * 8} bytes of data, the file has ${available}`);
  }
  const data = new Float64Array(count);
  for (let i = 0; i < count; i++) data[i] = dv.getFloat64(dataStart + i * 8, little);
  return { shape: h.shape, data };
}

/**
 * Read a `.npy` file of float64 values (see decodeNpy): a regular file of at most `limit` bytes
 * (`what` says what the limit is for in the message).
 */
export function readNpy(path: string, limit = npyFileLimit, what = 'a .npy file'): { shape: number[]; data: Float64Array } {
  return decodeNpy(readRegularFile(path, limit, what), path);
}

/** Create a folder (and its parents) if it does not exist. */
export function ensureDirectory(path: string): void {
  mkdirSync(path, { recursive: true });
}
