/** Writers: number text that reads back to the same double, atomic JSON, CSV byte lengths, .npy files. */
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readdirSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import fc from 'fast-check';
import { afterAll, describe, expect, it } from 'vitest';
import {
  CsvWriter,
  csvLine,
  decodeNpy,
  encodeNpy,
  formatNumber,
  parseJsonNumber,
  parseNumber,
  readCsv,
  readNpy,
  toJson,
  writeJsonAtomic,
  writeNpy,
} from '../../src/run/writers.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-writers-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

const sameDouble = (a: number, b: number): boolean => Object.is(a, b);

describe('number text', () => {
  // IEEE 754 binary64 boundary values (standard facts about the format)
  const special = [
    0,
    -0,
    5e-324, // smallest subnormal
    -5e-324,
    2.225073858507201e-308, // largest subnormal
    2.2250738585072014e-308, // smallest normal
    1.7976931348623157e308, // largest finite
    0.1,
    1 / 3,
    2 / 3,
    1e21,
    1e-7,
    123456789012345680,
    NaN,
    Infinity,
    -Infinity,
  ];

  it('reads back to the same double for boundary values, subnormals, -0, nan and inf', () => {
    for (const x of special) expect(sameDouble(parseNumber(formatNumber(x)), x), String(x)).toBe(true);
    expect([formatNumber(NaN), formatNumber(Infinity), formatNumber(-Infinity), formatNumber(-0)]).toEqual(['nan', 'inf', '-inf', '-0']);
  });

  it('reads back to the same double for every double (property, including subnormals)', () => {
    fc.assert(
      fc.property(fc.double(), (x) => sameDouble(parseNumber(formatNumber(x)), x)),
      { numRuns: 5000 },
    );
    // subnormals specifically: random bit patterns with a zero exponent
    fc.assert(
      fc.property(fc.bigInt({ min: 1n, max: (1n << 52n) - 1n }), fc.boolean(), (mantissa, negative) => {
        const b = new DataView(new ArrayBuffer(8));
        b.setBigUint64(0, (negative ? 1n << 63n : 0n) | mantissa);
        const x = b.getFloat64(0);
        return sameDouble(parseNumber(formatNumber(x)), x);
      }),
      { numRuns: 2000 },
    );
  });

  it('is the shortest text: never more than 17 significant digits', () => {
    fc.assert(
      fc.property(fc.double({ noNaN: true, noDefaultInfinity: true }), (x) => {
        const digits = formatNumber(x).replace(/^-/, '').replace(/e.*$/, '').replace('.', '').replace(/^0+/, '').replace(/0+$/, '');
        return digits.length <= 17;
      }),
    );
  });

  it('rejects text that is not a number', () => {
    expect(() => parseNumber('abc')).toThrow(/'abc' is not a number/);
  });
});

describe('JSON', () => {
  it('keeps -0, writes non-finite numbers as words, and parses back', () => {
    const doc = { a: -0, b: NaN, c: Infinity, d: -Infinity, e: 0.1, f: new Float64Array([1.5, 5e-324]), g: undefined, h: [1, 'x', true, null] };
    const text = toJson(doc);
    const back = JSON.parse(text) as Record<string, unknown>;
    expect(Object.is(back.a, -0)).toBe(true);
    expect([parseJsonNumber(back.b), parseJsonNumber(back.c), parseJsonNumber(back.d)]).toEqual([NaN, Infinity, -Infinity]);
    expect(back.e).toBe(0.1);
    expect(back.f).toEqual([1.5, 5e-324]);
    expect('g' in back).toBe(false);
    expect(back.h).toEqual([1, 'x', true, null]);
  });

  it('round-trips random documents of doubles exactly', () => {
    fc.assert(
      fc.property(fc.array(fc.double({ noNaN: true, noDefaultInfinity: true }), { maxLength: 30 }), (xs) => {
        const back = JSON.parse(toJson({ xs })) as { xs: number[] };
        return back.xs.length === xs.length && back.xs.every((v, i) => sameDouble(v, xs[i]));
      }),
    );
  });

  it('replaces a file atomically and leaves no temporary file behind', () => {
    const file = join(tmp, 'doc.json');
    writeJsonAtomic(file, { version: 1 });
    writeJsonAtomic(file, { version: 2, list: [1, 2, 3] });
    expect(JSON.parse(readFileSync(file, 'utf8'))).toEqual({ version: 2, list: [1, 2, 3] });
    expect(readdirSync(tmp).filter((f) => f.endsWith('.tmp'))).toEqual([]);
  });
});

describe('CSV', () => {
  it('quotes text cells per RFC 4180 and writes numbers as formatNumber does', () => {
    expect(csvLine(['a', 'b,c', 'say "hi"', 1.5, -0, NaN, true, null])).toBe('a,"b,c","say ""hi""",1.5,-0,nan,true,\n');
  });

  it('reports the byte length after every row, equal to the file size', () => {
    const file = join(tmp, 'rows.csv');
    const w = CsvWriter.create(file, ['point', 'lambda', 'max']);
    expect(w.byteLength).toBe(statSync(file).size);
    const values = [
      [0, 0.5, 1e-300],
      [1, 5e-324, -0],
      [2, NaN, Infinity],
      [3, 1 / 3, 2.225073858507201e-308],
    ];
    for (const row of values) {
      w.append(row);
      expect(w.byteLength).toBe(statSync(file).size);
    }
    w.close();
    const back = readCsv(file);
    expect(back.columns).toEqual(['point', 'lambda', 'max']);
    expect(back.rows.length).toBe(values.length);
    back.rows.forEach((r, i) => r.forEach((v, j) => expect(sameDouble(v, values[i][j])).toBe(true)));
  });

  it('reopens at a recorded length: rows after it are dropped, appending continues', () => {
    const file = join(tmp, 'resume.csv');
    const w = CsvWriter.create(file, ['point', 'x']);
    w.append([0, 1.25]);
    w.append([1, 2.5]);
    const recorded = w.byteLength;
    w.append([2, 3.75]); // written after the checkpoint: must disappear
    w.close();
    const r = CsvWriter.reopen(file, ['point', 'x'], recorded);
    r.append([2, 4.5]);
    r.close();
    expect(readCsv(file).rows).toEqual([
      [0, 1.25],
      [1, 2.5],
      [2, 4.5],
    ]);
    expect(() => CsvWriter.reopen(file, ['point', 'y'], recorded)).toThrow(/header row does not match/);
    expect(() => CsvWriter.reopen(file, ['point', 'x'], 10_000)).toThrow(/fewer than the 10000 the checkpoint recorded/);
  });

  it('refuses to overwrite an existing file and rows of the wrong width', () => {
    const file = join(tmp, 'once.csv');
    const w = CsvWriter.create(file, ['a', 'b']);
    expect(() => w.append([1])).toThrow(/1 cells, the header 2 columns/);
    w.close();
    expect(() => CsvWriter.create(file, ['a', 'b'])).toThrow();
  });
});

describe('.npy files', () => {
  it('matches a byte sequence built by hand from the NumPy format specification', () => {
    // NumPy format specification (numpy.lib.format, version 1.0): magic "\x93NUMPY", major 1,
    // minor 0, little-endian uint16 header length, header = Python dict literal padded with
    // spaces and ended by "\n" so that magic + 4 + header length is divisible by 64.
    // The dict for shape (2, 3) is 59 characters; 10 + 59 + 1 = 70, next multiple of 64 is 128,
    // so 58 spaces of padding and a header length of 128 - 10 = 118 = 0x76.
    const dict = "{'descr': '<f8', 'fortran_order': False, 'shape': (2, 3), }";
    expect(dict.length).toBe(59);
    const expected: number[] = [0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59, 0x01, 0x00, 0x76, 0x00];
    for (const ch of dict) expected.push(ch.charCodeAt(0));
    for (let i = 0; i < 58; i++) expected.push(0x20);
    expected.push(0x0a);
    // IEEE 754 binary64, little-endian: 1.0 = 3ff0 0000 0000 0000, 2.0 = 4000..., -0.5 = bfe0...,
    // 0 = 0000..., 0.1 = 3fb9 9999 9999 999a, smallest subnormal = 0000 0000 0000 0001
    const doubles = [
      [0, 0, 0, 0, 0, 0, 0xf0, 0x3f],
      [0, 0, 0, 0, 0, 0, 0x00, 0x40],
      [0, 0, 0, 0, 0, 0, 0xe0, 0xbf],
      [0, 0, 0, 0, 0, 0, 0, 0],
      [0x9a, 0x99, 0x99, 0x99, 0x99, 0x99, 0xb9, 0x3f],
      [1, 0, 0, 0, 0, 0, 0, 0],
    ];
    for (const d of doubles) expected.push(...d);
    const bytes = encodeNpy([2, 3], Float64Array.from([1, 2, -0.5, 0, 0.1, 5e-324]));
    expect(bytes.length).toBe(128 + 48);
    expect(Array.from(bytes)).toEqual(expected);
  });

  it('writes one-dimensional and empty shapes the way Python spells tuples', () => {
    const text = (b: Uint8Array): string => Buffer.from(b.subarray(10, 10 + (b[8] | (b[9] << 8)))).toString('latin1');
    expect(text(encodeNpy([5], new Float64Array(5)))).toMatch(/'shape': \(5,\), }\s*\n$/);
    expect(text(encodeNpy([], new Float64Array(1)))).toMatch(/'shape': \(\), }/);
    expect(text(encodeNpy([2, 3, 4, 5], new Float64Array(120)))).toMatch(/'shape': \(2, 3, 4, 5\), }/);
  });

  it('pads every header to a multiple of 64 bytes and decodes back (property)', () => {
    fc.assert(
      fc.property(fc.array(fc.integer({ min: 0, max: 4 }), { maxLength: 4 }), fc.double(), (shape, fill) => {
        const n = shape.reduce((a, s) => a * s, 1);
        const data = new Float64Array(n).map((_v, i) => fill * (i + 1));
        const bytes = encodeNpy(shape, data);
        const headerEnd = 10 + (bytes[8] | (bytes[9] << 8));
        if (headerEnd % 64 !== 0 || bytes[headerEnd - 1] !== 0x0a) return false;
        const back = decodeNpy(bytes);
        return back.shape.join() === shape.join() && back.data.every((v, i) => sameDouble(v, data[i]));
      }),
    );
  });

  it('reads files back and refuses other dtypes, Fortran order and truncated data', () => {
    const file = join(tmp, 'a.npy');
    writeNpy(file, [2, 2], Float64Array.from([1, 2, 3, 4]));
    expect(readNpy(file)).toEqual({ shape: [2, 2], data: Float64Array.from([1, 2, 3, 4]) });

    const withHeader = (dict: string, data: Uint8Array): Uint8Array => {
      const pad = 64 - ((10 + dict.length + 1) % 64);
      const header = dict + ' '.repeat(pad % 64) + '\n';
      const out = new Uint8Array(10 + header.length + data.length);
      out.set([0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59, 1, 0, header.length & 0xff, header.length >> 8]);
      for (let i = 0; i < header.length; i++) out[10 + i] = header.charCodeAt(i);
      out.set(data, 10 + header.length);
      return out;
    };
    const f4 = withHeader("{'descr': '<f4', 'fortran_order': False, 'shape': (2,), }", new Uint8Array(8));
    expect(() => decodeNpy(f4, 'f4.npy')).toThrow(/f4\.npy: the array has dtype '<f4'; expected float64/);
    const fortran = withHeader("{'descr': '<f8', 'fortran_order': True, 'shape': (2, 2), }", new Uint8Array(32));
    expect(() => decodeNpy(fortran, 'f.npy')).toThrow(/Fortran order; expected C order/);
    const short = withHeader("{'descr': '<f8', 'fortran_order': False, 'shape': (3,), }", new Uint8Array(16));
    expect(() => decodeNpy(short, 's.npy')).toThrow(/needs 24 bytes of data, the file has 16/);
    expect(() => decodeNpy(new Uint8Array([1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11]), 'x.npy')).toThrow(/not a NumPy \.npy file/);
    // big-endian float64 is read correctly: 1.0 = 3ff0 0000 0000 0000
    const be = withHeader("{'descr': '>f8', 'fortran_order': False, 'shape': (1,), }", Uint8Array.from([0x3f, 0xf0, 0, 0, 0, 0, 0, 0]));
    expect(Array.from(decodeNpy(be).data)).toEqual([1]);
    writeFileSync(join(tmp, 'junk.npy'), 'hello');
    expect(() => readNpy(join(tmp, 'junk.npy'))).toThrow(/not a NumPy/);
  });

  // NumPy itself as the outside reference, when a Python with NumPy is on this machine
  const hasNumpy = (() => {
    try {
      execFileSync('python3', ['-c', 'import numpy'], { stdio: 'ignore' });
      return true;
    } catch {
      return false;
    }
  })();

  it.skipIf(!hasNumpy)('is byte-identical to numpy.save and loads with numpy.load (reference library)', () => {
    const file = join(tmp, 'numpy.npy');
    const ours = join(tmp, 'ours.npy');
    const data = Float64Array.from({ length: 24 }, (_v, i) => (i - 7) / 3 + (i === 5 ? 5e-324 : 0));
    writeNpy(ours, [2, 3, 4], data);
    const script = [
      'import numpy as np, sys',
      `a = np.array([${Array.from(data, (v) => v.toString()).join(', ')}], dtype='<f8').reshape(2, 3, 4)`,
      `np.save(${JSON.stringify(file)}, a)`,
      `b = np.load(${JSON.stringify(ours)})`,
      "assert b.dtype == np.float64 and b.shape == (2, 3, 4) and b.flags['C_CONTIGUOUS']",
      'assert (b.view(np.uint64) == a.view(np.uint64)).all()',
    ].join('\n');
    execFileSync('python3', ['-c', script]);
    expect(Buffer.compare(readFileSync(file), readFileSync(ours))).toBe(0);
  });
});
