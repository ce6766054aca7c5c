import { expect } from 'vitest';
import { heftTest, setupLine } from '../helpers.js';
import { HAVE_CHROMIUM, launchBrowser } from './harness.js';

/** The API reference page in a real browser, under Heft's own Content Security Policy. */
heftTest.skipIf(!HAVE_CHROMIUM)('when an integrator opens /api/docs, then the reference renders every section without breaking the security policy', async ({ heft: t }) => {
  await setupLine(t);
  await t.app.listen({ port: 0, host: '127.0.0.1' });
  const base = `http://127.0.0.1:${(t.app.server.address() as { port: number }).port}`;
  const browser = await launchBrowser();
  try {
    const page = await browser.newPage();
    const violations: string[] = [];
    page.on('console', (m) => {
      if (m.type() === 'error') violations.push(m.text());
    });
    await page.goto(`${base}/api/docs/`);
    // the operation for posting a check, rendered from /api/docs/json
    const post = page.locator('.opblock-post', { hasText: '/api/lines/{lineId}/checks' }).first();
    await post.waitFor({ state: 'visible', timeout: 20_000 });
    await expect(page.locator('.opblock').count()).resolves.toBeGreaterThan(30);
    await expect(page.locator('.title').first().textContent()).resolves.toContain('Heft API');
    expect(violations.filter((v) => /Content Security Policy|Refused to/.test(v))).toEqual([]);
  } finally {
    await browser.close();
  }
}, 60_000);

