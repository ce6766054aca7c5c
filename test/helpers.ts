import { mkdtempSync, rmSync } from 'node:fs';
import { afterEach, test } from 'vitest';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { randomUUID } from 'node:crypto';
import type { FastifyInstance } from 'fastify';
import { buildApp } from '../server/app.js';
import { FollowingClock, ManualClock } from '../server/clock.js';
import { parseConfig, type Config } from '../server/config.js';
import { openDatabase, type Db } from '../server/db/database.js';
import type { FileFlusher } from '../server/db/wal-sync.js';
import { migrate } from '../server/db/migrate.js';
import type { Role } from '../server/auth/secrets.js';
import type { LiveEvent } from '../server/live/messages.js';

export const SECRETS: Record<Role, string> = {
  operator: '1111',
  supervisor: '2222',
  quality: 'quality-test-secret',
  admin: 'admin-test-secret',
};

export interface TestApp {
  app: FastifyInstance;
  db: Db;
  clock: ManualClock;
  dir: string;
  file: string;
  config: Config;
  events: LiveEvent[];
  /** Session cookie for each role. */
  cookies: Record<Role, string>;
  close(): Promise<void>;
  /** Reopens the same database file in a new app, as a restart would. */
  restart(): Promise<TestApp>;
}

/** A fresh migrated database in a temp folder, an app on it with a hand-moved clock, one user per role signed in. */
export async function makeTestApp(options: { start?: number; dir?: string; config?: Partial<Record<keyof Config, unknown>>; users?: boolean; realTime?: boolean; walFlusher?: FileFlusher } = {}): Promise<TestApp> {
  const dir = options.dir ?? mkdtempSync(join(tmpdir(), 'heft-test-'));
  const file = join(dir, 'heft.db');
  const clock = options.realTime ? new FollowingClock() : new ManualClock(options.start ?? Date.parse('2026-03-02T06:00:00Z'));
  // sessions outlive the long hand-moved histories of most tests; the session tests set their own limits
  const config = parseConfig([], {}, { db: file, sessionIdleMinutes: 60 * 24 * 365, sessionMaxHours: 24 * 365, ...options.config });
  const db = openDatabase(file);
  migrate(db);
  const events: LiveEvent[] = [];
  const app = await buildApp({ db, clock, config, onLive: (e) => events.push(...e), walFlusher: options.walFlusher });
  const cookies = {} as Record<Role, string>;
  const withUsers = options.users ?? !options.dir;
  for (const role of Object.keys(SECRETS) as Role[]) {
    if (withUsers) await app.heft.auth.addUser({ username: role, displayName: `Test ${role}`, role, secret: SECRETS[role] }, 'test');
    const res = await app.inject({ method: 'POST', url: '/api/session', payload: { username: role, secret: SECRETS[role] } });
    if (res.statusCode !== 200) throw new Error(`sign-in as ${role} failed: ${res.body}`);
    cookies[role] = String(res.headers['set-cookie']).split(';')[0] as string;
  }
  const t: TestApp = {
    app,
    db,
    clock,
    dir,
    file,
    config,
    events,
    cookies,
    async close() {
      await app.close();
      db.close();
    },
    async restart() {
      await app.close();
      db.close();
      const next = await makeTestApp({ start: clock.now(), dir, config: options.config, users: false, realTime: options.realTime });
      return next;
    },
  };
  return t;
}

export function removeDir(dir: string): void {
  rmSync(dir, { recursive: true, force: true });
}

/** After each test, closes the app `current()` gives (if any) and removes its folder. */
export function closeAfterEach(current: () => TestApp | null, reset: () => void): void {
  afterEach(async () => {
    const t = current();
    if (!t) return;
    await t.close();
    removeDir(t.dir);
    reset();
  });
}

/**
 * `heftTest`: a vitest test with an app of its own (`heft`), made before the test and closed, with its
 * folder removed, after it, whether it passed or failed. Tests never share an app.
 */
export const heftTest = test.extend<{ heft: TestApp }>({
  // biome-ignore lint/correctness/noEmptyPattern: vitest reads the fixtures a test wants from this pattern
  heft: async ({}, use) => {
    const t = await makeTestApp();
    try {
      await use(t);
    } finally {
      await t.close();
      removeDir(t.dir);
    }
  },
});

export interface LineSetup {
  lineId: number;
  productId: number;
}

/** Creates a product and a line through the API and starts the product on it. */
export async function setupLine(t: TestApp, product: Record<string, unknown> = {}, code = 'L1'): Promise<LineSetup> {
  const admin = { cookie: t.cookies.admin };
  const p = await t.app.inject({
    method: 'POST',
    url: '/api/products',
    headers: admin,
    payload: { code: `P-${code}`, name: 'Test bag 500 g', nominal: 500, unit: 'g', target: 503, subgroupSize: 5, samplingMinutes: 60, sigma: 2, ...product },
  });
  if (p.statusCode !== 201) throw new Error(p.body);
  const l = await t.app.inject({ method: 'POST', url: '/api/lines', headers: admin, payload: { code, name: `Line ${code}` } });
  if (l.statusCode !== 201) throw new Error(l.body);
  const productId = p.json().product.id as number;
  const lineId = l.json().line.id as number;
  const c = await t.app.inject({ method: 'PUT', url: `/api/lines/${lineId}/product`, headers: admin, payload: { productId } });
  if (c.statusCode !== 200) throw new Error(c.body);
  return { lineId, productId };
}

export async function postCheck(t: TestApp, lineId: number, weights: unknown, extra: Record<string, unknown> = {}, cookie = t.cookies.operator) {
  return t.app.inject({
    method: 'POST',
    url: `/api/lines/${lineId}/checks`,
    headers: { cookie },
    payload: { weights, clientId: randomUUID(), ...extra },
  });
}

/** n weights whose mean is exactly `mean` and whose sd is small and fixed: the spread stays in control. */
export function weightsWithMean(mean: number, n = 5, spread = 1): number[] {
  const offsets = [-2, -1, 0, 1, 2, -1.5, 1.5, -0.5, 0.5, 0].slice(0, n);
  const centre = offsets.reduce((a, b) => a + b, 0) / n;
  return offsets.map((o) => mean + (o - centre) * spread);
}

export function countRows(db: Db, table: string): number {
  return (db.prepare(`SELECT COUNT(*) AS n FROM ${table}`).get() as { n: number }).n;
}

/** The rule ids a check's answer reports, over every alert its signals joined. */
export function rulesOf(answer: { signals: { rules: { rule: string }[] }[] }): string[] {
  return answer.signals.flatMap((group) => group.rules.map((r) => r.rule));
}
