import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { FastifyInstance } from 'fastify';
import type { BrowserContext } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { generateDemo } from '../../demo-data/generate.js';
import { buildApp } from '../../server/app.js';
import { FollowingClock } from '../../server/clock.js';
import { parseConfig } from '../../server/config.js';
import { openDatabase, type Db } from '../../server/db/database.js';
import { migrate } from '../../server/db/migrate.js';
import { removeDir } from '../helpers.js';
import { ARTIFACTS, HAVE_CHROMIUM, launchBrowser } from './harness.js';

const dir = mkdtempSync(join(tmpdir(), 'heft-review-'));
let db: Db;
let app: FastifyInstance;
let browser: BrowserContext;
let base = '';
let demoEnd = 0;

/** The text of every page of a PDF, by pdfjs-dist (Mozilla's PDF reader). */
async function pdfText(bytes: Uint8Array): Promise<string[]> {
  const pdfjs = await import('pdfjs-dist/legacy/build/pdf.mjs');
  const doc = await pdfjs.getDocument({ data: bytes, useSystemFonts: true }).promise;
  const pages: string[] = [];
  for (let i = 1; i <= doc.numPages; i += 1) {
    const content = await (await doc.getPage(i)).getTextContent();
    pages.push(content.items.map((item) => ('str' in item ? item.str : '')).join(' '));
  }
  return pages;
}

beforeAll(async () => {
  if (!HAVE_CHROMIUM) return;
  const config = parseConfig([], {}, { db: join(dir, 'demo.db'), timeZone: 'Europe/London', plantName: 'Review test plant' });
  db = openDatabase(config.db);
  migrate(db);
  demoEnd = Date.now();
  await generateDemo({ db, config, endAt: demoEnd });
  app = await buildApp({ db, clock: new FollowingClock(), config });
  await app.listen({ port: 0, host: '127.0.0.1' });
  base = `http://127.0.0.1:${(app.server.address() as { port: number }).port}`;
  browser = await launchBrowser();
}, 60_000);

afterAll(async () => {
  if (!HAVE_CHROMIUM) return;
  await browser.close();
  await app.close();
  db.close();
  removeDir(dir);
});

describe.skipIf(!HAVE_CHROMIUM)('the quality manager’s review', () => {
  it('when the demo’s two weeks are reviewed and printed, then the A4 PDF carries every line, its events with causes, capability and the caution', async () => {
    const page = await browser.newPage();
    await page.goto(`${base}/review`);
    await page.locator('#si-user').fill('quality');
    await page.locator('#si-secret').fill('quality-demo-3333');
    await page.locator('#signin-form button[type="submit"]').click();
    await page.locator('.line-report').first().waitFor();
    // the whole history, not just last week
    const first = new Date(demoEnd - 14 * 86_400_000).toISOString().slice(0, 10);
    const last = new Date(demoEnd).toISOString().slice(0, 10);
    await page.fill('#from', first);
    await page.fill('#to', last);
    await page.click('#range-form button[type="submit"]');
    await expect.poll(() => page.locator('#report-title').innerText()).toContain(first);
    await expect.poll(() => page.locator('.line-report').count()).toBe(3);
    await expect.poll(() => page.locator('.line-report .uplot').count()).toBeGreaterThanOrEqual(3); // charts drawn
    const onScreen = await page.locator('#lines').innerText();
    expect(onScreen).toContain('auger screw worn on filler head 3');
    expect(onScreen).toContain('dosing valve drifting as the hopper emptied');
    expect(onScreen).toContain('brown rice flows unevenly through the weigher');
    expect(onScreen).toContain('bag split on the jaw');
    expect(onScreen).toMatch(/Check overdue/);
    // the capability rows in the product's own words, and the index against T1 explained (no LSL on the demo products)
    expect(onScreen).toMatch(/Check to check \(σ in force: /);
    expect(onScreen).toContain('All packs together');
    expect(onScreen).toMatch(/Cpk is taken against T1 .* allows about 2\.5 % below T1/);
    // each stretch names the settings that judged it; the oats line's baseline limits came two days in
    expect(onScreen).toMatch(/judged by product settings v1 \(in force since .*\) and no approved limits\./);
    expect(onScreen).toMatch(/judged by product settings v1 \(in force since .*\) and approved limits v1\./);
    // the intervals say where σ came from: a baseline with its ν, or a configured σ taken as known
    expect(onScreen).toMatch(/σ from the baseline with ν ≈ \d+ \(Patnaik\)/);
    expect(onScreen).toMatch(/σ configured, taken as known: only the mean is uncertain/);
    // the demo's line 3 was cleaned for 40 minutes after its changeover and works the calendar's shifts
    // (nights and the weekend off); one alert was shelved with a reason
    expect(onScreen).toMatch(/h stopped \(cleaning 0\.7 h, off shift \d+\.\d h\)/);
    expect(onScreen).toMatch(/shelved 1× by [a-z.]+: known: film reel being changed on this line/);
    // the alarm-load figures per line
    expect(onScreen).toMatch(/10-minute windows in flood \(more than 10 new alerts\)\s+0\.00 %/);
    expect(onScreen).toMatch(/False alarms the rule set predicts for the hours running\s+\d+\.\d\d/);
    // the reference test's allowance at the advised target
    expect(onScreen).toMatch(/allowance 0\.379·s = [\d.]+ g/);
    await page.screenshot({ path: `${ARTIFACTS}review.png`, fullPage: true });
    await page.emulateMedia({ media: 'print' });
    const pdf = await page.pdf({ format: 'A4', printBackground: false });
    writeFileSync(`${ARTIFACTS}review.pdf`, pdf);
    const pages = await pdfText(new Uint8Array(pdf));
    // pdf text comes with ligatures split ("co ff ee"): compare with white space taken out
    const text = pages.join('').replace(/\s+/g, '');
    const has = (words: string) => expect(text).toContain(words.replace(/\s+/g, ''));
    expect(pages.length).toBeGreaterThanOrEqual(3); // a page per line at least
    has('Review test plant: review');
    for (const code of ['L1 — Line 1 — oats', 'L2 — Line 2 — coffee', 'L3 — Line 3 — rice']) has(code);
    has('auger screw worn on filler head 3');
    has('Capability');
    has('Net quantity (average system)');
    has('legal reference test');
    expect(text).not.toContain('Comparetwoperiods'); // the forms stay off paper
    await page.close();
  });

  it('when two periods are compared on the page, then the answer is in plain words', async () => {
    const page = await browser.newPage();
    await page.goto(`${base}/review`);
    await page.locator('.line-report').first().waitFor();
    const day = 86_400_000;
    const local = (ms: number) => new Date(ms).toISOString().slice(0, 16);
    await page.fill('#cmp-a-from', local(demoEnd - 13 * day));
    await page.fill('#cmp-a-to', local(demoEnd - 8 * day));
    await page.fill('#cmp-b-from', local(demoEnd - 7 * day));
    await page.fill('#cmp-b-to', local(demoEnd - 2 * day));
    await page.click('#compare-form button[type="submit"]');
    await expect.poll(() => page.locator('#compare-result').innerText()).toMatch(/^From A to B the mean (fell|rose) [\d.]+ g, 95 % CI/);
    await page.close();
  });
});
