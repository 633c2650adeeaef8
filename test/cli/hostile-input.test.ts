/**
 * Hostile input from the command line (spawned `branchline` processes, real files): control
 * characters in case values never reach the terminal raw.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { progressView } from '../../src/run/progress.js';
import { ensureBuilt } from './built.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-hostile-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));
const bin = resolve('bin/branchline.js');
beforeAll(() => ensureBuilt(), 60_000);

function branchline(...args: string[]): { status: number | null; stdout: string; stderr: string } {
  const r = spawnSync(process.execPath, [bin, ...args], { encoding: 'utf8', cwd: tmp, timeout: 60_000 });
  return { status: r.status, stdout: r.stdout, stderr: r.stderr };
}

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
    for (const file of [yaml, json]) {
      const r = branchline('run', file);
      expect(r.status).toBe(2);
      expect(r.stderr).not.toMatch(raw);
      // shown as \x1b (or \u001b where the message quotes a key as JSON)
      expect(r.stderr).toMatch(/\\(x1b|u001b)\]0;owned\\(x07|u0007)\\(x1b|u001b)\[2J\\x9b1m\\u202e/);
      expect(r.stderr.trim().split('\n')).toHaveLength(1);
    }
    // the file name itself is escaped too
    expect(branchline('check', yaml).stderr).toMatch(/evil\\x1b\[2J\.yaml: model: /);
  }, 60_000);

  it('in messages from a code model and from the option parser', () => {
    const model = write('loud-model.mjs', `export default function () { throw new Error(${JSON.stringify(`no ${esc} problem`)}); }\n`);
    const file = write('loud.yaml', `model: ./loud-model.mjs\ngrid: {intervals: [16]}\ncontinuation: {parameter: lambda, bounds: [0, 4]}\n`);
    const r = branchline('run', file);
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/failed to build the problem: no \\x1b\]0;owned/);
    expect(r.stderr).not.toMatch(raw);
    const opt = branchline('run', file, `--f\u001b[2Jorce`);
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
    for (const [name, text, pattern] of files) {
      const out = join(tmp, `out-${name}`);
      const r = branchline('run', write(name, text), '--out', out);
      expect(r.status, name).toBe(2);
      expect(r.stderr).toMatch(pattern);
      expect(r.stderr.trim().split('\n')).toHaveLength(1);
      expect(existsSync(out)).toBe(false);
    }
  }, 60_000);
});
