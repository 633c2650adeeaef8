// Run every bundled case (cases/*.yaml) with the compiled program and report each one's status.
// Usage: npm run cases  (builds first; runs go to runs/cases/<name>, replacing earlier ones).
// Cases with a search: section go to `branchline find-states`; cases with a time: section and no
// continuation: go to `branchline settle`, first; a case that
// starts from another bundled case's run (start: {run: ../runs/<name>}) is run on that case's
// folder under runs/cases/ (through a copy of the case with the path replaced).
// Exit code 0 when every case finished (and every integration reached a steady state), 1 otherwise.
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { basename, join, resolve } from 'node:path';
import { parse } from 'yaml';

const root = resolve(import.meta.dirname ?? new URL('.', import.meta.url).pathname, '..');
const bin = join(root, 'bin', 'branchline.js');
const out = (name) => join(root, 'runs', 'cases', name);
const cases = readdirSync(join(root, 'cases'))
  .filter((f) => /\.ya?ml$/.test(f))
  .sort()
  .map((file) => {
    const doc = parse(readFileSync(join(root, 'cases', file), 'utf8'));
    const name = basename(file).replace(/\.ya?ml$/, '');
    return { file, name, doc, settle: doc.time !== undefined && doc.continuation === undefined, search: doc.search !== undefined };
  });
// integrations first: their final states are where other cases start
cases.sort((a, b) => Number(b.settle) - Number(a.settle));
let failures = 0;
mkdirSync(out(''), { recursive: true });
for (const c of cases) {
  let file = join(root, 'cases', c.file);
  const from = /^\.\.\/runs\/(.+)$/.exec(c.doc.start?.run ?? '')?.[1];
  if (from !== undefined && cases.some((x) => x.name === from)) {
    file = join(out(''), `.${c.name}.json`);
    writeFileSync(file, JSON.stringify({ ...c.doc, start: { ...c.doc.start, run: out(from) } }));
  }
  const started = Date.now();
  const r = spawnSync(process.execPath, [bin, c.search ? 'find-states' : c.settle ? 'settle' : 'run', file, '--out', out(c.name), '--force', '--quiet'], { encoding: 'utf8' });
  const seconds = ((Date.now() - started) / 1000).toFixed(1);
  let status = 'no run.json';
  let detail = '';
  if (existsSync(join(out(c.name), 'run.json'))) {
    const run = JSON.parse(readFileSync(join(out(c.name), 'run.json'), 'utf8'));
    status = run.status;
    const n = run.counts ?? {};
    if (c.search) detail = `${(run.states ?? []).length} states in ${n.solves} solves${run.traces ? `, ${run.traces.length} traces` : ''}`;
    else if (c.settle) detail = `${run.outcome?.text ?? 'no outcome'}; ${n.steps} steps`;
    else detail = `${n.branches} branch${n.branches === 1 ? '' : 'es'}, ${n.points} points, ${n.folds} fold${n.folds === 1 ? '' : 's'}, ${n['branch-points']} branch point${n['branch-points'] === 1 ? '' : 's'}, ${n.hopf} Hopf`;
    if (run.failure) detail += `; ${run.failure}`;
  } else if (r.stderr) {
    const lines = r.stderr.trim().split('\n');
    detail = lines.find((l) => /^branchline: |Error/.test(l)) ?? lines[0];
  }
  if (status !== 'finished' || r.status !== 0) failures++;
  process.stdout.write(`${c.name.padEnd(18)} ${String(status).padEnd(9)} ${seconds.padStart(6)} s  ${detail}\n`);
}
process.stdout.write(failures ? `${failures} of ${cases.length} cases did not finish\n` : `all ${cases.length} cases finished; files in runs/cases/\n`);
process.exitCode = failures ? 1 : 0;
