import { execFileSync } from 'node:child_process';
import { join } from 'node:path';

/**
 * vitest global set-up: compiles the server once (incremental tsc, as `npm run build` does), so the
 * tests that start a server or the CLI as a process run the built JavaScript that production runs.
 */
export default function setup(): void {
  const root = join(import.meta.dirname, '..');
  execFileSync(process.execPath, [join(root, 'node_modules', 'typescript', 'bin', 'tsc'), '-p', join(root, 'tsconfig.build.json')], { stdio: 'inherit' });
}

/** The compiled entry point of the server or the CLI, for tests that spawn it. */
export const BUILT_SERVER = join(import.meta.dirname, '..', 'dist', 'node', 'server', 'main.js');
export const BUILT_CLI = join(import.meta.dirname, '..', 'dist', 'node', 'server', 'cli.js');
