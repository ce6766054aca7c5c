import { existsSync, mkdirSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { chromium, type BrowserContext } from 'playwright-core';
import { ensureWebBuilt } from '../../server/web/build.js';
import { makeTestApp, removeDir, setupLine, type TestApp } from '../helpers.js';

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

/** A real-time app on a system-given port with one line set up, and a browser for it. */
export interface PageApp {
  t: TestApp;
  base: string;
  browser: BrowserContext;
  lineId: number;
  close(): Promise<void>;
}

/** Starts a page test's own app (one line running `product`) listening on 127.0.0.1, and Chromium. */
export async function startPageApp(product: Record<string, unknown> = {}): Promise<PageApp> {
  const t = await makeTestApp({ realTime: true });
  const { lineId } = await setupLine(t, product);
  await t.app.listen({ port: 0, host: '127.0.0.1' });
  const base = `http://127.0.0.1:${(t.app.server.address() as { port: number }).port}`;
  const browser = await launchBrowser();
  return {
    t,
    base,
    browser,
    lineId,
    async close() {
      await browser.close();
      await t.close();
      removeDir(t.dir);
    },
  };
}
