import { existsSync, mkdirSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { chromium, type BrowserContext } from 'playwright-core';
import { ensureWebBuilt } from '../../server/web/build.js';

export const CHROMIUM = '/usr/bin/chromium';
export const HAVE_CHROMIUM = existsSync(CHROMIUM);
export const ARTIFACTS = new URL('../../test-artifacts/', import.meta.url).pathname;

if (!HAVE_CHROMIUM) {
  console.warn(
    '\n!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!\n' +
      '!! BROWSER TESTS SKIPPED: /usr/bin/chromium is missing.                !!\n' +
      "!! Install Debian's Chromium to run them: apt-get install chromium     !!\n" +
      '!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!!\n',
  );
}

/** Debian's Chromium with the flags that work on this machine kind, in a fresh profile. */
export async function launchBrowser(): Promise<BrowserContext> {
  await ensureWebBuilt();
  mkdirSync(ARTIFACTS, { recursive: true });
  return chromium.launchPersistentContext(mkdtempSync(join(tmpdir(), 'heft-chromium-')), {
    executablePath: CHROMIUM,
    headless: true,
    viewport: { width: 1280, height: 900 },
    args: ['--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'],
  });
}
