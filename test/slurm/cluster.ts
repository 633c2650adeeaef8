/**
 * Whether the real Slurm of tools/slurm/local-slurm.sh (or any Slurm) takes jobs here. The
 * Slurm tests need it: they submit real job arrays with the real sbatch, watch them with squeue
 * and scontrol, and cancel tasks with scancel. Where it cannot be reached they are skipped with
 * the reason in their title; with BRANCHLINE_SLURM_REQUIRED=1 (CI) they fail instead.
 */
import { spawnSync } from 'node:child_process';

function run(command: string, args: string[]): { ok: boolean; out: string } {
  const r = spawnSync(command, args, { encoding: 'utf8', timeout: 30_000 });
  return { ok: !r.error && r.status === 0, out: `${r.stdout ?? ''}${r.stderr ?? ''}`.trim() };
}

/** Why Slurm cannot be used here, or undefined when it can. */
export function slurmMissing(): string | undefined {
  const ping = run('scontrol', ['ping']);
  if (!ping.ok && /ENOENT|not found/i.test(ping.out || 'ENOENT')) return 'Slurm is not installed here';
  if (!/is UP/.test(ping.out)) return `Slurm's controller does not answer (${ping.out.split('\n')[0] || 'no answer'})`;
  const nodes = run('sinfo', ['-h', '-o', '%t']);
  if (!nodes.ok || !/^(idle|mix|alloc)/m.test(nodes.out)) return `no Slurm node takes jobs (sinfo: ${nodes.out.split('\n')[0] || 'nothing'})`;
  return undefined;
}

const missing = slurmMissing();
if (missing && process.env.BRANCHLINE_SLURM_REQUIRED === '1') {
  throw new Error(`BRANCHLINE_SLURM_REQUIRED=1 but ${missing}; start it with: bash tools/slurm/local-slurm.sh start`);
}

if (missing) {
  // vitest does not list the tests of a skipped file by name: say why here
  console.warn(`Slurm tests skipped: ${missing}. Start a local Slurm as root with: bash tools/slurm/local-slurm.sh start`);
}

/** Title suffix and skip flag for the Slurm tests. */
export const slurm = {
  ready: missing === undefined,
  title: missing === undefined ? 'with the local Slurm' : `SKIPPED: ${missing}; start it as root with \`bash tools/slurm/local-slurm.sh start\``,
};
