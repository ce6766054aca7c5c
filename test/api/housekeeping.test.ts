import { randomUUID } from 'node:crypto';
import { expect } from 'vitest';
import { pruneOnce } from '../../server/db/housekeeping.js';
import { countRows, heftTest, setupLine, SECRETS, weightsWithMean } from '../helpers.js';

const DAY = 86_400_000;

heftTest('when housekeeping runs while checks arrive, then it drops only live messages past the resume window and sessions no one can use, never checks or the audit trail', async ({ heft: t }) => {
  const { lineId } = await setupLine(t);
  const { token } = t.app.heft.auth.createToken({ name: 'scale', kind: 'checks', lineIds: [lineId] }, 'test');
  const post = () =>
    t.app.inject({ method: 'POST', url: `/api/lines/${lineId}/checks`, headers: { authorization: `Bearer ${token}` }, payload: { weights: weightsWithMean(503), clientId: randomUUID() } });
  for (let i = 0; i < 20; i += 1) {
    t.clock.advance(3_600_000);
    expect((await post()).statusCode).toBe(201);
  }
  t.clock.advance(8 * DAY);
  const cutoff = t.clock.now() - 7 * DAY;
  for (let i = 0; i < 5; i += 1) expect((await post()).statusCode).toBe(201);
  // one person signs in again today and one signs out: the four sessions of eight days ago are past their limits
  const fresh = await t.app.inject({ method: 'POST', url: '/api/session', payload: { username: 'supervisor', secret: SECRETS.supervisor } });
  expect(fresh.statusCode).toBe(200);
  const freshCookie = String(fresh.headers['set-cookie']).split(';')[0] as string;
  const other = await t.app.inject({ method: 'POST', url: '/api/session', payload: { username: 'quality', secret: SECRETS.quality } });
  const otherCookie = String(other.headers['set-cookie']).split(';')[0] as string;
  expect((await t.app.inject({ method: 'DELETE', url: '/api/session', headers: { cookie: otherCookie } })).statusCode).toBe(204);

  const recent = (t.db.prepare('SELECT COUNT(*) AS n FROM live_messages WHERE at >= ?').get(cutoff) as { n: number }).n;
  const old = (t.db.prepare('SELECT COUNT(*) AS n FROM live_messages WHERE at < ?').get(cutoff) as { n: number }).n;
  expect(old).toBeGreaterThan(20);
  const checksBefore = countRows(t.db, 'checks');
  const auditBefore = countRows(t.db, 'audit');

  const { config } = t;
  // small batches, and checks posted between them
  const pruning = pruneOnce({ clock: t.clock, live: t.app.heft.repos.live, auth: t.app.heft.repos.auth, liveKeepMs: 7 * DAY, sessionIdleMs: 60 * 60_000, sessionMaxMs: config.sessionMaxHours * 3_600_000, batch: 4 });
  const during = await Promise.all([post(), post(), post()]);
  const pruned = await pruning;

  expect(during.map((r) => r.statusCode)).toEqual([201, 201, 201]);
  expect(pruned.liveMessages).toBe(old);
  expect((t.db.prepare('SELECT COUNT(*) AS n FROM live_messages WHERE at < ?').get(cutoff) as { n: number }).n).toBe(0);
  expect((t.db.prepare('SELECT COUNT(*) AS n FROM live_messages WHERE at >= ?').get(cutoff) as { n: number }).n).toBeGreaterThanOrEqual(recent + 3);
  expect(countRows(t.db, 'checks')).toBe(checksBefore + 3);
  expect(countRows(t.db, 'audit')).toBe(auditBefore);
  // the four sessions of eight days ago and the signed-out one went; the fresh one stays and works
  expect(pruned.sessions).toBe(5);
  expect(countRows(t.db, 'sessions')).toBe(1);
  expect((await t.app.inject({ method: 'GET', url: '/api/session', headers: { cookie: freshCookie } })).statusCode).toBe(200);
});
