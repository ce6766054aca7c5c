import fc from 'fast-check';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { makeTestApp, postCheck, removeDir, setupLine, weightsWithMean, type TestApp } from '../helpers.js';

let t: TestApp;
let tables: string[];

beforeAll(async () => {
  t = await makeTestApp();
  await setupLine(t);
  t.clock.advance(3_600_000);
  await postCheck(t, 1, weightsWithMean(512)); // an alert to act on
  tables = (t.db.prepare("SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%'").all() as { name: string }[]).map((r) => r.name);
});
afterAll(async () => {
  await t.close();
  removeDir(t.dir);
});

const uuid = '0b0f3f7c-8d7e-4c41-9f2e-3f1f0a8f5c11';
/** Every write route with a body that would be valid, for the mutations to start from. */
const ROUTES: { method: 'POST' | 'PUT' | 'PATCH' | 'DELETE'; url: string; body: Record<string, unknown> }[] = [
  { method: 'POST', url: '/api/lines/1/checks', body: { weights: [503, 502.5], clientId: uuid, basis: 'net', note: 'n' } },
  { method: 'POST', url: '/api/checks/1/revisions', body: { weights: [503], clientId: uuid, reason: 'r' } },
  { method: 'POST', url: '/api/products', body: { code: 'FZ', name: 'Fuzz', nominal: 500, unit: 'g', target: 503, subgroupSize: 5, samplingMinutes: 60 } },
  { method: 'PATCH', url: '/api/products/1', body: { name: 'Renamed', sigma: 2 } },
  { method: 'POST', url: '/api/lines', body: { code: 'FZL', name: 'Fuzz line' } },
  { method: 'PATCH', url: '/api/lines/1', body: { name: 'Line renamed' } },
  { method: 'PUT', url: '/api/lines/1/product', body: { productId: 1 } },
  { method: 'POST', url: '/api/alerts/1/acknowledge', body: { note: 'seen' } },
  { method: 'POST', url: '/api/alerts/1/resolve', body: { cause: 'c', action: 'a' } },
  { method: 'POST', url: '/api/lines/1/limits/proposal', body: { from: '2026-03-01T00:00:00Z', to: '2026-03-03T00:00:00Z' } },
  { method: 'POST', url: '/api/lines/1/limits', body: { basis: 'standard', centre: 503, sigma: 2 } },
  { method: 'POST', url: '/api/users', body: { username: 'fuzzer', displayName: 'F', role: 'operator', secret: '123456' } },
  { method: 'PATCH', url: '/api/users/1', body: { displayName: 'Op' } },
  { method: 'POST', url: '/api/tokens', body: { name: 'scale', kind: 'checks', lineIds: [1] } },
  { method: 'DELETE', url: '/api/tokens/1', body: {} },
  { method: 'POST', url: '/api/session', body: { username: 'nobody-here', secret: 'wrong' } },
  { method: 'POST', url: '/api/board-session', body: { token: 'not-a-token' } },
  { method: 'POST', url: '/api/review/compare', body: { lineId: 1, a: { from: '2026-03-01T00:00:00Z', to: '2026-03-02T00:00:00Z' }, b: { from: '2026-03-02T00:00:00Z', to: '2026-03-03T00:00:00Z' } } },
];

const json = fc.jsonValue();
const mutated = fc.oneof(
  json,
  fc.record({ route: fc.nat(ROUTES.length - 1), key: fc.string(), value: fc.oneof(json, fc.constant(undefined), fc.double(), fc.string(), fc.constant(Number.NaN)) }).map(({ route, key, value }) => {
    const body: Record<string, unknown> = { ...(ROUTES[route] as (typeof ROUTES)[number]).body };
    const keys = Object.keys(body);
    const target = keys.length > 0 && key.length % 3 !== 0 ? (keys[key.length % keys.length] as string) : key;
    if (value === undefined) delete body[target];
    else body[target] = value;
    return body;
  }),
);

const request = fc.record({
  route: fc.nat(ROUTES.length - 1),
  body: mutated,
  raw: fc.option(fc.oneof(fc.string(), fc.constantFrom('{', '{"weights":[1,', 'null', '[]', '"x"', '\u0000')), { nil: undefined }),
  contentType: fc.constantFrom('application/json', 'application/json; charset=utf-8', 'text/plain', 'application/x-www-form-urlencoded', 'application/octet-stream', ''),
  query: fc.option(fc.dictionary(fc.string({ maxLength: 8 }), fc.string({ maxLength: 12 }), { maxKeys: 3 }), { nil: undefined }),
  who: fc.constantFrom('admin', 'admin', 'admin', 'operator', 'supervisor', 'nobody'),
  pathNoise: fc.option(fc.constantFrom('0', '-1', '1.5', 'abc', '99999999999999999999', '%00', '1e3'), { nil: undefined }),
});

const totalRows = () => tables.reduce((acc, name) => acc + (t.db.prepare(`SELECT COUNT(*) AS n FROM "${name}"`).get() as { n: number }).n, 0);
const rowsBesideSignIn = () => tables.filter((n) => n !== 'audit' && n !== 'sessions').reduce((acc, name) => acc + (t.db.prepare(`SELECT COUNT(*) AS n FROM "${name}"`).get() as { n: number }).n, 0);

describe('fuzzing every write route', () => {
  it('when 10,000 random and mutated bodies, headers and query strings arrive, then no answer is a 5xx, no 4xx writes a row, and the server stays healthy', async () => {
    const seed = 20_261_202;
    const seen = new Map<number, number>();
    await fc.assert(
      fc.asyncProperty(request, async (r) => {
        const route = ROUTES[r.route] as (typeof ROUTES)[number];
        const signIn = route.url === '/api/session';
        const before = signIn ? rowsBesideSignIn() : totalRows();
        const url = (r.pathNoise ? route.url.replace(/\/1(\/|$)/, `/${r.pathNoise}$1`) : route.url) + (r.query ? `?${new URLSearchParams(r.query).toString()}` : '');
        const headers: Record<string, string> = {};
        if (r.contentType) headers['content-type'] = r.contentType;
        if (r.who !== 'nobody') headers.cookie = t.cookies[r.who];
        const payload = r.raw !== undefined ? r.raw : JSON.stringify(r.body);
        const res = await t.app.inject({ method: route.method, url, headers, payload });
        seen.set(res.statusCode, (seen.get(res.statusCode) ?? 0) + 1);
        expect(res.statusCode, `${route.method} ${url} ${payload.slice(0, 200)} → ${res.body.slice(0, 300)}`).toBeLessThan(500);
        if (res.statusCode >= 400) {
          expect(signIn ? rowsBesideSignIn() : totalRows(), `a ${res.statusCode} wrote rows: ${route.method} ${url} ${payload.slice(0, 200)}`).toBe(before);
          const body = res.json();
          expect(typeof body.message).toBe('string');
        }
        // the sign-ins the fuzzer uses must not lock anybody out of the next runs
        if (r.who !== 'nobody' && res.statusCode === 401) throw new Error(`a signed-in ${r.who} got 401 from ${route.method} ${url}`);
      }),
      { seed, numRuns: 10_000, endOnFailure: true },
    );
    console.log(`fuzz: seed ${seed}; answers by status: ${[...seen.entries()].sort((a, b) => a[0] - b[0]).map(([s, n]) => `${s}×${n}`).join(' ')}`);
    expect((await t.app.inject({ method: 'GET', url: '/api/health' })).statusCode).toBe(200);
    const ok = await postCheck(t, 1, weightsWithMean(503));
    expect([200, 201, 409]).toContain(ok.statusCode);
  }, 180_000);
});
