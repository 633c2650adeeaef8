// Run every bundled case (cases/*.yaml) with the compiled program and report each one's status.
// Usage: npm run cases  (builds first; runs go to runs/cases/<name>, replacing earlier ones).
// Exit code 0 when every case finished, 1 otherwise.
import { spawnSync } from 'node:child_process';
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { basename, join, resolve } from 'node:path';

const root = resolve(import.meta.dirname ?? new URL('.', import.meta.url).pathname, '..');
const bin = join(root, 'bin', 'branchline.js');
const cases = readdirSync(join(root, 'cases')).filter((f) => /\.ya?ml$/.test(f)).sort();
let failures = 0;
for (const file of cases) {
  const name = basename(file).replace(/\.ya?ml$/, '');
  const out = join(root, 'runs', 'cases', name);
  const started = Date.now();
  const r = spawnSync(process.execPath, [bin, 'run', join(root, 'cases', file), '--out', out, '--force', '--quiet'], { encoding: 'utf8' });
  const seconds = ((Date.now() - started) / 1000).toFixed(1);
  let status = 'no run.json';
  let detail = '';
  if (existsSync(join(out, 'run.json'))) {
    const run = JSON.parse(readFileSync(join(out, 'run.json'), 'utf8'));
    status = run.status;
    const c = run.counts ?? {};
    detail = `${c.branches} branch${c.branches === 1 ? '' : 'es'}, ${c.points} points, ${c.folds} fold${c.folds === 1 ? '' : 's'}, ${c['branch-points']} branch point${c['branch-points'] === 1 ? '' : 's'}, ${c.hopf} Hopf`;
    if (run.failure) detail += `; ${run.failure}`;
  } else if (r.stderr) {
    const lines = r.stderr.trim().split('\n');
    detail = lines.find((l) => /^branchline: |Error/.test(l)) ?? lines[0];
  }
  if (status !== 'finished' || r.status !== 0) failures++;
  process.stdout.write(`${name.padEnd(18)} ${String(status).padEnd(9)} ${seconds.padStart(6)} s  ${detail}\n`);
}
process.stdout.write(failures ? `${failures} of ${cases.length} cases did not finish\n` : `all ${cases.length} cases finished; files in runs/cases/\n`);
process.exitCode = failures ? 1 : 0;
