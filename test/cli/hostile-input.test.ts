/**
 * Hostile input from the command line (spawned `branchline` processes, real files): control
 * characters in case values never reach the terminal raw; odd files (devices, FIFOs, symlinks to
 * them, oversized files) are refused with one line instead of hanging or eating memory; absurd
 * values and odd keys are refused before anything is written.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { cpSync, existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, symlinkSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import fc from 'fast-check';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { progressView } from '../../src/run/progress.js';
import { ensureBuilt } from './built.js';
import { type Spawned, spawnMany } from './spawn-many.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-hostile-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));
const bin = resolve('bin/branchline.js');
beforeAll(() => ensureBuilt(), 60_000);

function branchline(...args: string[]): { status: number | null; stdout: string; stderr: string } {
  const r = spawnSync(process.execPath, [bin, ...args], { encoding: 'utf8', cwd: tmp, timeout: 60_000 });
  return { status: r.status, stdout: r.stdout, stderr: r.stderr };
}

const branchlineMany = (...commands: string[][]): Spawned[] => spawnMany(tmp, commands);

const write = (name: string, text: string): string => {
  const f = join(tmp, name);
  writeFileSync(f, text);
  return f;
};

/** Bytes a terminal acts on: C0 controls but newline and tab, DEL, C1, direction overrides. */
const raw = /[\u0000-\u0008\u000b-\u001f\u007f-\u009f\u202a-\u202e\u2066-\u2069]/;

describe('control characters from case values are shown as escapes, never sent raw', () => {
  const esc = '\u001b]0;owned\u0007\u001b[2J\u009b1m\u202e';

  it('in a case error (value, parameter name, file name), in the JSON and YAML readers', () => {
    const yaml = write(`evil\u001b[2J.yaml`, `model: "${esc.replace(/\u001b/g, '\\e').replace(/\u0007/g, '\\a').replace(/\u009b/g, '\\x9b').replace(/\u202e/g, '\\u202e')}"\ngrid: {intervals: [16]}\ncontinuation: {parameter: lambda, bounds: [0, 4]}\n`);
    const json = write('evil.json', JSON.stringify({ model: 'bratu', grid: { intervals: [16] }, parameters: { [`l${esc}`]: 1 }, continuation: { parameter: 'lambda', bounds: [0, 4] } }));
    // the installed command itself once, then more commands in one process
    const [fromJson, check] = branchlineMany(['run', json], ['check', yaml]);
    for (const r of [branchline('run', yaml), fromJson]) {
      expect(r.status).toBe(2);
      expect(r.stderr).not.toMatch(raw);
      // shown as \x1b (or \u001b where the message quotes a key as JSON)
      expect(r.stderr).toMatch(/\\(x1b|u001b)\]0;owned\\(x07|u0007)\\(x1b|u001b)\[2J\\x9b1m\\u202e/);
      expect(r.stderr.trim().split('\n')).toHaveLength(1);
    }
    // the file name itself is escaped too
    expect(check.stderr).toMatch(/evil\\x1b\[2J\.yaml: model: /);
  }, 60_000);

  it('in messages from a code model and from the option parser', () => {
    write('loud-model.mjs', `export default function () { throw new Error(${JSON.stringify(`no ${esc} problem`)}); }\n`);
    const file = write('loud.yaml', `model: ./loud-model.mjs\ngrid: {intervals: [16]}\ncontinuation: {parameter: lambda, bounds: [0, 4]}\n`);
    const [r, opt] = branchlineMany(['run', file], ['run', file, `--f\u001b[2Jorce`]);
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/failed to build the problem: no \\x1b\]0;owned/);
    expect(r.stderr).not.toMatch(raw);
    expect(opt.status).toBe(2);
    expect(opt.stderr).toMatch(/--f\\x1b\[2Jorce/);
    expect(opt.stderr).not.toMatch(raw);
  }, 60_000);

  it('in log lines drawn above progress bars on a terminal', () => {
    let shown = '';
    const stream = { write: (s: string) => ((shown += s), true), isTTY: true, columns: 120, on: () => stream, removeListener: () => stream, cursorTo: () => true, clearLine: () => true, moveCursor: () => true } as unknown as NodeJS.WritableStream;
    const view = progressView({ tty: true, quiet: false, write: (s) => (shown += s), stream, showNames: true });
    view.start('a', 'lambda', 10);
    view.log('a', 'warning', `code model says ${esc}`);
    view.close();
    expect(shown).toMatch(/code model says \\x1b\]0;owned\\x07/);
    expect(shown).not.toMatch(/\u0007|\u009b|\u202e|\u001b\]0/);
  });
});

describe('absurd values and odd keys are refused before anything is written', () => {
  it('grid.length 1e-320 and 1e308, __proto__ and duplicate keys in JSON: exit 2, one line, no run folder', () => {
    const base = { model: 'bratu', grid: { intervals: [16] }, parameters: { lambda: 0.5 }, continuation: { parameter: 'lambda', bounds: [0, 4] } };
    const files: [string, string, RegExp][] = [
      ['tiny.yaml', 'model: bratu\ngrid: {intervals: [16], length: 1.0e-320}\ncontinuation: {parameter: lambda, bounds: [0, 4]}\n', /grid\.length: 1e-320 is not accepted \(accepted: a length from 1e-9 to 1e9/],
      ['huge.json', JSON.stringify({ ...base, grid: { intervals: [16], length: 1e308 } }), /grid\.length: 1e\+308 is not accepted/],
      ['proto.json', JSON.stringify(base).replace('"parameters":{', '"parameters":{"__proto__":{"lambda":3},'), /parameters: the key '__proto__' is not accepted/],
      ['twice.json', JSON.stringify(base).replace('"model":"bratu"', '"model":"bratu","model":"allen-cahn"'), /the key 'model' is given twice \(line 1\)/],
    ];
    const results = branchlineMany(...files.map(([name, text]) => ['run', write(name, text), '--out', join(tmp, `out-${name}`)]));
    files.forEach(([name, , pattern], i) => {
      const r = results[i];
      expect(r.status, name).toBe(2);
      expect(r.stderr).toMatch(pattern);
      expect(r.stderr.trim().split('\n')).toHaveLength(1);
      expect(existsSync(join(tmp, `out-${name}`))).toBe(false);
    });
  }, 60_000);
});

describe('files that are not regular files, or too large, are refused with one line (never a hang)', () => {
  const slab = 'model: bratu\ngrid: {intervals: [16]}\ncontinuation: {parameter: lambda, bounds: [0, 4], max-points: 30}\n';
  const fifo = (name: string): string => {
    const f = join(tmp, name);
    execFileSync('mkfifo', [f]); // nobody writes to it: a read would block for ever
    return f;
  };
  const link = (target: string, name: string): string => {
    const f = join(tmp, name);
    symlinkSync(target, f);
    return f;
  };
  /** Run the commands in one spawned process (its timeout ends a hang as a failure); each is refused with one line. */
  const refused = (...checks: [string[], RegExp][]): void => {
    const results = branchlineMany(...checks.map(([args]) => args));
    checks.forEach(([args, pattern], i) => {
      const r = results[i];
      expect(r.status, `${args.join(' ')}: ${r.stderr}`).toBe(2);
      expect(r.stderr).toMatch(pattern);
      expect(r.stderr.trim().split('\n')).toHaveLength(1);
    });
  };

  it('a case file that is a FIFO, /dev/zero through a symlink, /dev/urandom, or larger than 1 MiB', () => {
    refused(
      [['run', fifo('pipe.yaml')], /pipe\.yaml: a FIFO \(named pipe\), not a regular file/],
      [['check', link('/dev/zero', 'zero.yaml')], /zero\.yaml: a character device, not a regular file/],
      [['run', '/dev/urandom'], /\/dev\/urandom: a character device, not a regular file/],
      [['run', write('long.yaml', slab + '#'.repeat(1100 * 1024) + '\n')], /long\.yaml: larger than the 1 MiB accepted for a case file/],
    );
  }, 60_000);

  it('start.solution and a code model that are FIFOs or devices; a .npy larger than its grid implies', () => {
    const start = (name: string, solution: string): string => write(name, `${slab}start: {solution: ${solution}}\n`);
    fifo('pipe.npy');
    link('/dev/zero', 'zero.npy');
    writeFileSync(join(tmp, 'big.npy'), Buffer.alloc(200_000));
    fifo('pipe-model.mjs');
    refused(
      [['run', start('s-pipe.yaml', 'pipe.npy')], /start\.solution: .*pipe\.npy: a FIFO/],
      [['run', start('s-zero.yaml', 'zero.npy')], /start\.solution: .*zero\.npy: a character device/],
      [['run', start('s-big.yaml', 'big.npy')], /start\.solution: .*big\.npy: larger than the 64\.1 KiB accepted for a solution of this grid \(17 values\)/],
      [['run', write('s-model.yaml', slab.replace('bratu', './pipe-model.mjs'))], /model: code model '\.\/pipe-model\.mjs' cannot be loaded: .*a FIFO/],
    );
  }, 60_000);

  it("a run's run.json, points.json and checkpoints that are FIFOs or devices: resume, plot and start: {run} refuse them", () => {
    const good = join(tmp, 'good-run');
    expect(branchlineMany(['run', write('good.yaml', slab), '--out', good, '--quiet'])[0].status).toBe(0);
    // a stopped run whose checkpoints were replaced by a FIFO and a link to /dev/zero
    const stopped = join(tmp, 'stopped-run');
    cpSync(good, stopped, { recursive: true });
    const run = JSON.parse(readFileSync(join(stopped, 'run.json'), 'utf8'));
    writeFileSync(join(stopped, 'run.json'), JSON.stringify({ ...run, status: 'stopped' }));
    execFileSync('mkfifo', [join(stopped, 'checkpoint.bin')]);
    symlinkSync('/dev/zero', join(stopped, 'checkpoint.previous.bin'));
    const checks: [string[], RegExp][] = [[['resume', stopped], /cannot resume: no usable checkpoint: checkpoint\.bin: a FIFO .*; checkpoint\.previous\.bin: a character device/]];
    // run.json itself odd
    for (const [name, make] of [
      ['fifo-run', (f: string) => execFileSync('mkfifo', [f])],
      ['urandom-run', (f: string) => symlinkSync('/dev/urandom', f)],
    ] as const) {
      const dir = join(tmp, name);
      mkdirSync(dir);
      make(join(dir, 'run.json'));
      checks.push(
        [['plot', dir], /run\.json: a (FIFO|character device)/],
        [['resume', dir], /holds no branchline run/],
        [['run', write(`from-${name}.yaml`, `${slab}start: {run: ${name}, point: end}\n`)], /start\.run: .*run\.json: a (FIFO|character device)/],
      );
    }
    // points.json odd
    const pts = join(tmp, 'points-run');
    cpSync(good, pts, { recursive: true });
    rmSync(join(pts, 'points.json'));
    symlinkSync('/dev/zero', join(pts, 'points.json'));
    checks.push([['run', write('from-points.yaml', `${slab}start: {run: points-run, point: end}\n`)], /start\.run: .*points\.json: a character device/]);
    refused(...checks);
  }, 60_000);
});

describe('deeply nested and very large expressions', () => {
  const rd = (reaction: string): string =>
    `model: reaction-diffusion\nfields: [u]\nparameters: {lambda: 0.5}\nreaction: {u: "${reaction}"}\ndiffusion: {u: 1}\nboundary: dirichlet\ngrid: {intervals: [8]}\ncontinuation: {parameter: lambda, bounds: [0, 1], max-points: 5}\n`;
  it('a sum of 300 terms works; 200 factors, 20,000 brackets and 100 nested calls are refused in one short line naming the field and the limit', () => {
    const sum = Array.from({ length: 300 }, (_, k) => `${(k + 1) / 1000} * lambda * exp(u / ${k + 1})`).join(' + ');
    const [check, product, brackets, nested] = branchlineMany(
      ['check', write('sum300.yaml', rd(sum))],
      ['run', write('product200.yaml', rd(Array.from({ length: 200 }, (_, k) => `(u + ${k + 1})`).join(' * '))), '--out', join(tmp, 'product200')],
      ['run', write('brackets.yaml', rd('('.repeat(20_000) + 'u' + ')'.repeat(20_000))), '--out', join(tmp, 'brackets')],
      ['check', write('nested.yaml', rd('sin('.repeat(100) + 'u' + ')'.repeat(100)))],
    );
    expect(check.status, check.stderr).toBe(0);
    expect(check.stdout).toMatch(/agree/i);
    for (const [r, pattern] of [
      [product, /product200\.yaml: reaction\.u: reaction for field 'u': the (second )?derivative of .* is too large \(limit: 10,000 nodes per derivative\)$/],
      [brackets, /brackets\.yaml: reaction\.u: reaction for field 'u': brackets nest more than 64 deep in "\({57}\.\.\." \(limit: 64 levels of nesting\)$/],
      [nested, /nested\.yaml: reaction\.u: reaction for field 'u': brackets nest more than 64 deep .*\(limit: 64 levels of nesting\)$/],
    ] as const) {
      expect(r.status, r.stderr).toBe(2);
      const line = r.stderr.trim();
      expect(line).toMatch(pattern);
      expect(line).not.toMatch(/\n|call stack/);
      expect(line.length).toBeLessThan(300);
    }
    expect(existsSync(join(tmp, 'product200'))).toBe(false);
  }, 120_000);
});

describe('fuzzed case files mixing odd files, nested expressions, prototype keys and control characters', () => {
  it('every one is refused with exit 2 and one clean line, in one spawned process (a hang would end it as a failure), no run folder', () => {
    const dir = join(tmp, 'fuzz-odd');
    mkdirSync(dir);
    const inDir = (name: string): string => join(dir, name);
    execFileSync('mkfifo', [inDir('pipe.npy')]);
    execFileSync('mkfifo', [inDir('pipe.mjs')]);
    execFileSync('mkfifo', [inDir('pipe.yaml')]);
    symlinkSync('/dev/zero', inDir('zero.npy'));
    symlinkSync('/dev/urandom', inDir('random.yaml'));
    writeFileSync(inDir('big.npy'), Buffer.alloc(300_000));
    mkdirSync(inDir('odd-run'));
    symlinkSync('/dev/zero', inDir('odd-run/run.json'));
    // one odd file per case (so none can run), mixed with hostile values elsewhere
    const odd = fc.constantFrom<[string[], unknown]>(
      [['start'], { solution: 'pipe.npy' }],
      [['start'], { solution: 'zero.npy' }],
      [['start'], { solution: 'big.npy' }],
      [['start'], { run: 'odd-run', point: 'end' }],
      [['model'], './pipe.mjs'],
      [['initial'], 'pipe.npy'],
      [['initial'], 'zero.npy'],
    );
    const hostile = fc.constantFrom<[string[], unknown]>(
      [['reaction', 'u'], `${'sin('.repeat(90)}u${')'.repeat(90)}`],
      [['reaction', 'u'], Array.from({ length: 300 }, (_, k) => `${k + 1} * u`).join(' + ')],
      [['reaction', 'u'], `${'('.repeat(20_000)}u${')'.repeat(20_000)}`],
      [['parameters', '__proto__'], { mu: 3 }],
      [['__proto__'], { model: 'bratu' }],
      [['name'], 'n\u001b]0;x\u0007'],
      [['grid', 'length'], 1e-320],
      [['continuation', 'bounds', 1], 1e308],
      [['boundary'], 'dirichlet'],
      [['initial'], { u: `${'sin('.repeat(90)}x${')'.repeat(90)}` }],
      [['initial'], JSON.parse('{"u": 1, "__proto__": {"v": 2}}')],
    );
    // each case is run (branchline run) or integrated in time (branchline settle: it has a time: key too)
    const docs = fc.sample(fc.tuple(odd, fc.array(hostile, { maxLength: 3 }), fc.boolean(), fc.boolean()), 30);
    const commands: string[][] = [['run', inDir('pipe.yaml')], ['run', inDir('random.yaml')]];
    docs.forEach(([first, rest, asJson, settle], i) => {
      const doc: Record<string, any> = {
        model: 'reaction-diffusion',
        fields: ['u'],
        parameters: { mu: 0.5 },
        reaction: { u: 'mu*exp(u)' },
        diffusion: { u: 1 },
        boundary: 'dirichlet',
        grid: { intervals: [8] },
        continuation: { parameter: 'mu', bounds: [0, 1], 'max-points': 5 },
        time: { end: 1 },
      };
      for (const [path, value] of [...rest, first]) {
        let o = doc;
        for (const k of path.slice(0, -1)) o = o[k];
        Object.defineProperty(o, path[path.length - 1], { value, enumerable: true, configurable: true, writable: true });
      }
      const file = inDir(`case-${i}.${asJson ? 'json' : 'yaml'}`);
      writeFileSync(file, JSON.stringify(doc)); // JSON text is YAML too
      commands.push([settle ? 'settle' : 'run', file, '--out', inDir(`out-${i}`)]);
    });
    const results = branchlineMany(...commands);
    results.forEach((r, i) => {
      const what = `${commands[i].join(' ')}: ${r.stderr.slice(0, 300)}`;
      expect(r.status, what).toBe(2);
      expect(r.stderr.trim().split('\n'), what).toHaveLength(1);
      expect(r.stderr).not.toMatch(raw);
      expect(r.stderr).not.toMatch(/call stack|\n\s+at /);
      expect(r.stderr.length).toBeLessThan(900);
    });
    docs.forEach((_, i) => expect(existsSync(inDir(`out-${i}`))).toBe(false));
  }, 120_000);
});
