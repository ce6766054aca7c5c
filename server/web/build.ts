import { existsSync, readdirSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { fromRoot } from '../paths.js';

export const WEB_SOURCE = fromRoot('web');
export const WEB_DIST = fromRoot('dist', 'web');
const CONFIG = fromRoot('vite.config.ts');

function newest(dir: string): number {
  let latest = 0;
  for (const entry of readdirSync(dir, { withFileTypes: true })) {
    const path = join(dir, entry.name);
    latest = Math.max(latest, entry.isDirectory() ? newest(path) : statSync(path).mtimeMs);
  }
  return latest;
}

/** Builds the pages with Vite when dist/web is missing or older than web/; returns whether it built. */
export async function ensureWebBuilt(log: (message: string) => void = () => {}): Promise<boolean> {
  const marker = join(WEB_DIST, 'index.html');
  // an installed build (a container image) ships the pages without their sources
  if (existsSync(marker) && (!existsSync(WEB_SOURCE) || statSync(marker).mtimeMs >= newest(WEB_SOURCE))) return false;
  log('building the pages with Vite…');
  const { build } = await import('vite');
  await build({ configFile: CONFIG, logLevel: 'warn' });
  return true;
}
