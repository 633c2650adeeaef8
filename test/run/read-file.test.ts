/** Reading user and run files: regular files only, never past a limit (real FIFOs, devices, symlinks). */
import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync, symlinkSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { FileReadError, notRegularFile, readFileStart, readRegularFile, readTextFile } from '../../src/run/read-file.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-read-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

describe('readRegularFile', () => {
  it('reads a regular file, also through a symlink', () => {
    const f = join(tmp, 'a.txt');
    writeFileSync(f, 'hello');
    symlinkSync(f, join(tmp, 'link.txt'));
    expect(readTextFile(f, 100, 'a note')).toBe('hello');
    expect(readTextFile(join(tmp, 'link.txt'), 100, 'a note')).toBe('hello');
    expect(readFileStart(f, 3).toString()).toBe('hel');
    expect(notRegularFile(f)).toBeUndefined();
  });

  it('refuses devices (directly or through a symlink), FIFOs and folders at once, without reading', () => {
    const fifo = join(tmp, 'pipe');
    execFileSync('mkfifo', [fifo]); // nobody ever writes to it: reading it would block for ever
    symlinkSync('/dev/zero', join(tmp, 'zero'));
    const cases: [string, RegExp][] = [
      ['/dev/zero', /: a character device, not a regular file \(accepted: a regular file\)$/],
      ['/dev/urandom', /: a character device, not a regular file/],
      [join(tmp, 'zero'), /zero: a character device, not a regular file/],
      [fifo, /pipe: a FIFO \(named pipe\), not a regular file/],
      [tmp, /: a folder, not a regular file/],
      [join(tmp, 'absent'), /absent: no such file$/],
    ];
    for (const [path, pattern] of cases) {
      expect(() => readRegularFile(path, 1 << 20, 'a case file')).toThrow(pattern);
      expect(() => readFileStart(path, 10)).toThrow(FileReadError);
      expect(notRegularFile(path)).toMatch(pattern);
    }
  });

  it('never reads past the limit: by the stated size, and for files whose size says nothing (/proc)', () => {
    const f = join(tmp, 'long.txt');
    writeFileSync(f, 'x'.repeat(5000));
    expect(() => readRegularFile(f, 4096, 'a case file')).toThrow(/long\.txt: larger than the 4 KiB accepted for a case file$/);
    expect(readRegularFile(f, 5000, 'a case file').length).toBe(5000);
    // /proc files report size 0 and still hold text: the limit holds while reading
    expect(() => readRegularFile('/proc/self/maps', 16, 'a case file')).toThrow(/larger than the 16 bytes accepted/);
  });
});
