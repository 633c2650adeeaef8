/** The software name and version, read from the package.json above this module (src/ or dist/src/). */
import { existsSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

let cached: { name: string; version: string } | undefined;

export function softwareVersion(): { name: string; version: string } {
  if (cached) return cached;
  let dir = dirname(fileURLToPath(import.meta.url));
  for (let i = 0; i < 6; i++) {
    const file = join(dir, 'package.json');
    if (existsSync(file)) {
      try {
        const pkg = JSON.parse(readFileSync(file, 'utf8')) as { name?: string; version?: string };
        if (pkg.name === 'branchline' && typeof pkg.version === 'string') {
          cached = { name: pkg.name, version: pkg.version };
          return cached;
        }
      } catch {
        /* keep looking */
      }
    }
    const up = dirname(dir);
    if (up === dir) break;
    dir = up;
  }
  cached = { name: 'branchline', version: 'unknown' };
  return cached;
}
