/**
 * Several `branchline` commands in one spawned process (one start-up instead of one each; the
 * machine has two cores): each runs the compiled `main` on the real process streams, as
 * bin/branchline.js does, one after another. The spawn's timeout ends a hang as a failure.
 */
import { spawnSync } from 'node:child_process';
import { resolve } from 'node:path';
import { expect } from 'vitest';

export interface Spawned {
  status: number;
  stdout: string;
  stderr: string;
}

export function spawnMany(cwd: string, commands: string[][], timeout = 60_000): Spawned[] {
  const script = `
    const { main } = await import(${JSON.stringify(resolve('dist/src/cli/main.js'))});
    for (const args of JSON.parse(process.env.COMMANDS)) {
      const code = await main(['node', 'branchline', ...args]);
      const mark = '\\n@@@ ' + code + '\\n';
      process.stdout.write(mark);
      process.stderr.write(mark);
    }`;
  const r = spawnSync(process.execPath, ['--input-type=module', '-e', script], { encoding: 'utf8', cwd, timeout, env: { ...process.env, COMMANDS: JSON.stringify(commands) } });
  const split = (text: string): { code: number; text: string }[] => {
    const parts = text.split(/\n@@@ (\d+)\n/);
    const out: { code: number; text: string }[] = [];
    for (let i = 0; i + 1 < parts.length; i += 2) out.push({ text: parts[i], code: Number(parts[i + 1]) });
    return out;
  };
  const out = split(r.stdout);
  const err = split(r.stderr);
  expect(err.length, `the process ended early (status ${r.status}, signal ${r.signal}): ${r.stderr.slice(-2000)}`).toBe(commands.length);
  return err.map((e, i) => ({ status: e.code, stdout: out[i]?.text ?? '', stderr: e.text }));
}
