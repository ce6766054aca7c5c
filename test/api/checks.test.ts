import { randomUUID } from 'node:crypto';
import jStat from 'jstat';
import * as ss from 'simple-statistics';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { countRows, makeTestApp, postCheck, removeDir, setupLine, type TestApp } from '../helpers.js';

let t: TestApp;
let lineId: number;

beforeAll(async () => {
  t = await makeTestApp();
  ({ lineId } = await setupLine(t, { tare: 7.5 }));
});
afterAll(async () => {
  await t.close();
  removeDir(t.dir);
});

describe('POST /api/lines/:lineId/checks', () => {
  it('when five weights are posted, then the answer carries the statistics a reference computation gives', async () => {
    const weights = [503.2, 501.8, 505.1, 502.6, 504.4];
    const res = await postCheck(t, lineId, weights);
    expect(res.statusCode).toBe(201);
    const { check } = res.json();
    // reference: simple-statistics for mean and sample sd (its tTest divides by the population sd, so the
    // t is formed here from the sample sd); jstat's ttest for the two-sided p
    const refMean = ss.mean(weights);
    const refSd = ss.sampleStandardDeviation(weights);
    const refT = (refMean - 503) / (refSd / Math.sqrt(5));
    expect(check.n).toBe(5);
    expect(check.mean).toBeCloseTo(refMean, 10);
    expect(check.sd).toBeCloseTo(refSd, 10);
    expect(check.range).toBeCloseTo(505.1 - 501.8, 10);
    expect(check.se).toBeCloseTo(refSd / Math.sqrt(5), 10);
    expect(check.t).toBeCloseTo(refT, 10);
    expect(check.df).toBe(4);
    expect(check.p).toBeCloseTo((jStat as unknown as { ttest(mu: number, a: number[], sides: number): number }).ttest(503, weights, 2), 8);
    expect(check.ci95[0]).toBeLessThan(refMean);
    expect(check.ci95[1]).toBeGreaterThan(refMean);
    expect(check.target).toBe(503);
    expect(check.belowT1).toBe(0);
    expect(check.revision).toBe(1);
    expect(check.enteredBy).toBe('operator');
  });

  it('when the same clientId is posted again, then the stored check comes back with 200 and nothing new is written', async () => {
    const clientId = randomUUID();
    const first = await postCheck(t, lineId, [502, 503, 504, 503, 502], { clientId });
    const before = countRows(t.db, 'checks');
    const again = await postCheck(t, lineId, [502, 503, 504, 503, 502], { clientId });
    expect(first.statusCode).toBe(201);
    expect(again.statusCode).toBe(200);
    expect(again.json().check.id).toBe(first.json().check.id);
    expect(countRows(t.db, 'checks')).toBe(before);
  });

  it('when the basis is gross, then the product tare is taken off each weight', async () => {
    const res = await postCheck(t, lineId, [510.5, 511.5, 510.0, 509.5, 511.0], { basis: 'gross' });
    expect(res.statusCode).toBe(201);
    const { check } = res.json();
    expect(check.weights).toEqual([503, 504, 502.5, 502, 503.5]);
    expect(check.grossWeights).toEqual([510.5, 511.5, 510.0, 509.5, 511.0]);
    expect(check.basis).toBe('gross');
  });

  it('when a weight looks like a slipped decimal, then 422 names it, and confirmSuspect stores it', async () => {
    const before = countRows(t.db, 'checks');
    const res = await postCheck(t, lineId, [503, 50.3, 502, 504, 503]);
    expect(res.statusCode).toBe(422);
    expect(res.json().issues).toEqual([{ field: 'weights.1', message: expect.stringContaining('50.3') }]);
    expect(countRows(t.db, 'checks')).toBe(before);
    const confirmed = await postCheck(t, lineId, [503, 50.3, 502, 504, 503], { confirmSuspect: true });
    expect(confirmed.statusCode).toBe(201);
    expect(confirmed.json().check.belowT2).toBe(1);
  });

  it('when n differs from the product’s n, then the actual n is recorded', async () => {
    const res = await postCheck(t, lineId, [503, 502, 504]);
    expect(res.json().check.n).toBe(3);
    const one = await postCheck(t, lineId, [503]);
    expect(one.statusCode).toBe(201);
    expect(one.json().check.sd).toBeNull();
    expect(one.json().check.unavailable.sd).toMatch(/one value/);
  });

  const BAD: [string, unknown, string][] = [
    ['missing weights', { clientId: randomUUID() }, 'weights'],
    ['missing clientId', { weights: [500] }, 'clientId'],
    ['empty weights', { weights: [], clientId: randomUUID() }, 'weights'],
    ['51 weights', { weights: Array.from({ length: 51 }, () => 500), clientId: randomUUID() }, 'weights'],
    ['a string weight', { weights: [500, '501'], clientId: randomUUID() }, 'weights.1'],
    ['a negative weight', { weights: [500, -3], clientId: randomUUID() }, 'weights.1'],
    ['a zero weight', { weights: [0, 500], clientId: randomUUID() }, 'weights.0'],
    ['a null weight (NaN in JSON)', { weights: [500, null], clientId: randomUUID() }, 'weights.1'],
    ['a huge weight', { weights: [1e300], clientId: randomUUID() }, 'weights.0'],
    ['weights not an array', { weights: 500, clientId: randomUUID() }, 'weights'],
    ['clientId not a UUID', { weights: [500], clientId: 'abc' }, 'clientId'],
    ['clientId a number', { weights: [500], clientId: 42 }, 'clientId'],
    ['unknown basis', { weights: [500], clientId: randomUUID(), basis: 'tare' }, 'basis'],
    ['takenAt not a time', { weights: [500], clientId: randomUUID(), takenAt: 'yesterday' }, 'takenAt'],
    ['takenAt without zone', { weights: [500], clientId: randomUUID(), takenAt: '2026-03-02T05:00:00' }, 'takenAt'],
    ['an extra field', { weights: [500], clientId: randomUUID(), operator: 'me' }, 'body'],
    ['confirmSuspect a string', { weights: [500], clientId: randomUUID(), confirmSuspect: 'yes' }, 'confirmSuspect'],
    ['a note too long', { weights: [500], clientId: randomUUID(), note: 'x'.repeat(501) }, 'note'],
    ['a nested array', { weights: [[500]], clientId: randomUUID() }, 'weights.0'],
    ['takenAt in the future', { weights: [500], clientId: randomUUID(), takenAt: '2030-01-01T00:00:00Z' }, 'takenAt'],
    ['gross weights below the tare', { weights: [5, 500], clientId: randomUUID(), basis: 'gross', confirmSuspect: true }, 'weights.0'],
  ];
  for (const [label, body, field] of BAD) {
    it(`when the body has ${label}, then 400 names ${field} and no check is written`, async () => {
      const checks = countRows(t.db, 'checks');
      const packs = countRows(t.db, 'packs');
      const res = await t.app.inject({ method: 'POST', url: `/api/lines/${lineId}/checks`, headers: { cookie: t.cookies.operator }, payload: body as object });
      expect(res.statusCode).toBe(400);
      const answer = res.json();
      expect(answer.error).toBe('bad-request');
      expect(answer.issues.map((i: { field: string }) => i.field)).toContain(field);
      // the message names the field, or for an unknown field the key that should not be there
      expect(answer.message).toContain(field === 'body' ? 'operator' : field);
      expect(countRows(t.db, 'checks')).toBe(checks);
      expect(countRows(t.db, 'packs')).toBe(packs);
    });
  }

  it('when the body is not JSON, then 400 and nothing is written', async () => {
    const checks = countRows(t.db, 'checks');
    const res = await t.app.inject({ method: 'POST', url: `/api/lines/${lineId}/checks`, headers: { cookie: t.cookies.operator, 'content-type': 'application/json' }, payload: '{"weights": [500,' });
    expect(res.statusCode).toBe(400);
    expect(countRows(t.db, 'checks')).toBe(checks);
  });

  it('when the line does not exist, then 404; when a line runs no product, then 409', async () => {
    const missing = await postCheck(t, 999, [500]);
    expect(missing.statusCode).toBe(404);
    const idle = await t.app.inject({ method: 'POST', url: '/api/lines', headers: { cookie: t.cookies.admin }, payload: { code: 'IDLE', name: 'Idle line' } });
    const res = await postCheck(t, idle.json().line.id, [500]);
    expect(res.statusCode).toBe(409);
    expect(res.json().message).toMatch(/no product is running/);
  });
});

describe('GET checks and status', () => {
  it('when checks are listed, then they come oldest first with statistics and the rolling window', async () => {
    const res = await t.app.inject({ method: 'GET', url: `/api/lines/${lineId}/checks?limit=3`, headers: { cookie: t.cookies.operator } });
    expect(res.statusCode).toBe(200);
    const { checks } = res.json();
    expect(checks).toHaveLength(3);
    expect(checks[0].id).toBeLessThan(checks[2].id);
    expect(checks[2].window.checks).toBeGreaterThan(1);
    expect(checks[2].window).toHaveProperty('se');
  });

  it('when the status is read, then it gives limits, the window, TNE figures and the next check due', async () => {
    const res = await t.app.inject({ method: 'GET', url: `/api/lines/${lineId}/status`, headers: { cookie: t.cookies.operator } });
    const { status } = res.json();
    expect(status.product.tne).toBe(15);
    expect(status.product.t1).toBe(485);
    expect(status.product.t2).toBe(470);
    expect(status.limits.source).toBe('product');
    expect(status.limits.meanChart.ucl).toBeCloseTo(503 + (3 * 2) / Math.sqrt(5), 10);
    expect(status.window.checks).toBeGreaterThan(0);
    expect(Date.parse(status.nextCheckDue)).toBe(Date.parse(status.lastCheckAt) + 60 * 60_000);
    expect(status.falseAlarm.words).toMatch(/about one false alarm per/);
  });

  it('when the rolling window pools W checks, then its mean equals the mean of all their packs', async () => {
    const res = await t.app.inject({ method: 'GET', url: `/api/lines/${lineId}/checks?limit=50`, headers: { cookie: t.cookies.operator } });
    const checks = res.json().checks as { weights: number[]; window: { n: number; mean: number; checks: number } }[];
    const last = checks[checks.length - 1] as (typeof checks)[number];
    const pooled = checks.slice(-last.window.checks).flatMap((c) => c.weights);
    expect(last.window.n).toBe(pooled.length);
    expect(last.window.mean).toBeCloseTo(ss.mean(pooled), 10);
  });
});
