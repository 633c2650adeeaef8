/**
 * A run folder is data: a forged checkpoint (or run.json, or points.json) never makes branchline
 * import code the user did not name. `resume` loads a code model only with the case file naming
 * it (--case) or with --load-code-model, which prints the module's path before loading it;
 * `plot DIR` and `start: {run: DIR}` never load a run's model. Real processes, real files; the
 * "evil" module leaves a marker file when it is imported.
 */
import { cpSync, existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runSession } from '../../src/run/batch.js';
import { prepareCase } from '../../src/run/case.js';
import { checkpointFile, decodeCheckpoint, encodeCheckpoint, previousCheckpointFile } from '../../src/run/checkpoint.js';
import type { ProgressView } from '../../src/run/progress.js';
import { prepareSettleCase } from '../../src/run/settle-case.js';
import { settleCase } from '../../src/run/settle.js';
import { ensureBuilt } from './built.js';
import { spawnMany } from './spawn-many.js';

const tmp = mkdtempSync(join(tmpdir(), 'branchline-code-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));
beforeAll(() => ensureBuilt(), 60_000);

const marker = join(tmp, 'evil-was-imported');
const evil = join(tmp, 'evil.mjs');
writeFileSync(
  evil,
  `import { appendFileSync } from 'node:fs';\nappendFileSync(${JSON.stringify(marker)}, 'imported\\n');\nprocess.stderr.write('EVIL MODULE RUNS\\n');\nexport default function () { throw new Error('evil'); }\n`,
);
const write = (name: string, text: string): string => {
  const f = join(tmp, name);
  writeFileSync(f, text);
  return f;
};
const json = (file: string): Record<string, any> => JSON.parse(readFileSync(file, 'utf8'));

/** Run a case in this process and stop it (as Ctrl-C does) after `points` points: a stopped run with a checkpoint. */
async function stoppedRun(caseFile: string, out: string, points = 4): Promise<void> {
  const prepared = await prepareCase(caseFile);
  const controller = new AbortController();
  const view: ProgressView = {
    start() {},
    update(_name, info) {
      if (info.points >= points) controller.abort();
    },
    log() {},
    end() {},
    close() {},
  };
  const result = await runSession(prepared, { outDir: out, signal: controller.signal, view, name: prepared.case.name });
  expect(result.status).toBe('stopped');
  expect(existsSync(join(out, checkpointFile))).toBe(true);
}

/** Rewrite a run's checkpoint (a valid checksum: only the intent is forged) so that its case names `model`. */
function forgeCheckpoint(dir: string, model: string): void {
  const doc = decodeCheckpoint(readFileSync(join(dir, checkpointFile)));
  writeFileSync(join(dir, checkpointFile), encodeCheckpoint({ ...doc, case: { ...doc.case, model } }));
  rmSync(join(dir, previousCheckpointFile), { force: true });
}

const slabText = 'name: slab\nmodel: bratu\ngrid: {intervals: [16]}\ncontinuation: {parameter: lambda, bounds: [0, 4], max-points: 40}\ncheckpoint: {every-points: 1}\n';

describe('a forged run folder never runs code', () => {
  it('resume refuses a checkpoint naming a module (also when run.json agrees); plot and start: {run} never load it; --case must name the same model', async () => {
    const slab = write('slab.yaml', slabText);
    const base = join(tmp, 'slab-run');
    await stoppedRun(slab, base);
    // A: only the checkpoint names the module (run.json still shows bratu)
    const a = join(tmp, 'forged-a');
    cpSync(base, a, { recursive: true });
    forgeCheckpoint(a, evil);
    // B: run.json names it too
    const b = join(tmp, 'forged-b');
    cpSync(base, b, { recursive: true });
    forgeCheckpoint(b, evil);
    const run = json(join(b, 'run.json'));
    writeFileSync(join(b, 'run.json'), JSON.stringify({ ...run, case: { ...run.case, model: evil } }));
    // a finished run whose run.json names the module (for plot and start: {run})
    const done = join(tmp, 'forged-done');
    expect(spawnMany(tmp, [['run', slab, '--out', done, '--quiet']])[0].status).toBe(0);
    const doneRun = json(join(done, 'run.json'));
    writeFileSync(join(done, 'run.json'), JSON.stringify({ ...doneRun, case: { ...doneRun.case, model: evil } }));
    // C: points.json sends the start state outside the run folder
    const c = join(tmp, 'forged-c');
    cpSync(done, c, { recursive: true });
    const pts = json(join(c, 'points.json'));
    // (the end point that `start: {point: end}` takes; a fold may come before it in the list)
    pts.points.find((p: { kind: string }) => p.kind === 'end').solution = '../../../etc/passwd';
    writeFileSync(join(c, 'points.json'), JSON.stringify(pts));

    const [resumeA, resumeB, plotB, startB, withCase, startC] = spawnMany(tmp, [
      ['resume', a],
      ['resume', b],
      ['plot', done],
      ['run', write('from-b.yaml', `${slabText.replace('name: slab', 'name: from-b')}start: {run: forged-done, point: end}\n`), '--out', join(tmp, 'from-b')],
      ['resume', b, '--case', slab],
      ['run', write('from-c.yaml', `${slabText.replace('name: slab', 'name: from-c')}start: {run: forged-c, point: end}\n`), '--out', join(tmp, 'from-c')],
    ]);
    expect(resumeA.status).toBe(2);
    expect(resumeA.stderr).toMatch(/forged-a: cannot resume: the checkpoint names the model '.*evil\.mjs' but run\.json names 'bratu' \(was one of them replaced\?\)/);
    expect(resumeB.status).toBe(2);
    expect(resumeB.stderr).toMatch(/forged-b: cannot resume: the run uses the code model .*evil\.mjs, and a run folder never loads code by itself; pass the case file that names it \(--case FILE\), or --load-code-model/);
    expect(plotB.status, plotB.stderr).toBe(0);
    expect(startB.status, startB.stderr).toBe(0);
    expect(withCase.status).toBe(2);
    expect(withCase.stderr).toMatch(/cannot resume: the run was made with the model '.*evil\.mjs', but .*slab\.yaml names 'bratu'/);
    expect(startC.status).toBe(2);
    expect(startC.stderr).toMatch(/start\.point: run .*forged-c: the solution file of end 1 on branch 1 \(\.\.\/\.\.\/\.\.\/etc\/passwd\) lies outside the run folder/);
    for (const r of [resumeA, resumeB, plotB, startB, withCase, startC]) expect(r.stderr).not.toMatch(/EVIL/);
    expect(existsSync(marker)).toBe(false);

    // --load-code-model: the path is shown before the module is loaded (and then it runs: the user asked)
    const [loaded] = spawnMany(tmp, [['resume', b, '--load-code-model']]);
    expect(loaded.stderr).toMatch(/branchline: loading the code model .*evil\.mjs, as the run's checkpoint names it \(--load-code-model\)\n(.*\n)*EVIL MODULE RUNS/);
    expect(existsSync(marker)).toBe(true);
  }, 120_000);

  it('a genuine code-model run resumes with its case file (--case) or --load-code-model, and not from the folder alone', async () => {
    const fixture = resolve('test/fixtures/run/sine-code-model.yaml');
    const text = readFileSync(fixture, 'utf8').replace('../code-model.mjs', resolve('test/fixtures/code-model.mjs')) + 'checkpoint: {every-points: 1}\n';
    const caseFile = write('sine.yaml', text);
    const first = join(tmp, 'sine-run');
    await stoppedRun(caseFile, first, 3);
    const second = join(tmp, 'sine-run-2');
    cpSync(first, second, { recursive: true });
    const [alone, withCase, withOption] = spawnMany(tmp, [
      ['resume', first],
      ['resume', first, '--case', caseFile, '--quiet'],
      ['resume', second, '--load-code-model', '--quiet'],
    ]);
    expect(alone.status).toBe(2);
    expect(alone.stderr).toMatch(/cannot resume: the run uses the code model .*test\/fixtures\/code-model\.mjs/);
    expect(withCase.status, withCase.stderr).toBe(0);
    expect(withOption.status, withOption.stderr).toBe(0);
    expect(withOption.stderr).toMatch(/loading the code model .*test\/fixtures\/code-model\.mjs/);
    expect(json(join(first, 'run.json')).status).toBe('finished');
    expect(readFileSync(join(first, 'branches/1.csv'), 'utf8')).toBe(readFileSync(join(second, 'branches/1.csv'), 'utf8'));
  }, 120_000);

  it('a time integration (settle) of a code model resumes under the same rule; a forged one never loads its module', async () => {
    const model = resolve('test/fixtures/code-model.mjs');
    // u_t = u'' + λ sin u with λ = 1 < π²: the state decays to u = 0 (the sine model's only steady state there)
    const text = `name: sine-settle\nmodel: ${model}\ngrid: {intervals: [20]}\nparameters: {lambda: 1}\ninitial: {u: 0.5*sin(pi*x)}\ntime: {end: 100}\ncheckpoint: {every-points: 1}\n`;
    const caseFile = write('sine-settle.yaml', text);
    const whole = join(tmp, 'settle-whole');
    const first = join(tmp, 'settle-a');
    const prepared = await prepareSettleCase(caseFile);
    expect((await settleCase(prepared, { outDir: whole })).status).toBe('finished');
    const controller = new AbortController();
    const stopped = await settleCase(prepared, { outDir: first, signal: controller.signal, progress: (p) => p.step === 30 && controller.abort() });
    expect(stopped.status).toBe('stopped');
    const second = join(tmp, 'settle-b');
    cpSync(first, second, { recursive: true });
    const forged = join(tmp, 'settle-forged');
    cpSync(first, forged, { recursive: true });
    forgeCheckpoint(forged, evil);
    const run = json(join(forged, 'run.json'));
    writeFileSync(join(forged, 'run.json'), JSON.stringify({ ...run, case: { ...run.case, model: evil } }));
    const [alone, withCase, withOption, forgedAlone, forgedCase] = spawnMany(tmp, [
      ['resume', first],
      ['resume', first, '--case', caseFile, '--quiet'],
      ['resume', second, '--load-code-model', '--quiet'],
      ['resume', forged],
      ['resume', forged, '--case', caseFile],
    ]);
    expect(alone.status).toBe(2);
    expect(alone.stderr).toMatch(/settle-a: cannot resume: the run uses the code model .*test\/fixtures\/code-model\.mjs, and a run folder never loads code by itself/);
    expect(withCase.status, withCase.stderr).toBe(0);
    expect(withOption.status, withOption.stderr).toBe(0);
    expect(withOption.stderr).toMatch(/loading the code model .*test\/fixtures\/code-model\.mjs/);
    expect(forgedAlone.status).toBe(2);
    expect(forgedAlone.stderr).toMatch(/settle-forged: cannot resume: the run uses the code model .*evil\.mjs, and a run folder never loads code by itself/);
    expect(forgedCase.status).toBe(2);
    expect(forgedCase.stderr).toMatch(/cannot resume: the run was made with the model '.*evil\.mjs', but .*sine-settle\.yaml names '.*code-model\.mjs'/);
    for (const r of [alone, withCase, withOption, forgedAlone, forgedCase]) expect(r.stderr).not.toMatch(/EVIL/);
    // both resumed integrations end as the uninterrupted one
    for (const dir of [first, second]) {
      expect(json(join(dir, 'run.json')).status).toBe('finished');
      expect(readFileSync(join(dir, 'monitors.csv'), 'utf8')).toBe(readFileSync(join(whole, 'monitors.csv'), 'utf8'));
      expect(readFileSync(join(dir, 'solutions/final.npy')).equals(readFileSync(join(whole, 'solutions/final.npy')))).toBe(true);
    }
  }, 120_000);

  it("a sweep of a code-model case loads the case's own module for every value, here and in worker processes", () => {
    // the sine model with a second parameter the residual ignores (a sweep needs a parameter besides the continued one)
    const wrapped = write('sine-two.mjs', `import base from ${JSON.stringify(resolve('test/fixtures/code-model.mjs'))};\nexport default (o) => { const p = base(o); p.parameters = [...p.parameters, { name: 'spare', default: 0, description: 'unused' }]; return p; };\n`);
    const caseFile = write('sine-sweep.yaml', `name: sine-sweep\nmodel: ${wrapped}\ngrid: {intervals: [12]}\ncontinuation: {parameter: lambda, bounds: [0, 12], max-points: 15}\n`);
    const [here, workers] = spawnMany(tmp, [
      ['run', caseFile, '--sweep', 'spare=0,1', '--out', join(tmp, 'sweep-here'), '--quiet'],
      ['run', caseFile, '--sweep', 'spare=0,1', '--out', join(tmp, 'sweep-workers'), '--jobs', '2', '--quiet'],
    ]);
    expect(here.status, here.stderr).toBe(0);
    expect(workers.status, workers.stderr).toBe(0);
    for (const v of ['spare-0', 'spare-1']) {
      expect(json(join(tmp, 'sweep-workers', v, 'run.json')).status).toBe('finished');
      // the parameter is unused: every value traces the same branch
      expect(readFileSync(join(tmp, 'sweep-workers', v, 'branches/1.csv'), 'utf8')).toBe(readFileSync(join(tmp, 'sweep-here', 'spare-0', 'branches/1.csv'), 'utf8'));
    }
  }, 120_000);

  it("a refinement study of a code model resumes only as the user says (--case or --load-code-model); its grids load the study's module", () => {
    const model = resolve('test/fixtures/code-model.mjs');
    const caseFile = write('sine-study.yaml', `name: sine-study\nmodel: ${model}\ngrid: {intervals: [8]}\ncontinuation: {parameter: lambda, bounds: [0, 12], max-points: 30}\n`);
    const whole = join(tmp, 'study-whole');
    const [ran] = spawnMany(tmp, [['refine', caseFile, '--grids', '8,16', '--point', 'branch-point', '--out', whole, '--quiet']]);
    expect(ran.status, ran.stderr).toBe(0);
    // the same study as if killed before its second grid started: refine.json running, grid-16 absent
    const cut = (name: string): string => {
      const dir = join(tmp, name);
      cpSync(whole, dir, { recursive: true });
      rmSync(join(dir, 'grid-16'), { recursive: true, force: true });
      const doc = json(join(dir, 'refine.json'));
      writeFileSync(join(dir, 'refine.json'), JSON.stringify({ ...doc, status: 'running' }));
      return dir;
    };
    const a = cut('study-a');
    const b = cut('study-b');
    const [alone, withCase, withOption] = spawnMany(tmp, [
      ['resume', a],
      ['resume', a, '--case', caseFile, '--quiet'],
      ['resume', b, '--load-code-model', '--quiet'],
    ]);
    expect(alone.status).toBe(2);
    expect(alone.stderr).toMatch(/study-a: cannot resume: the run uses the code model .*test\/fixtures\/code-model\.mjs, and a run folder never loads code by itself/);
    expect(withCase.status, withCase.stderr).toBe(0);
    expect(withOption.status, withOption.stderr).toBe(0);
    for (const dir of [a, b]) {
      expect(json(join(dir, 'refine.json')).status).toBe('finished');
      expect(readFileSync(join(dir, 'grid-16', 'branches/1.csv'), 'utf8')).toBe(readFileSync(join(whole, 'grid-16', 'branches/1.csv'), 'utf8'));
    }
  }, 120_000);
});
