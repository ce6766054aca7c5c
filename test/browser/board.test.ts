import { randomUUID } from 'node:crypto';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { FastifyInstance } from 'fastify';
import type { BrowserContext, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { generateDemo } from '../../demo-data/generate.js';
import { buildApp } from '../../server/app.js';
import { FollowingClock } from '../../server/clock.js';
import { parseConfig } from '../../server/config.js';
import { openDatabase, type Db } from '../../server/db/database.js';
import { migrate } from '../../server/db/migrate.js';
import { removeDir } from '../helpers.js';
import { ARTIFACTS, HAVE_CHROMIUM, launchBrowser } from './harness.js';

const dir = mkdtempSync(join(tmpdir(), 'heft-board-'));
const file = join(dir, 'demo.db');
const config = parseConfig([], {}, { db: file, timeZone: 'Europe/London', plantName: 'Board test plant' });
// the system picks a free port the first time; a restart listens on the same one again
let port = 0;
let db: Db;
let app: FastifyInstance;
let wall: BrowserContext;
let desk: BrowserContext;
let boardToken = '';
let scaleToken = '';

async function startApp(listen: boolean): Promise<FastifyInstance> {
  db = openDatabase(file);
  migrate(db);
  const a = await buildApp({ db, clock: new FollowingClock(), config });
  if (listen) {
    await a.listen({ port, host: '127.0.0.1' });
    port = (a.server.address() as { port: number }).port;
  }
  return a;
}

async function stopApp(): Promise<void> {
  await app.close();
  db.close();
}

/** Posts a check as a networked scale would; returns the alert ids it opened or joined. */
async function scaleCheck(lineId: number, weights: number[]): Promise<number[]> {
  const res = await app.inject({
    method: 'POST',
    url: `/api/lines/${lineId}/checks`,
    headers: { authorization: `Bearer ${scaleToken}` },
    payload: { weights, clientId: randomUUID(), confirmSuspect: true },
  });
  expect(res.statusCode).toBe(201);
  return (res.json().alerts as { id: number; kind: string }[]).filter((a) => a.kind !== 'check-overdue').map((a) => a.id);
}

/** Weights whose mean sits `sigmas` standard errors above the line's centre. */
function beyond(lineId: number, sigmas: number): number[] {
  const { limits, product } = app.heft.monitor.lineState(lineId);
  const s = (limits?.sigma ?? 1) / Math.sqrt(product?.subgroupSize ?? 5);
  const mean = (limits?.centre ?? 0) + sigmas * s;
  const step = (limits?.sigma ?? 1) * 0.2;
  return [-2, -1, 0, 1, 2].map((k) => Math.round((mean + k * step) * 10000) / 10000);
}

beforeAll(async () => {
  if (!HAVE_CHROMIUM) return;
  db = openDatabase(file);
  migrate(db);
  await generateDemo({ db, config, endAt: Date.now() });
  db.close();
  app = await startApp(true);
  // a clean slate: every alert of the history resolved, so the test's own alert opens fresh
  for (const a of app.heft.repos.alerts.unresolved()) app.heft.monitor.resolve(a.id, 'cleared before the test', 'none', 'test');
  boardToken = app.heft.auth.createToken({ name: 'wall screen', kind: 'board', lineIds: [] }, 'test').token;
  scaleToken = app.heft.auth.createToken({ name: 'scale', kind: 'checks', lineIds: [1, 2, 3] }, 'test').token;
  wall = await launchBrowser();
  desk = await launchBrowser();
}, 60_000);

afterAll(async () => {
  if (!HAVE_CHROMIUM) return;
  await wall.close();
  await desk.close();
  await stopApp();
  removeDir(dir);
});

async function openBoard(context: BrowserContext, path: string, ready = '.tile'): Promise<Page> {
  const page = await context.newPage();
  await page.setViewportSize({ width: 1920, height: 1080 });
  await page.goto(`http://127.0.0.1:${port}${path}`);
  await page.locator(ready).first().waitFor();
  return page;
}

describe.skipIf(!HAVE_CHROMIUM)('the wall board', () => {
  let wallPage: Page;
  let alertId = 0;

  it('when a check breaks the upper limit, then its alert is on the line’s tile within 2 s', async () => {
    wallPage = await openBoard(wall, `/board?token=${encodeURIComponent(boardToken)}`);
    expect(new URL(wallPage.url()).search).toBe(''); // the token left the address bar
    await expect.poll(() => wallPage.locator('.tile').count()).toBe(3);
    await wallPage.locator('#connection[data-state="connected"]').waitFor({ state: 'attached' });
    const posted = Date.now();
    const ids = await scaleCheck(1, beyond(1, 4));
    alertId = ids[0] as number;
    expect(alertId).toBeGreaterThan(0);
    const alert = wallPage.locator(`.tile[data-line="1"] [data-alert="${alertId}"]`);
    await alert.waitFor({ timeout: 2000 });
    const elapsed = Date.now() - posted;
    console.log(`board: POST to alert on screen: ${elapsed} ms`);
    expect(elapsed).toBeLessThan(2000);
    const text = await alert.innerText();
    expect(text).toMatch(/Mean shift up/);
    expect(text).toMatch(/beyond 3σ/);
    expect(text).toMatch(/OPEN/);
    expect(await wallPage.locator('.tile[data-line="1"] .status').innerText()).toMatch(/act/);
    await wallPage.screenshot({ path: `${ARTIFACTS}board-alert.png` });
  });

  it('when a supervisor acknowledges it from a desk, then the wall shows that at once', async () => {
    const deskPage = await openBoard(desk, '/board', '#si-user');
    // the desk has no session and no board cookie: it asks for a sign-in first
    await deskPage.locator('#si-user').fill('supervisor');
    await deskPage.locator('#si-secret').fill('2222');
    await deskPage.locator('#signin-form button[type="submit"]').click();
    const ack = deskPage.locator(`[data-ack="${alertId}"]`).first();
    await ack.waitFor();
    await ack.click();
    await deskPage.locator('#act-note').fill('going to line 1 now');
    const started = Date.now();
    await deskPage.locator('#act-submit').click();
    const onWall = wallPage.locator(`.tile[data-line="1"] [data-alert="${alertId}"]`);
    await expect.poll(() => onWall.innerText(), { timeout: 2000 }).toMatch(/acknowledged by supervisor/);
    console.log(`board: acknowledgement seen on the wall after ${Date.now() - started} ms`);
    expect(await onWall.innerText()).toMatch(/going to line 1 now/);
    // the wall's board token cannot acknowledge: no person signed in there
    const res = await wallPage.evaluate(async (id) => (await fetch(`/api/alerts/${id}/resolve`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ cause: 'x', action: 'y' }) })).status, alertId);
    expect(res).toBe(403);
    await wallPage.screenshot({ path: `${ARTIFACTS}board-acknowledged.png` });
    await deskPage.close();
  });

  it('when the server stops and comes back, then the board says it is reconnecting and catches up with an alert raised meanwhile', async () => {
    await stopApp();
    await expect.poll(() => wallPage.locator('#connection').innerText(), { timeout: 5000 }).toMatch(/reconnecting — last update/);
    await wallPage.screenshot({ path: `${ARTIFACTS}board-reconnecting.png` });
    app = await startApp(false);
    const [raised] = await scaleCheck(2, beyond(2, -4));
    await app.listen({ port, host: '127.0.0.1' });
    const caught = wallPage.locator(`.tile[data-line="2"] [data-alert="${raised}"]`);
    await caught.waitFor({ timeout: 15_000 });
    expect(await caught.innerText()).toMatch(/Mean shift down/);
    await expect.poll(() => wallPage.locator('#connection').innerText()).toBe('');
    await wallPage.screenshot({ path: `${ARTIFACTS}board-after-restart.png` });
  });

  it('when a tile is opened, then the detail view shows the mean and spread charts and the run’s alert history', async () => {
    await wallPage.locator('.tile[data-line="1"]').click();
    await wallPage.locator('#detail-mean .uplot').waitFor();
    await wallPage.locator('#detail-spread .uplot').waitFor();
    expect(await wallPage.locator('#detail-alerts').innerText()).toMatch(/acknowledged by supervisor/);
    // every demo check was typed at the tablet: the view says where the run's weights came from
    expect(await wallPage.locator('#detail-sources').innerText()).toMatch(/^Checks in this run: \d+ typed; the last typed\.$/);
    await wallPage.screenshot({ path: `${ARTIFACTS}board-detail.png` });
    await wallPage.locator('#detail-close').click();
    await wallPage.locator('#tiles').waitFor();
  });

  it('when a line is stopped, then its tile says why and since when, at once, instead of when its next check is due', async () => {
    const supervisor = await app.inject({ method: 'POST', url: '/api/session', payload: { username: 'supervisor', secret: '2222' } });
    const cookie = String(supervisor.headers['set-cookie']).split(';')[0] as string;
    const res = await app.inject({ method: 'POST', url: '/api/lines/2/stop', headers: { cookie }, payload: { reason: 'cleaning' } });
    expect(res.statusCode).toBe(200);
    const tile = wallPage.locator('.tile[data-line="2"] [data-stopped]');
    await tile.waitFor({ timeout: 2000 });
    expect(await tile.innerText()).toMatch(/^stopped — cleaning, since \d\d:\d\d$/);
    expect(await wallPage.locator('.tile[data-line="2"] [data-due]').count()).toBe(0);
    await wallPage.screenshot({ path: `${ARTIFACTS}board-stopped.png` });
    await app.inject({ method: 'POST', url: '/api/lines/2/start', headers: { cookie } });
    await wallPage.locator('.tile[data-line="2"] [data-due]').waitFor({ timeout: 2000 });
  });
});
