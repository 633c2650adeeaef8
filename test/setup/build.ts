/**
 * Vitest global setup: compile to dist/ once before any test file runs (spawned-binary tests and
 * batch worker processes run the compiled program), so no test rebuilds dist/ while another one
 * is running it.
 */
import { spawnSync } from 'node:child_process';
import { resolve } from 'node:path';

export default function setup(): void {
  // tsc emits even when a file has a type error; the type check itself is `npm run typecheck`
  spawnSync(process.execPath, [resolve('node_modules/typescript/bin/tsc'), '-p', 'tsconfig.json'], { stdio: 'ignore' });
}
