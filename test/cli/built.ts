/**
 * Compile to dist/ (as `npm run build` does) unless dist/ is already newer than every source
 * file: spawned-binary tests and batch worker processes run the compiled program.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, readdirSync, statSync } from 'node:fs';
import { join, resolve } from 'node:path';

function newest(dir: string): number {
  let t = 0;
  for (const e of readdirSync(dir, { withFileTypes: true })) {
    const p = join(dir, e.name);
    if (e.isDirectory()) t = Math.max(t, newest(p));
    else if (e.name.endsWith('.ts')) t = Math.max(t, statSync(p).mtimeMs);
  }
  return t;
}

export function ensureBuilt(): void {
  const marker = resolve('dist/src/run/batch-worker.js');
  const sources = Math.max(newest(resolve('src')), newest(resolve('discretisations')));
  if (existsSync(marker) && statSync(marker).mtimeMs >= sources && statSync(resolve('dist/src/cli/main.js')).mtimeMs >= sources) return;
  // tsc emits even when another file has a type error
  spawnSync(process.execPath, [resolve('node_modules/typescript/bin/tsc'), '-p', 'tsconfig.json'], { stdio: 'ignore' });
}
