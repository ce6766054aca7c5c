import type { BrowserContext } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { SECRETS, type TestApp } from '../helpers.js';
import { ARTIFACTS, HAVE_CHROMIUM, startPageApp, type PageApp } from './harness.js';

let t: TestApp;
let browser: BrowserContext;
let base: string;
let lineId: number;
let pages: PageApp | null = null;

beforeAll(async () => {
  if (!HAVE_CHROMIUM) return;
  pages = await startPageApp({ target: 503, sigma: 2, tare: 0 });
  ({ t, base, browser, lineId } = pages);
  const profile = await t.app.inject({ method: 'PUT', url: `/api/lines/${lineId}/scale`, headers: { cookie: t.cookies.admin }, payload: { connection: 'web-serial', baudRate: 4800, unstablePattern: '^US' } });
  if (profile.statusCode !== 200) throw new Error(profile.body);
});

afterAll(async () => {
  await pages?.close();
});

/**
 * A stand-in for the Web Serial API, put in before the page loads: one port whose `readable` the
 * test feeds with lines (`__scale.push`), pulls out (`__scale.unplug`) and plugs back (`__scale.replug`).
 */
function fakeSerial(): void {
  class FakePort extends EventTarget {
    readable: ReadableStream<Uint8Array> | null = null;
    opened: unknown[] = [];
    private feed: ReadableStreamDefaultController<Uint8Array> | null = null;
    async open(options: unknown) {
      if (this.readable) throw new DOMException('The port is already open.', 'InvalidStateError');
      this.opened.push(options);
      this.readable = new ReadableStream({
        start: (c) => {
          this.feed = c;
        },
      });
    }
    async close() {
      this.readable = null;
    }
    push(text: string) {
      this.feed?.enqueue(new TextEncoder().encode(text));
    }
    cut() {
      this.feed?.error(new DOMException('The device has been lost.', 'NetworkError'));
      this.readable = null;
    }
  }
  const port = new FakePort();
  // the browser remembers a port the page was granted (here: for the tab's session)
  const serial = Object.assign(new EventTarget(), {
    requestPort: async () => {
      sessionStorage.setItem('fake-serial-granted', '1');
      return port;
    },
    getPorts: async () => (sessionStorage.getItem('fake-serial-granted') ? [port] : []),
  });
  Object.defineProperty(navigator, 'serial', { value: serial });
  Object.assign(window, {
    __scale: {
      push: (text: string) => port.push(text),
      unplug: () => {
        port.cut();
        serial.dispatchEvent(new Event('disconnect'));
      },
      replug: () => serial.dispatchEvent(new Event('connect')),
      opened: () => port.opened,
    },
  });
}

type ScaleWindow = Window & { __scale: { push(text: string): void; unplug(): void; replug(): void; opened(): unknown[] } };

describe.skipIf(!HAVE_CHROMIUM)('a serial scale on the entry page', () => {
  it('when the operator connects the scale, then five stable readings fill five fields, the check is sent once from the scale, and unplugging says so', async () => {
    const page = await browser.newPage();
    page.on('pageerror', (e) => console.log('page error:', e.message));
    await page.addInitScript(fakeSerial);
    await page.goto(`${base}/entry?line=${lineId}`);
    await page.locator('#username').fill('operator');
    await page.locator('#pin').fill(SECRETS.operator);
    await page.locator('#signin-form button[type="submit"]').click();
    await page.locator('#w0').waitFor({ state: 'visible' });
    await page.locator('#connect-scale').click();
    await expect.poll(() => page.locator('#scale-note').innerText()).toMatch(/^scale connected/);
    // opened with the line's profile
    expect(await page.evaluate(() => (window as unknown as ScaleWindow).__scale.opened())).toEqual([{ baudRate: 4800, dataBits: 8, stopBits: 1, parity: 'none' }]);
    // two readings fill the first two fields, each marked as from the scale and judged like a typed value
    await page.evaluate(() => (window as unknown as ScaleWindow).__scale.push('US,GS,+0000497.0 g\r\nST,GS,+0000503.2 g\r\nST,GS,+0000480.0 g\r\n'));
    await expect.poll(() => page.locator('#w1').inputValue()).toBe('480');
    expect(await page.locator('#w0').inputValue()).toBe('503.2');
    expect(await page.locator('.field[data-source="scale"]').count()).toBe(2);
    expect(await page.locator('#w1-flag').innerText()).toMatch(/below T1/);
    await page.screenshot({ path: `${ARTIFACTS}entry-scale.png`, fullPage: true });
    // the rest come split across chunks, one in kg; the last pack sends the check without a key pressed
    await page.evaluate(() => (window as unknown as ScaleWindow).__scale.push('ST,GS,+0000504.1 g\r\nST,GS,+00'));
    await page.evaluate(() => (window as unknown as ScaleWindow).__scale.push('00502.7 g\r\n0,5036 kg\r\n'));
    await page.locator('#result .headline').waitFor({ state: 'visible' });
    await expect.poll(() => (t.db.prepare('SELECT COUNT(*) AS n FROM checks').get() as { n: number }).n).toBe(1);
    const stored = t.db.prepare('SELECT source, (SELECT json_group_array(net) FROM (SELECT net FROM packs WHERE check_id = checks.id ORDER BY position)) AS nets FROM checks').get() as { source: string; nets: string };
    expect([stored.source, JSON.parse(stored.nets)]).toEqual(['scale', [503.2, 480, 504.1, 502.7, 503.6]]);

    await page.evaluate(() => (window as unknown as ScaleWindow).__scale.unplug());
    await expect.poll(() => page.locator('#scale-note').innerText()).toBe('scale disconnected — type the weights or reconnect');
    await page.evaluate(() => (window as unknown as ScaleWindow).__scale.replug());
    await expect.poll(() => page.locator('#scale-note').innerText()).toMatch(/^scale connected/);
    // the tablet reloads the page (it slept, or the browser restarted the tab): the granted port opens by itself
    await page.reload();
    await page.locator('#w0').waitFor({ state: 'visible' });
    await expect.poll(() => page.locator('#scale-note').innerText()).toMatch(/^scale connected/);
    await page.evaluate(() => (window as unknown as ScaleWindow).__scale.push('ST,GS,+0000503.0 g\r\n'));
    await expect.poll(() => page.locator('#w0').inputValue()).toBe('503');
    await page.close();
  });
});
