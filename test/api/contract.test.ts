import { describe, expect } from 'vitest';
import type { z } from 'zod';
import { checkAnswer } from '../../server/checks/contract.js';
import { liveMessageSchema } from '../../server/live/messages.js';
import { heftTest, postCheck, setupLine, weightsWithMean, type TestApp } from '../helpers.js';

/**
 * The API contract: every GET route under /api declares the schema of its answer, and a real answer
 * of each, from a line with checks, a fired and acknowledged alert, approved limits, a token and a
 * sign-in lock, matches it field for field (the schemas are strict: an extra field fails).
 * The serializer checks every answer against its schema too; this test does not lean on it. The
 * check routes, the hottest, skip that run-time check (server/shared/serializers.ts): their real
 * answers are checked here instead.
 */

/** GET routes whose answer is not one JSON document: described in API.md instead. */
const NOT_JSON: Record<string, string> = {
  'GET /api/exports/:file': 'a streamed CSV or JSON file, one row at a time',
  'GET /api/openapi.json': 'the OpenAPI document itself, checked against the OpenAPI 3.1 schema in openapi.test.ts',
};

interface Seeded {
  lineId: number;
  productId: number;
  alertId: number;
}

async function seed(t: TestApp): Promise<Seeded> {
  const admin = { cookie: t.cookies.admin };
  const { lineId, productId } = await setupLine(t);
  const limits = await t.app.inject({ method: 'POST', url: `/api/lines/${lineId}/limits`, headers: { cookie: t.cookies.quality }, payload: { basis: 'standard', centre: 503, sigma: 2 } });
  expect(limits.statusCode).toBe(201);
  for (let i = 0; i < 5; i += 1) {
    t.clock.advance(3_600_000);
    expect((await postCheck(t, lineId, weightsWithMean(503))).statusCode).toBe(201);
  }
  // a mean far above the limits opens an alert; a second one joins it
  t.clock.advance(3_600_000);
  const fired = await postCheck(t, lineId, weightsWithMean(512));
  expect(fired.statusCode).toBe(201);
  const alertId = fired.json().alerts[0].id as number;
  t.clock.advance(3_600_000);
  const checkId = (await postCheck(t, lineId, weightsWithMean(512))).json().check.id as number;
  const corrected = await t.app.inject({
    method: 'POST',
    url: `/api/checks/${checkId}/revisions`,
    headers: { cookie: t.cookies.operator },
    payload: { weights: weightsWithMean(511), clientId: crypto.randomUUID(), reason: 'keyed one pack twice' },
  });
  expect(corrected.statusCode).toBe(201);
  const ack = await t.app.inject({ method: 'POST', url: `/api/alerts/${alertId}/acknowledge`, headers: { cookie: t.cookies.supervisor }, payload: { note: 'seen' } });
  expect(ack.statusCode).toBe(200);
  const token = await t.app.inject({ method: 'POST', url: '/api/tokens', headers: admin, payload: { name: 'Wall screen', kind: 'board' } });
  expect(token.statusCode).toBe(201);
  const wrong = await t.app.inject({ method: 'POST', url: '/api/session', remoteAddress: '10.0.0.9', payload: { username: 'operator', secret: '9999' } });
  expect(wrong.statusCode).toBe(401);
  return { lineId, productId, alertId };
}

/** Fills a route's path parameters with the seeded ids. */
function urlOf(route: string, s: Seeded): string {
  const url = route
    .replace(':lineId', String(s.lineId))
    .replace(':productId', String(s.productId))
    .replace(':id', String(s.alertId));
  return url === '/api/review' ? '/api/review?fromDate=2026-03-01&toDate=2026-03-03' : url;
}

/** The lengths of every array in an answer, so a list that came back empty (and so checked nothing) shows. */
function arrayLengths(value: unknown, path = '', out: Record<string, number> = {}): Record<string, number> {
  if (Array.isArray(value)) out[path] = value.length;
  if (value && typeof value === 'object') for (const [k, v] of Object.entries(value)) arrayLengths(v, path ? `${path}.${k}` : k, out);
  return out;
}

/** The lists that must hold something once seeded, by route, so each item's schema is really checked. */
const MUST_HOLD: Record<string, string[]> = {
  'GET /api/lines': ['lines'],
  'GET /api/products': ['products'],
  'GET /api/lines/:lineId/checks': ['checks'],
  'GET /api/lines/:lineId/status': ['status.openAlerts'],
  'GET /api/lines/:lineId/limits': ['limits'],
  'GET /api/alerts': ['alerts'],
  'GET /api/alerts/:id': ['alert.signals'],
  'GET /api/audit': ['entries'],
  'GET /api/users': ['users'],
  'GET /api/tokens': ['tokens'],
  'GET /api/sign-in-locks': ['locks'],
  'GET /api/rules': ['rules'],
  'GET /api/review': ['review.lines', 'review.lines.0.events', 'review.lines.0.products'],
};

describe('the API contract', () => {
  heftTest('when every GET route under /api answers, then the answer matches the schema the route declares', async ({ heft: t }) => {
    const seeded = await seed(t);
    const gets = t.app.routeTable.filter((r) => r.method === 'GET' && r.url.startsWith('/api/') && !r.url.startsWith('/api/docs') && !(`GET ${r.url}` in NOT_JSON));
    expect(gets.length).toBeGreaterThan(15);
    const failures: string[] = [];
    for (const route of gets) {
      const name = `GET ${route.url}`;
      const schema = route.response?.['200'] as z.ZodType | undefined;
      if (!schema) {
        failures.push(`${name}: declares no 200 answer`);
        continue;
      }
      const res = await t.app.inject({ method: 'GET', url: urlOf(route.url, seeded), headers: { cookie: t.cookies.admin } });
      if (res.statusCode !== 200) {
        failures.push(`${name}: ${res.statusCode} ${res.body.slice(0, 200)}`);
        continue;
      }
      const body = res.json() as unknown;
      const parsed = schema.safeParse(body);
      if (!parsed.success) failures.push(`${name}: ${parsed.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`).join('; ')}`);
      // strict: a field the contract does not name fails, so the two cannot drift apart unnoticed
      if (schema.safeParse({ ...(body as object), unnamed: 1 }).success) failures.push(`${name}: takes a field it does not name`);
      const lengths = arrayLengths(body);
      for (const path of MUST_HOLD[name] ?? []) if (!lengths[path]) failures.push(`${name}: ${path} is empty, so its items went unchecked`);
    }
    expect(failures).toEqual([]);
  });

  heftTest('when checks are answered (new, opening or joining an alert, a replay, a correction), then each answer matches the check routes\' schema', async ({ heft: t }) => {
    const { lineId } = await setupLine(t);
    const limits = await t.app.inject({ method: 'POST', url: `/api/lines/${lineId}/limits`, headers: { cookie: t.cookies.quality }, payload: { basis: 'standard', centre: 503, sigma: 2 } });
    expect(limits.statusCode).toBe(201);
    const answers: { name: string; status: number; body: unknown }[] = [];
    const keep = (name: string, res: { statusCode: number; json: () => unknown }) => answers.push({ name, status: res.statusCode, body: res.json() });
    t.clock.advance(3_600_000);
    const clientId = crypto.randomUUID();
    keep('in control', await postCheck(t, lineId, weightsWithMean(503), { clientId }));
    keep('the same clientId again', await postCheck(t, lineId, weightsWithMean(503), { clientId }));
    t.clock.advance(3_600_000);
    keep('opens an alert', await postCheck(t, lineId, weightsWithMean(512)));
    t.clock.advance(3_600_000);
    const joined = await postCheck(t, lineId, weightsWithMean(512));
    keep('joins it', joined);
    const correction = await t.app.inject({
      method: 'POST',
      url: `/api/checks/${(joined.json() as { check: { id: number } }).check.id}/revisions`,
      headers: { cookie: t.cookies.operator },
      payload: { weights: weightsWithMean(511), clientId: crypto.randomUUID(), reason: 'keyed one pack twice' },
    });
    keep('a correction', correction);
    expect(answers.map((a) => `${a.name} ${a.status}`)).toEqual(['in control 201', 'the same clientId again 200', 'opens an alert 201', 'joins it 201', 'a correction 201']);
    expect((answers[2] as { body: { alerts: unknown[] } }).body.alerts.length).toBe(1);
    const failures = answers.flatMap(({ name, body }) => {
      const parsed = checkAnswer.safeParse(body);
      const problems = parsed.success ? [] : [`${name}: ${parsed.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`).join('; ')}`];
      if (checkAnswer.safeParse({ ...(body as object), unnamed: 1 }).success) problems.push(`${name}: takes a field it does not name`);
      return problems;
    });
    expect(failures).toEqual([]);
  });

  heftTest('when checks, alerts, corrections and limits send live messages, then each matches the live message contract', async ({ heft: t }) => {
    await seed(t);
    const kinds = new Set(t.events.map((e) => e.type));
    expect([...kinds].sort()).toEqual(['alert-opened', 'alert-updated', 'check', 'line-status']);
    const failures = t.events.flatMap((e) => {
      const parsed = liveMessageSchema.safeParse(e);
      return parsed.success ? [] : [`${e.seq} ${e.type}: ${parsed.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`).join('; ')}`];
    });
    expect(failures).toEqual([]);
  });
});
