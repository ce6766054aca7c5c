// Runs a compiled entry point of Heft (`node scripts/built.mjs server/main [args…]`), compiling the
// server first when dist/node is missing or older than its sources. Production runs this: plain
// JavaScript, no TypeScript loader at run time.
import { execFileSync } from 'node:child_process';
import { existsSync, readdirSync, statSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

const root = dirname(dirname(fileURLToPath(import.meta.url)));
const [entry, ...args] = process.argv.slice(2);
if (!entry) {
  process.stderr.write('usage: node scripts/built.mjs server/main [args…]\n');
  process.exit(2);
}

function newest(dir) {
  let latest = 0;
  for (const e of readdirSync(dir, { withFileTypes: true })) {
    const path = join(dir, e.name);
    latest = Math.max(latest, e.isDirectory() ? newest(path) : statSync(path).mtimeMs);
  }
  return latest;
}

const marker = join(root, 'dist', 'node', '.tsbuildinfo');
const sources = Math.max(newest(join(root, 'server')), newest(join(root, 'demo-data')), statSync(join(root, 'tsconfig.build.json')).mtimeMs);
if (!existsSync(marker) || statSync(marker).mtimeMs < sources) {
  process.stderr.write('compiling the server (tsc -p tsconfig.build.json)…\n');
  execFileSync(process.execPath, [join(root, 'node_modules', 'typescript', 'bin', 'tsc'), '-p', join(root, 'tsconfig.build.json')], { stdio: 'inherit' });
}
process.argv = [process.argv[0], join(root, 'dist', 'node', `${entry}.js`), ...args];
await import(pathToFileURL(join(root, 'dist', 'node', `${entry}.js`)).href);
