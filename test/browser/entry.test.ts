import type { BrowserContext, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { countRows, SECRETS, type TestApp } from '../helpers.js';
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
});

afterAll(async () => {
  await pages?.close();
});

/** Opens the entry page bound to the line and signs in with the keyboard alone. */
async function signedIn(): Promise<Page> {
  const page = await browser.newPage();
  page.on('pageerror', (e) => console.log('page error:', e.message));
  page.on('console', (m) => {
    if (m.type() === 'error') console.log('page console:', m.text());
  });
  await page.goto(`${base}/entry?line=${lineId}`);
  // either the sign-in form or (with a session already) the weights appear
  await page.locator('#username:visible, #w0:visible').first().waitFor();
  const signin = page.locator('#username');
  if (await signin.isVisible()) {
    await signin.focus();
    await page.keyboard.type('operator');
    await page.keyboard.press('Tab');
    await page.keyboard.type(SECRETS.operator);
    await page.keyboard.press('Enter');
  }
  await page.locator('#w0').waitFor({ state: 'visible' });
  await expect.poll(() => page.evaluate(() => document.activeElement?.id)).toBe('w0');
  return page;
}

/** Types weights as a bench scale in keyboard mode does: the value, then Enter. */
async function keyIn(page: Page, weights: string[]): Promise<void> {
  for (const w of weights) {
    await page.keyboard.type(w);
    await page.keyboard.press('Enter');
  }
}

const currentChecks = () => (t.db.prepare('SELECT COUNT(*) AS n FROM checks WHERE superseded_by IS NULL').get() as { n: number }).n;

describe.skipIf(!HAVE_CHROMIUM)('the operator’s entry page', () => {
  it('when an operator keys in five weights with the keyboard only, then the result is on screen in plain words', async () => {
    const page = await signedIn();
    await expect.poll(() => page.locator('#facts').innerText()).toContain('485.0 g');
    const before = countRows(t.db, 'checks');
    const started = Date.now();
    await keyIn(page, ['503.2', '504,1', '502.8', '503.6', '504.0']);
    await page.locator('#result .headline').waitFor({ state: 'visible' });
    const elapsed = Date.now() - started;
    console.log(`entry: first key press to result on screen for 5 weights: ${elapsed} ms`);
    const text = await page.locator('#result').innerText();
    expect(text).toMatch(/Mean 503\.5 g, 0\.5 g over target \(SE 0\.\d g\)\./);
    expect(text).toMatch(/Next check due at \d\d:\d\d/);
    expect(countRows(t.db, 'checks')).toBe(before + 1);
    const stored = t.db.prepare('SELECT n, mean FROM checks ORDER BY id DESC LIMIT 1').get() as { n: number; mean: number };
    expect(stored.n).toBe(5);
    expect(stored.mean).toBeCloseTo(503.54, 10); // the comma in 504,1 was read as a decimal mark
    await page.screenshot({ path: `${ARTIFACTS}entry-result.png`, fullPage: true });
    await page.close();
  });

  it('when a slipped decimal is keyed, then it is flagged as typed and the operator must confirm before it is sent', async () => {
    const page = await signedIn();
    const before = countRows(t.db, 'checks');
    await keyIn(page, ['503.1', '50.3']);
    await expect.poll(() => page.locator('#w1-flag').innerText()).toMatch(/check the decimal point/);
    await keyIn(page, ['502.9', '503.3', '503.0']);
    const dialog = page.locator('#confirm');
    await dialog.waitFor({ state: 'visible' });
    expect(await page.locator('#confirm-text').innerText()).toContain('50.3 g');
    await page.screenshot({ path: `${ARTIFACTS}entry-confirm.png` });
    await page.keyboard.press('Enter'); // focus is on "Fix them"
    await dialog.waitFor({ state: 'hidden' });
    expect(countRows(t.db, 'checks')).toBe(before);
    expect(await page.evaluate(() => document.activeElement?.id)).toBe('w1');
    await page.keyboard.type('503.4');
    await page.keyboard.press('Enter');
    await page.locator('#w2').press('Enter');
    await page.locator('#w3').press('Enter');
    await page.locator('#w4').press('Enter');
    await page.locator('#result .headline').waitFor();
    expect(countRows(t.db, 'checks')).toBe(before + 1);
    await page.close();
  });

  it('when a value is below T1 or T2, then the field says so in words, not only in colour', async () => {
    const page = await signedIn();
    await keyIn(page, ['480']);
    await page.keyboard.type('465');
    await expect.poll(() => page.locator('#w0-flag').innerText()).toMatch(/below T1/);
    await expect.poll(() => page.locator('#w1-flag').innerText()).toMatch(/below T2.*must not be sold/);
    await page.close();
  });

  it('when the Wi-Fi drops, then two checks wait on the tablet, and come back online they are stored exactly once each', async () => {
    const page = await signedIn();
    const before = currentChecks();
    await browser.setOffline(true);
    await keyIn(page, ['503.0', '503.1', '503.2', '503.3', '503.4']);
    await expect.poll(() => page.locator('#queue').innerText()).toMatch(/1 check waiting to send/);
    await keyIn(page, ['502.0', '502.1', '502.2', '502.3', '502.4']);
    await expect.poll(() => page.locator('#queue').innerText()).toMatch(/2 checks waiting to send/);
    await page.screenshot({ path: `${ARTIFACTS}entry-offline.png`, fullPage: true });
    expect(currentChecks()).toBe(before);
    await browser.setOffline(false);
    await expect.poll(() => currentChecks(), { timeout: 15_000 }).toBe(before + 2);
    await expect.poll(() => page.locator('#queue').isVisible()).toBe(false);
    const last = t.db.prepare('SELECT mean FROM checks ORDER BY id DESC LIMIT 2').all() as { mean: number }[];
    expect(last.map((r) => r.mean).sort()).toEqual([502.2, 503.2]);
    // once the page has nothing more in flight, nothing more was sent
    await page.waitForLoadState('networkidle');
    expect(currentChecks()).toBe(before + 2);
    await page.close();
  });

  it('when the tab is closed with a check waiting, then the next visit sends it', async () => {
    const page = await signedIn();
    const before = currentChecks();
    await page.route('**/api/lines/*/checks', (route) => route.abort('internetdisconnected'));
    await keyIn(page, ['501.0', '501.1', '501.2', '501.3', '501.4']);
    await expect.poll(() => page.locator('#queue').innerText()).toMatch(/1 check waiting/);
    await page.close();
    expect(currentChecks()).toBe(before);
    const again = await signedIn();
    await expect.poll(() => currentChecks(), { timeout: 10_000 }).toBe(before + 1);
    await again.close();
  });

  it('when the last check is corrected with a reason, then both revisions are kept', async () => {
    const page = await signedIn();
    const before = countRows(t.db, 'checks');
    // 530.5 for 503.5: a slip inside the plausible band, so nothing stops it going out
    await keyIn(page, ['503.0', '530.5', '503.2', '503.3', '503.4']);
    await expect.poll(() => countRows(t.db, 'checks')).toBe(before + 1);
    await expect.poll(() => page.locator('#result').innerText()).toMatch(/Mean 508\.7 g/);
    const wrong = t.db.prepare('SELECT id FROM checks ORDER BY id DESC LIMIT 1').get() as { id: number };
    await page.click('#correct');
    await expect.poll(() => page.locator('#w1').inputValue()).toBe('530.5');
    await page.fill('#w1', '503.5');
    await page.fill('#reason', '530.5 was 503.5: fingers slipped');
    await page.click('#submit');
    await expect.poll(() => (t.db.prepare('SELECT COUNT(*) AS n FROM checks WHERE revises_check_id = ?').get(wrong.id) as { n: number }).n).toBe(1);
    const rows = t.db.prepare('SELECT revision, superseded_by, revision_reason FROM checks WHERE id = ? OR revises_check_id = ? ORDER BY id').all(wrong.id, wrong.id) as { revision: number; superseded_by: number | null; revision_reason: string | null }[];
    expect(rows.map((r) => r.revision)).toEqual([1, 2]);
    expect(rows[0]?.superseded_by).not.toBeNull();
    expect(rows[1]?.revision_reason).toBe('530.5 was 503.5: fingers slipped');
    await page.close();
  });

  it('when the operator stops the line for cleaning and starts it again, then the page and the server say so', async () => {
    const page = await signedIn();
    expect(await page.locator('#run-words').innerText()).toBe('Line running');
    await page.getByRole('button', { name: 'Stop line' }).click();
    await page.getByLabel('Why is the line stopping?').selectOption('cleaning');
    await page.getByLabel('Note (optional)').fill('after the changeover');
    await page.getByRole('button', { name: 'Stop the line' }).click();
    await page.locator('#run-words[data-running="false"]').waitFor();
    expect(await page.locator('#run-words').innerText()).toMatch(/^stopped — cleaning \(after the changeover\), since \d\d:\d\d$/);
    const line = (await t.app.inject({ method: 'GET', url: `/api/lines/${lineId}`, headers: { cookie: t.cookies.supervisor } })).json().line;
    expect([line.running, line.stop.reason, line.stop.by]).toEqual([false, 'cleaning', 'operator']);
    await page.screenshot({ path: `${ARTIFACTS}entry-stopped.png` });
    await page.getByRole('button', { name: 'Start line' }).click();
    await page.locator('#run-words[data-running="true"]').waitFor();
    const after = (await t.app.inject({ method: 'GET', url: `/api/lines/${lineId}`, headers: { cookie: t.cookies.supervisor } })).json().line;
    expect(after.running).toBe(true);
    await page.close();
  });
});
