import { existsSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

/**
 * The project's root: the nearest folder above this file that holds package.json. The same code
 * runs from the sources (server/) and compiled (dist/node/server/), so paths are found, not counted.
 */
function findRoot(from: string): string {
  for (let dir = from; ; dir = dirname(dir)) {
    if (existsSync(join(dir, 'package.json')) && existsSync(join(dir, 'migrations'))) return dir;
    if (dirname(dir) === dir) throw new Error(`no Heft package.json above ${from}`);
  }
}

export const PROJECT_ROOT = findRoot(dirname(fileURLToPath(import.meta.url)));
export const fromRoot = (...parts: string[]) => join(PROJECT_ROOT, ...parts);
