import { existsSync } from 'node:fs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildApp } from '../../server/app.js';
import { PAIR_LOCK_FAILURES, waitAfter } from '../../server/auth/throttle.js';
import { heftTest, makeTestApp, postCheck, removeDir, SECRETS, setupLine, weightsWithMean, type TestApp } from '../helpers.js';

type Principal = 'anonymous' | 'operator' | 'supervisor' | 'quality' | 'admin' | 'checks-token' | 'board-token';
const PRINCIPALS: Principal[] = ['anonymous', 'operator', 'supervisor', 'quality', 'admin', 'checks-token', 'board-token'];
const PEOPLE: Principal[] = ['operator', 'supervisor', 'quality', 'admin'];
const BOARD: Principal[] = [...PEOPLE, 'board-token'];
const SUP: Principal[] = ['supervisor', 'quality', 'admin'];
const QUAL: Principal[] = ['quality', 'admin'];
const ADMIN: Principal[] = ['admin'];
const ANYONE: Principal[] = PRINCIPALS;
const PAGE = existsSync(new URL('../../dist/web/index.html', import.meta.url)) ? 200 : 503;

/** Every route, who may call it, and the probe request with the status an allowed caller gets. */
const MATRIX: Record<string, { who: Principal[]; url: string; payload?: object; ok: number }> = {
  'GET /api/health': { who: ANYONE, url: '/api/health', ok: 200 },
  'POST /api/session': { who: ANYONE, url: '/api/session', payload: {}, ok: 400 },
  'GET /api/session': { who: PEOPLE, url: '/api/session', ok: 200 },
  'DELETE /api/session': { who: PEOPLE, url: '/api/session', ok: 204 },
  'GET /api/rules': { who: PEOPLE, url: '/api/rules', ok: 200 },
  'GET /api/users': { who: ADMIN, url: '/api/users', ok: 200 },
  'POST /api/users': { who: ADMIN, url: '/api/users', payload: {}, ok: 400 },
  'PATCH /api/users/:id': { who: ADMIN, url: '/api/users/1', payload: {}, ok: 200 },
  'GET /api/sign-in-locks': { who: SUP, url: '/api/sign-in-locks', ok: 200 },
  'POST /api/sign-in-locks/clear': { who: SUP, url: '/api/sign-in-locks/clear', payload: {}, ok: 400 },
  'GET /api/tokens': { who: ADMIN, url: '/api/tokens', ok: 200 },
  'POST /api/tokens': { who: ADMIN, url: '/api/tokens', payload: {}, ok: 400 },
  'DELETE /api/tokens/:id': { who: ADMIN, url: '/api/tokens/999', ok: 404 },
  'GET /api/lines': { who: BOARD, url: '/api/lines', ok: 200 },
  'GET /api/lines/:lineId': { who: BOARD, url: '/api/lines/1', ok: 200 },
  'POST /api/lines': { who: ADMIN, url: '/api/lines', payload: {}, ok: 400 },
  'PATCH /api/lines/:lineId': { who: ADMIN, url: '/api/lines/1', payload: {}, ok: 200 },
  'PUT /api/lines/:lineId/product': { who: SUP, url: '/api/lines/1/product', payload: {}, ok: 400 },
  'GET /api/calendar': { who: PEOPLE, url: '/api/calendar', ok: 200 },
  'PUT /api/calendar': { who: ADMIN, url: '/api/calendar', payload: {}, ok: 400 },
  'GET /api/escalations': { who: QUAL, url: '/api/escalations', ok: 200 },
  'POST /api/escalations': { who: QUAL, url: '/api/escalations', payload: {}, ok: 400 },
  'PATCH /api/escalations/:id': { who: QUAL, url: '/api/escalations/999', payload: {}, ok: 404 },
  'DELETE /api/escalations/:id': { who: QUAL, url: '/api/escalations/999', ok: 404 },
  'POST /api/lines/:lineId/stop': { who: PEOPLE, url: '/api/lines/1/stop', payload: {}, ok: 400 },
  'POST /api/lines/:lineId/start': { who: PEOPLE, url: '/api/lines/1/start', ok: 409 },
  'GET /api/products': { who: BOARD, url: '/api/products', ok: 200 },
  'GET /api/products/:productId': { who: BOARD, url: '/api/products/1', ok: 200 },
  'GET /api/products/:productId/versions': { who: BOARD, url: '/api/products/1/versions', ok: 200 },
  'POST /api/products': { who: QUAL, url: '/api/products', payload: {}, ok: 400 },
  'POST /api/products/preview': { who: QUAL, url: '/api/products/preview', payload: {}, ok: 400 },
  'POST /api/products/import': { who: QUAL, url: '/api/products/import', payload: {}, ok: 400 },
  'POST /api/products/false-alarm': { who: QUAL, url: '/api/products/false-alarm', payload: {}, ok: 400 },
  'PATCH /api/products/:productId': { who: QUAL, url: '/api/products/1', payload: {}, ok: 200 },
  'POST /api/lines/:lineId/checks': { who: [...PEOPLE, 'checks-token'], url: '/api/lines/1/checks', payload: {}, ok: 400 },
  'POST /api/lines/:lineId/packs': { who: [...PEOPLE, 'checks-token'], url: '/api/lines/1/packs', payload: {}, ok: 400 },
  'GET /api/lines/:lineId/scale': { who: [...BOARD, 'checks-token'], url: '/api/lines/1/scale', ok: 200 },
  'PUT /api/lines/:lineId/scale': { who: ADMIN, url: '/api/lines/1/scale', payload: {}, ok: 400 },
  'POST /api/lines/:lineId/scale/try': { who: PEOPLE, url: '/api/lines/1/scale/try', payload: {}, ok: 400 },
  'GET /api/scale-lines': { who: [...PEOPLE, 'checks-token'], url: '/api/scale-lines', ok: 200 },
  'POST /api/checks/:checkId/revisions': { who: PEOPLE, url: '/api/checks/1/revisions', payload: {}, ok: 400 },
  'GET /api/lines/:lineId/checks': { who: BOARD, url: '/api/lines/1/checks', ok: 200 },
  'GET /api/lines/:lineId/status': { who: BOARD, url: '/api/lines/1/status', ok: 200 },
  'GET /api/alerts': { who: BOARD, url: '/api/alerts', ok: 200 },
  'GET /api/alerts/:id': { who: BOARD, url: '/api/alerts/1', ok: 200 },
  'POST /api/alerts/:id/acknowledge': { who: SUP, url: '/api/alerts/1/acknowledge', payload: {}, ok: 400 },
  'POST /api/alerts/:id/resolve': { who: SUP, url: '/api/alerts/1/resolve', payload: {}, ok: 400 },
  'POST /api/alerts/:id/shelve': { who: SUP, url: '/api/alerts/1/shelve', payload: {}, ok: 400 },
  'GET /api/lines/:lineId/limits': { who: BOARD, url: '/api/lines/1/limits', ok: 200 },
  'POST /api/lines/:lineId/limits/proposal': { who: QUAL, url: '/api/lines/1/limits/proposal', payload: {}, ok: 400 },
  'POST /api/lines/:lineId/limits': { who: QUAL, url: '/api/lines/1/limits', payload: {}, ok: 400 },
  'GET /api/audit': { who: QUAL, url: '/api/audit', ok: 200 },
  'GET /api/review': { who: QUAL, url: '/api/review', ok: 200 },
  'POST /api/review/compare': { who: QUAL, url: '/api/review/compare', payload: {}, ok: 400 },
  'GET /api/exports/:file': { who: QUAL, url: '/api/exports/events.csv', ok: 200 },
  'POST /api/board-session': { who: ANYONE, url: '/api/board-session', payload: {}, ok: 400 },
  // a plain GET (no upgrade) of the WebSocket route: allowed callers get 404, the rest 401/403
  'GET /live': { who: BOARD, url: '/live', ok: 404 },
  'GET /api/plant': { who: ANYONE, url: '/api/plant', ok: 200 },
  // the API's description and its reference page are public, like the pages (they hold no plant data)
  'GET /api/openapi.json': { who: ANYONE, url: '/api/openapi.json', ok: 200 },
  'GET /api/docs': { who: ANYONE, url: '/api/docs', ok: 200 },
  'GET /api/docs/json': { who: ANYONE, url: '/api/docs/json', ok: 200 },
  'GET /api/docs/yaml': { who: ANYONE, url: '/api/docs/yaml', ok: 200 },
  'GET /api/docs/static/*': { who: ANYONE, url: '/api/docs/static/index.css', ok: 200 },
  'GET /api/docs/static/index.html': { who: ANYONE, url: '/api/docs/static/index.html', ok: 302 },
  'GET /api/docs/static/swagger-initializer.js': { who: ANYONE, url: '/api/docs/static/swagger-initializer.js', ok: 200 },
  // the pages themselves are public (built or not); the data they fetch is not
  'GET /': { who: ANYONE, url: '/', ok: PAGE },
  'GET /entry': { who: ANYONE, url: '/entry', ok: PAGE },
  'GET /board': { who: ANYONE, url: '/board', ok: PAGE },
  'GET /review': { who: ANYONE, url: '/review', ok: PAGE },
  'GET /setup': { who: ANYONE, url: '/setup', ok: PAGE },
  'GET /assets/*': { who: ANYONE, url: '/assets/none.js', ok: 404 },
};

let t: TestApp;
const tokens: Record<'checks-token' | 'board-token', string> = { 'checks-token': '', 'board-token': '' };

beforeAll(async () => {
  t = await makeTestApp();
  await setupLine(t);
  t.clock.advance(3_600_000);
  await postCheck(t, 1, weightsWithMean(512)); // opens alert 1
  tokens['checks-token'] = t.app.heft.auth.createToken({ name: 'scale 1', kind: 'checks', lineIds: [1] }, 'test').token;
  tokens['board-token'] = t.app.heft.auth.createToken({ name: 'wall', kind: 'board', lineIds: [] }, 'test').token;
});
afterAll(async () => {
  await t.close();
  removeDir(t.dir);
});

async function headersFor(p: Principal): Promise<Record<string, string>> {
  if (p === 'anonymous') return {};
  if (p === 'checks-token' || p === 'board-token') return { authorization: `Bearer ${tokens[p]}` };
  return { cookie: t.cookies[p] };
}

describe('the access matrix', () => {
  it('when Fastify lists its routes, then every one is in the matrix and declares its roles', () => {
    const listed = t.app.routeTable.filter((r) => r.method !== 'HEAD').map((r) => `${r.method} ${r.url}`).sort();
    expect(listed).toEqual(Object.keys(MATRIX).sort());
  });

  it('when a route is added without roles, then the app refuses to start', async () => {
    const broken = await buildApp({ db: t.db, clock: t.clock, config: t.config });
    expect(() => broken.get('/api/secret', async () => 'x')).toThrow(/declares no roles/);
    await broken.close();
  });

  for (const [route, spec] of Object.entries(MATRIX)) {
    for (const principal of PRINCIPALS) {
      const allowed = spec.who.includes(principal);
      const expected = allowed ? spec.ok : principal === 'anonymous' ? 401 : 403;
      it(`when ${principal} calls ${route}, then ${expected}`, async () => {
        const [method] = route.split(' ') as [string];
        const res = await t.app.inject({
          method: method as 'GET',
          url: spec.url,
          headers: await headersFor(principal),
          ...(spec.payload ? { payload: spec.payload } : {}),
        });
        expect(res.statusCode, res.body).toBe(expected);
        if (route === 'DELETE /api/session' && allowed) {
          const again = await t.app.inject({ method: 'POST', url: '/api/session', payload: { username: principal, secret: SECRETS[principal as 'admin'] } });
          t.cookies[principal as 'admin'] = String(again.headers['set-cookie']).split(';')[0] as string;
        }
      });
    }
  }

  it('when a checks token posts for a line it does not name, then 403', async () => {
    await setupLine(t, {}, 'L2');
    const res = await t.app.inject({ method: 'POST', url: '/api/lines/2/checks', headers: { authorization: `Bearer ${tokens['checks-token']}` }, payload: { weights: [503], clientId: crypto.randomUUID() } });
    expect(res.statusCode).toBe(403);
    expect(res.json().message).toMatch(/only for lines 1/);
  });

  it('when a wall screen trades its board token for a cookie, then it reads the board but changes nothing', async () => {
    const res = await t.app.inject({ method: 'POST', url: '/api/board-session', payload: { token: tokens['board-token'] } });
    expect(res.statusCode).toBe(200);
    const cookie = String(res.headers['set-cookie']).split(';')[0] as string;
    expect(cookie).toMatch(/^heft_board=/);
    expect((await t.app.inject({ method: 'GET', url: '/api/lines', headers: { cookie } })).statusCode).toBe(200);
    expect((await t.app.inject({ method: 'POST', url: '/api/alerts/1/acknowledge', headers: { cookie }, payload: { note: 'x' } })).statusCode).toBe(403);
    const wrong = await t.app.inject({ method: 'POST', url: '/api/board-session', payload: { token: tokens['checks-token'] } });
    expect(wrong.statusCode).toBe(401);
  });

  it('when a token is revoked, then it is refused with 401', async () => {
    const { token, record } = t.app.heft.auth.createToken({ name: 'old scale', kind: 'checks', lineIds: [1] }, 'test');
    const del = await t.app.inject({ method: 'DELETE', url: `/api/tokens/${record.id}`, headers: { cookie: t.cookies.admin } });
    expect(del.statusCode).toBe(200);
    const res = await t.app.inject({ method: 'POST', url: '/api/lines/1/checks', headers: { authorization: `Bearer ${token}` }, payload: { weights: [503], clientId: crypto.randomUUID() } });
    expect(res.statusCode).toBe(401);
  });
});

describe('sign-in, sessions and origin', () => {
  // sign-in has its own rate limit per address, which the matrix above has used up: a fresh app here
  let s: TestApp;
  beforeAll(async () => {
    s = await makeTestApp();
  });
  afterAll(async () => {
    await s.close();
    removeDir(s.dir);
  });

  it('when a PIN is guessed wrong repeatedly from one device, then that device is locked for that user, the lock is audited, and a new secret clears it', async () => {
    await s.app.heft.auth.addUser({ username: 'guessed', displayName: 'G', role: 'operator', secret: '4321' }, 'test');
    for (let i = 0; i < PAIR_LOCK_FAILURES; i += 1) {
      const res = await s.app.inject({ method: 'POST', url: '/api/session', payload: { username: 'guessed', secret: String(1000 + i) } });
      expect(res.statusCode).toBe(401);
      s.clock.advance(waitAfter(i + 1));
    }
    const locked = await s.app.inject({ method: 'POST', url: '/api/session', payload: { username: 'guessed', secret: '4321' } });
    expect(locked.statusCode).toBe(423);
    const audit = (await s.app.inject({ method: 'GET', url: '/api/audit?entity=sign-in', headers: { cookie: s.cookies.admin } })).json().entries;
    expect(audit.filter((e: { action: string; entityId: string }) => e.action === 'sign-in.lock').map((e: { entityId: string }) => e.entityId)).toEqual(['guessed']);
    const users = (await s.app.inject({ method: 'GET', url: '/api/users', headers: { cookie: s.cookies.admin } })).json().users;
    expect(users.find((u: { username: string }) => u.username === 'guessed').locked).toBe(true);
    const id = users.find((u: { username: string }) => u.username === 'guessed').id;
    await s.app.inject({ method: 'PATCH', url: `/api/users/${id}`, headers: { cookie: s.cookies.admin }, payload: { secret: '5678' } });
    expect((await s.app.inject({ method: 'POST', url: '/api/session', payload: { username: 'guessed', secret: '5678' } })).statusCode).toBe(200);
  });

  it('when a PIN is too short or a password too weak, then 400 names the secret', async () => {
    const short = await t.app.inject({ method: 'POST', url: '/api/users', headers: { cookie: t.cookies.admin }, payload: { username: 'newop', displayName: 'N', role: 'operator', secret: '12' } });
    expect(short.statusCode).toBe(400);
    expect(short.json().issues[0].field).toBe('secret');
    const weak = await t.app.inject({ method: 'POST', url: '/api/users', headers: { cookie: t.cookies.admin }, payload: { username: 'newq', displayName: 'N', role: 'quality', secret: 'short-pass' } });
    expect(weak.statusCode).toBe(400);
    expect(weak.json().message).toMatch(/12 characters/);
  });

  it('when a session sits idle too long or grows too old, then it ends (injected clock)', async () => {
    const u = await makeTestApp({ config: { sessionIdleMinutes: 30, sessionMaxHours: 2 } });
    const who = () => u.app.inject({ method: 'GET', url: '/api/session', headers: { cookie: u.cookies.operator } });
    expect((await who()).statusCode).toBe(200);
    u.clock.advance(29 * 60_000);
    expect((await who()).statusCode).toBe(200);
    u.clock.advance(29 * 60_000);
    expect((await who()).statusCode).toBe(200); // kept alive by use
    u.clock.advance(31 * 60_000);
    expect((await who()).statusCode).toBe(401); // idle
    const fresh = await u.app.inject({ method: 'POST', url: '/api/session', payload: { username: 'operator', secret: SECRETS.operator } });
    const cookie = String(fresh.headers['set-cookie']).split(';')[0] as string;
    for (let i = 0; i < 5; i += 1) {
      u.clock.advance(25 * 60_000);
      expect((await u.app.inject({ method: 'GET', url: '/api/session', headers: { cookie } })).statusCode).toBe(i < 4 ? 200 : 401);
    }
    await u.close();
    removeDir(u.dir);
  });

  it('when a state change arrives from another origin, then 403; from our own origin, it goes through', async () => {
    const cross = await t.app.inject({ method: 'POST', url: '/api/alerts/1/acknowledge', headers: { cookie: t.cookies.supervisor, origin: 'http://evil.example', host: 'localhost:80' }, payload: { note: 'x' } });
    expect(cross.statusCode).toBe(403);
    expect(cross.json().error).toBe('cross-origin');
    const site = await t.app.inject({ method: 'POST', url: '/api/alerts/1/acknowledge', headers: { cookie: t.cookies.supervisor, 'sec-fetch-site': 'cross-site' }, payload: { note: 'x' } });
    expect(site.statusCode).toBe(403);
    const same = await t.app.inject({ method: 'POST', url: '/api/alerts/1/acknowledge', headers: { cookie: t.cookies.supervisor, origin: 'http://localhost:80', host: 'localhost:80' }, payload: { note: 'seen' } });
    expect(same.statusCode).toBe(200);
  });

  it('when the session cookie is set, then it is httpOnly and SameSite=Strict; responses carry security headers', async () => {
    const res = await s.app.inject({ method: 'POST', url: '/api/session', payload: { username: 'operator', secret: SECRETS.operator } });
    const cookie = String(res.headers['set-cookie']);
    expect(cookie).toMatch(/HttpOnly/);
    expect(cookie).toMatch(/SameSite=Strict/);
    expect(res.headers['content-security-policy']).toMatch(/script-src 'self'/);
    expect(res.headers['x-content-type-options']).toBe('nosniff');
    // the stored session id is a hash, not the cookie value
    const value = cookie.split(';')[0]?.split('=')[1] as string;
    expect(s.db.prepare('SELECT COUNT(*) AS n FROM sessions WHERE id_hash = ?').get(value)).toEqual({ n: 0 });
  });

  it('when sign-in is hammered, then the rate limit answers 429', async () => {
    const r = await makeTestApp();
    let last = 0;
    for (let i = 0; i < 25; i += 1) {
      last = (await r.app.inject({ method: 'POST', url: '/api/session', payload: { username: 'nobody', secret: 'x' } })).statusCode;
    }
    expect(last).toBe(429);
    await r.close();
    removeDir(r.dir);
  });
});

describe('free text', () => {
  const NASTY = [`Robert'); DROP TABLE checks;--`, '<script>alert("x")</script>', `" OR 1=1 --`, 'ümlaut & ampersand <b>bold</b>'];
  heftTest('when notes, causes and names carry quotes and script tags, then they are stored verbatim and served as JSON text', async ({ heft: f }) => {
    const { lineId } = await setupLine(f);
    for (const text of NASTY) {
      const line = await f.app.inject({ method: 'PATCH', url: `/api/lines/${lineId}`, headers: { cookie: f.cookies.admin }, payload: { name: text } });
      expect(line.statusCode).toBe(200);
      expect(line.json().line.name).toBe(text);
      expect(line.headers['content-type']).toMatch(/application\/json/);
      f.clock.advance(60_000);
      // far above the centre: each check opens an alert of its own (the last one was resolved)
      const check = await postCheck(f, lineId, weightsWithMean(512), { note: text });
      expect(check.json().check.note).toBe(text);
      const alertId = check.json().alerts[0].id;
      const resolved = await f.app.inject({ method: 'POST', url: `/api/alerts/${alertId}/resolve`, headers: { cookie: f.cookies.supervisor }, payload: { cause: text, action: text } });
      expect(resolved.statusCode).toBe(200);
      expect(resolved.json().alert.resolved.cause).toBe(text);
    }
    const stored = f.db.prepare('SELECT note FROM checks WHERE note IS NOT NULL ORDER BY id').all() as { note: string }[];
    expect(stored.map((r) => r.note)).toEqual(NASTY);
    expect(f.db.prepare("SELECT COUNT(*) AS n FROM sqlite_master WHERE name = 'checks'").get()).toEqual({ n: 1 });
  });
});
