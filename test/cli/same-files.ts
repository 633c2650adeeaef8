/**
 * Compare a run folder with an uninterrupted reference run of the same case: the same branch
 * files with every number within 1e-10 (the same rows), the same special points and solution
 * files, run.json finished with the same counts, and no checkpoint left. Also: every file below a
 * folder, and a run.json without the fields that may differ between two runs of one case.
 */
import { existsSync, readFileSync, readdirSync } from 'node:fs';
import { join, relative } from 'node:path';
import { expect } from 'vitest';
import { readCsv, readNpy } from '../../src/run/writers.js';

const json = (file: string): Record<string, any> => JSON.parse(readFileSync(file, 'utf8'));

export function expectSameFiles(dir: string, reference: string, what: string): void {
  const files = readdirSync(join(reference, 'branches')).sort();
  expect(readdirSync(join(dir, 'branches')).sort(), what).toEqual(files);
  let worst = 0;
  const compare = (a: number, b: number, where: string): void => {
    if (Object.is(a, b)) return;
    const d = Math.abs(a - b) / Math.max(1, Math.abs(b));
    if (!(d <= 1e-10)) expect.fail(`${what}: ${where}: ${a} differs from the uninterrupted run's ${b}`);
    worst = Math.max(worst, d);
  };
  for (const f of files) {
    const a = readCsv(join(dir, 'branches', f));
    const b = readCsv(join(reference, 'branches', f));
    expect(a.columns, `${what}: ${f}`).toEqual(b.columns);
    expect(a.rows.length, `${what}: rows of ${f}`).toBe(b.rows.length);
    a.rows.forEach((row, i) => row.forEach((v, j) => compare(v, b.rows[i][j], `${f} row ${i + 1} ${b.columns[j]}`)));
  }
  const pa = json(join(dir, 'points.json')).points as Record<string, any>[];
  const pb = json(join(reference, 'points.json')).points as Record<string, any>[];
  expect(pa.map((p) => [p.kind, p.branch, p.solution]), `${what}: special points`).toEqual(pb.map((p) => [p.kind, p.branch, p.solution]));
  pa.forEach((p, i) => {
    compare(p.value, pb[i].value, `points.json ${p.kind} on branch ${p.branch}`);
    for (const [m, v] of Object.entries(pb[i].monitors as Record<string, number>)) compare(p.monitors[m], v, `points.json ${p.kind} ${m}`);
    if (p.solution) {
      const na = readNpy(join(dir, p.solution));
      const nb = readNpy(join(reference, p.solution));
      expect(na.shape).toEqual(nb.shape);
      na.data.forEach((v, k) => compare(v, nb.data[k], `${p.solution}[${k}]`));
    }
  });
  if (existsSync(join(reference, 'solutions'))) {
    expect(readdirSync(join(dir, 'solutions')).sort(), `${what}: solution files`).toEqual(readdirSync(join(reference, 'solutions')).sort());
  }
  const run = json(join(dir, 'run.json'));
  expect(run.status, what).toBe('finished');
  expect(run.counts, what).toEqual(json(join(reference, 'run.json')).counts);
  // a finished run keeps no checkpoint (nothing is left to resume) and no lock
  expect(existsSync(join(dir, 'checkpoint.bin')), what).toBe(false);
  expect(existsSync(join(dir, 'writer.lock')), what).toBe(false);
  expect(worst).toBeLessThanOrEqual(1e-10);
}

/** Every file below `dir`, as paths relative to it, sorted. */
export function filesBelow(dir: string): string[] {
  const out: string[] = [];
  const walk = (d: string): void => {
    for (const e of readdirSync(d, { withFileTypes: true })) {
      if (e.isDirectory()) walk(join(d, e.name));
      else out.push(relative(dir, join(d, e.name)));
    }
  };
  walk(dir);
  return out.sort();
}

/** A run.json without what may differ between two runs of one case (README: times, resumes). */
export function runRecordWithoutTimes(file: string): Record<string, unknown> {
  const r = json(file);
  for (const k of ['started', 'ended', 'resumed', 'timings']) delete r[k];
  return r;
}
