#!/usr/bin/env node
// branchline command-line entry point: runs the compiled CLI (dist/, built by `npm ci` / `npm run build`).
import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';

// a closed pipe (`branchline new bratu | head`) ends the output quietly, as other tools do
for (const stream of [process.stdout, process.stderr]) {
  stream.on('error', (e) => {
    if (e && e.code === 'EPIPE') process.exit(0);
    throw e;
  });
}

const main = new URL('../dist/src/cli/main.js', import.meta.url);
if (!existsSync(fileURLToPath(main))) {
  process.stderr.write('branchline: the compiled program is missing (dist/); run `npm run build` in the package folder\n');
  process.exit(2);
}
const { main: run } = await import(main.href);
process.exitCode = await run(process.argv);
