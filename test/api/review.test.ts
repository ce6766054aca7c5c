import { parse } from 'csv-parse/sync';
import { randomUUID } from 'node:crypto';
import * as ss from 'simple-statistics';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mulberry32, normalGenerator } from '../../server/stats/random.js';
import { makeTestApp, postCheck, removeDir, setupLine, weightsWithMean, type TestApp } from '../helpers.js';

const HOUR = 3_600_000;
let t: TestApp;
let lineId: number;
let start: number;
let mid: number;
let end: number;

interface ProductReview {
  checks: number;
  packs: number;
  mean: number;
  sd: number;
  capability: {
    refused?: string;
    within?: { sigma: number; source: string; degreesOfFreedom: number | null; cpk: { value: number; ci95: [number, number] } };
    overall?: { cpk: { value: number; ci95: [number, number] } };
  };
  netQuantity: { meetsMean: boolean; meetsT2: boolean; belowT1: number };
  giveaway: { perPack: number; percentOfNominal: number; cost: number | null; packsMade: number };
  targetAdvice: { lowestTarget: number; savingPerPack: number };
}

beforeAll(async () => {
  t = await makeTestApp({ start: Date.parse('2026-03-02T06:00:00Z') });
  ({ lineId } = await setupLine(t, { costPerKg: 2, target: 504, sigma: 2 }));
  await t.app.inject({ method: 'PATCH', url: `/api/lines/${lineId}`, headers: { cookie: t.cookies.admin }, payload: { packsPerHour: 1000 } });
  start = t.clock.now();
  const normal = normalGenerator(mulberry32(5));
  // 30 hourly checks around 504 g, then 30 around 501 g; two hours are missed
  for (let i = 0; i < 62; i += 1) {
    t.clock.advance(HOUR);
    if (i === 40 || i === 41) continue;
    const centre = i < 30 ? 504 : 501;
    if (i === 30) mid = t.clock.now() - 1;
    const weights = Array.from({ length: 5 }, () => Math.round((centre + 2 * normal()) * 10) / 10);
    const res = await postCheck(t, lineId, weights, {}, i < 30 ? t.cookies.operator : t.cookies.supervisor);
    expect(res.statusCode).toBe(201);
    // the supervisor sees to every alert within minutes, with a cause, so each stretch ends stable
    for (const a of t.app.heft.repos.alerts.unresolved()) {
      t.clock.advance(60_000);
      t.app.heft.monitor.acknowledge(a.id, 'seen', 'supervisor');
      t.clock.advance(60_000);
      t.app.heft.monitor.resolve(a.id, i >= 30 ? 'auger worn' : 'no assignable cause', i >= 30 ? 'auger replaced' : 'none', 'supervisor');
    }
  }
  end = t.clock.now() + 1;
});

afterAll(async () => {
  await t.close();
  removeDir(t.dir);
});

const q = (from: number, to: number) => `from=${new Date(from).toISOString()}&to=${new Date(to).toISOString()}`;

describe('the week review', () => {
  it('when a range is reviewed, then it gives the sampling plan, every event with its times, and the per-product figures', async () => {
    const res = await t.app.inject({ method: 'GET', url: `/api/review?${q(start, end)}`, headers: { cookie: t.cookies.quality } });
    expect(res.statusCode).toBe(200);
    const [line] = res.json().review.lines;
    expect(line.sampling.checksTaken).toBe(60);
    expect(line.sampling.checksDue).toBeGreaterThanOrEqual(60);
    expect(line.events.length).toBeGreaterThan(0);
    const shift = line.events.find((e: { kind: string; direction: string }) => e.kind === 'mean-shift' && e.direction === 'down');
    expect(shift.resolved.cause).toBe('auger worn');
    expect(shift.minutesToResolve).toBeGreaterThanOrEqual(0);
    expect(line.medianMinutesToResolve).not.toBeNull();
    expect(line.alertLoad.predictedFalseAlarmsPerDay).toBeGreaterThan(0);
    const product = line.products[0] as ProductReview;
    expect(product.checks).toBe(60);
    expect(product.packs).toBe(300);
  });

  it('when capability is computed against a configured σ, then Cpk matches the formula worked independently and its interval is the mean’s only', async () => {
    const res = await t.app.inject({ method: 'GET', url: `/api/review?${q(start, mid)}`, headers: { cookie: t.cookies.quality } });
    const p = res.json().review.lines[0].products[0] as ProductReview;
    const packs = (t.db.prepare('SELECT p.net FROM packs p JOIN checks c ON c.id = p.check_id WHERE c.taken_at < ?').all(mid) as { net: number }[]).map((r) => r.net);
    const m = ss.mean(packs);
    const s = ss.sampleStandardDeviation(packs);
    // within σ in force: the product's configured 2 g; lower limit T1 = 485 g; no upper limit
    const cpk = (m - 485) / (3 * 2);
    expect(p.capability.within?.cpk.value).toBeCloseTo(cpk, 10);
    // a configured σ is known: the interval is (x̄ ± t·SE − T1)/3σ with SE from the 30 check means
    // (Student's t on 29 df = 2.0452, from Student's t table; the clustered mean's SE, Cochran §9.2)
    const checkMeans = (t.db.prepare('SELECT mean FROM checks WHERE taken_at < ? ORDER BY taken_at').all(mid) as { mean: number }[]).map((r) => r.mean);
    const se = ss.sampleStandardDeviation(checkMeans) / Math.sqrt(checkMeans.length);
    const half = (2.0452 * se) / (3 * 2);
    expect(p.capability.within?.cpk.ci95[0]).toBeCloseTo(cpk - half, 4);
    expect(p.capability.within?.cpk.ci95[1]).toBeCloseTo(cpk + half, 4);
    expect(p.capability.within?.degreesOfFreedom).toBeNull();
    // all packs together: Bissell (1990) on the 150 packs
    const ppk = (m - 485) / (3 * s);
    expect(p.capability.overall?.cpk.value).toBeCloseTo(ppk, 10);
    const bissell = 1.959964 * Math.sqrt(1 / (9 * packs.length) + (ppk * ppk) / (2 * (packs.length - 1)));
    expect(p.capability.overall?.cpk.ci95[0]).toBeCloseTo(ppk - bissell, 5);
    // giveaway: (mean − 500 g) per pack; 1000 packs an hour for the run's hours in range; 2 per kg
    expect(p.giveaway.perPack).toBeCloseTo(m - 500, 10);
    expect(p.giveaway.percentOfNominal).toBeCloseTo(((m - 500) / 500) * 100, 10);
    expect(p.giveaway.cost).toBeCloseTo(((m - 500) / 1000) * p.giveaway.packsMade * 2, 6);
    // lowest target with σ = 2: max(500, 485 + 3.92, 470 + 7.44) = 500
    expect(p.targetAdvice.lowestTarget).toBe(500);
    expect(p.targetAdvice.savingPerPack).toBeCloseTo(m - 500, 10);
    expect(p.netQuantity.meetsMean).toBe(true);
    expect(p.netQuantity.meetsT2).toBe(true);
  });

  it('when fewer than 20 checks are in range, or an act-level alert is still open, then capability is refused with the reason', async () => {
    const few = await t.app.inject({ method: 'GET', url: `/api/review?${q(start, start + 10 * HOUR)}`, headers: { cookie: t.cookies.quality } });
    expect(few.json().review.lines[0].products[0].capability.refused).toMatch(/at least 20/);
    const u = await makeTestApp();
    const l = await setupLine(u);
    const from = u.clock.now();
    for (let i = 0; i < 25; i += 1) {
      u.clock.advance(HOUR);
      await postCheck(u, l.lineId, weightsWithMean(i === 24 ? 512 : 503));
    }
    const res = await u.app.inject({ method: 'GET', url: `/api/review?${q(from, u.clock.now() + 1)}`, headers: { cookie: u.cookies.quality } });
    expect(res.json().review.lines[0].products[0].capability.refused).toMatch(/not stable/);
    await u.close();
    removeDir(u.dir);
  });

  it('when the default range is asked for, then it is last week, Monday to Monday in the plant’s time zone', async () => {
    const res = await t.app.inject({ method: 'GET', url: '/api/review', headers: { cookie: t.cookies.quality } });
    const { from, to } = res.json().review;
    // the clock stands on Wednesday 2026-03-04 (London is on UTC until the end of March): last week is 23 Feb to 2 Mar
    expect(from).toBe('2026-02-23T00:00:00.000Z');
    expect(to).toBe('2026-03-02T00:00:00.000Z');
  });

  it('when two periods are compared, then Welch’s t finds the 3 g fall and says so in plain words', async () => {
    const res = await t.app.inject({
      method: 'POST',
      url: '/api/review/compare',
      headers: { cookie: t.cookies.quality },
      payload: { lineId, a: { from: new Date(start).toISOString(), to: new Date(mid).toISOString() }, b: { from: new Date(mid).toISOString(), to: new Date(end).toISOString() } },
    });
    expect(res.statusCode).toBe(200);
    const c = res.json().comparison;
    expect(c.welch.difference).toBeLessThan(-2);
    expect(c.welch.ci95[1]).toBeLessThan(0);
    expect(c.words).toMatch(/^From A to B the mean fell \d\.\d\d g, 95 % CI \d\.\d\d to \d\.\d\d g/);
    // the same split by crew: the operator keyed the first half, the supervisor the second
    const crews = await t.app.inject({
      method: 'POST',
      url: '/api/review/compare',
      headers: { cookie: t.cookies.quality },
      payload: { lineId, a: { from: new Date(start).toISOString(), to: new Date(end).toISOString(), operators: ['operator'] }, b: { from: new Date(start).toISOString(), to: new Date(end).toISOString(), operators: ['supervisor'] } },
    });
    expect(crews.json().comparison.welch.difference).toBeCloseTo(c.welch.difference, 10);
  });
});

describe('exports', () => {
  for (const kind of ['checks', 'packs', 'events'] as const) {
    it(`when ${kind} are exported as CSV and as JSON, then the parsed CSV equals the JSON`, async () => {
      const headers = { cookie: t.cookies.quality };
      const csv = await t.app.inject({ method: 'GET', url: `/api/exports/${kind}.csv?${q(start, end)}`, headers });
      const json = await t.app.inject({ method: 'GET', url: `/api/exports/${kind}.json?${q(start, end)}`, headers });
      expect(csv.statusCode).toBe(200);
      expect(csv.headers['content-type']).toMatch(/text\/csv/);
      expect(csv.headers['content-disposition']).toMatch(/attachment; filename="heft-/);
      const rows = parse(csv.body, { columns: true }) as Record<string, string>[];
      const objects = json.json()[kind] as Record<string, unknown>[];
      expect(rows.length).toBe(objects.length);
      expect(rows.length).toBeGreaterThan(0);
      const asText = (v: unknown) => (v === null || v === undefined ? '' : typeof v === 'boolean' ? String(v) : String(v));
      expect(rows).toEqual(objects.map((o) => Object.fromEntries(Object.entries(o).map(([k, v]) => [k, asText(v)]))));
      // ISO 8601 UTC and a plant-local column beside it; dot decimals
      const first = rows[0] as Record<string, string>;
      const utc = first.taken_at_utc ?? first.opened_at_utc;
      expect(utc).toMatch(/^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{3}Z$/);
      expect(first.taken_at_local ?? first.opened_at_local).toMatch(/^\d{4}-\d\d-\d\d \d\d:\d\d:\d\d$/);
      if (kind === 'packs') expect(first.net).toMatch(/^\d+(\.\d+)?$/);
    });
  }

  it('when a range of 100,000 packs is exported, then it streams without the server’s memory growing by more than a few MB', async () => {
    const u = await makeTestApp();
    const l = await setupLine(u);
    // seed 20,000 checks of 5 packs quickly, straight into storage
    const insertCheck = u.db.prepare(
      `INSERT INTO checks (line_id, run_id, product_id, client_id, taken_at, recorded_at, basis, n, mean, sd, range, target, below_t1, below_t2, window_checks, window_n, window_mean, window_sd)
       VALUES (?, 1, ?, ?, ?, ?, 'net', 5, 503, 1.2, 3, 503, 0, 0, 1, 5, 503, 1.2)`,
    );
    const insertPack = u.db.prepare('INSERT INTO packs (check_id, position, net) VALUES (?, ?, ?)');
    const from = u.clock.now();
    u.db.transaction(() => {
      for (let i = 0; i < 20_000; i += 1) {
        const id = Number(insertCheck.run(l.lineId, l.productId, randomUUID(), from + i * 60_000, from + i * 60_000).lastInsertRowid);
        for (let k = 0; k < 5; k += 1) insertPack.run(id, k, 501 + k);
      }
    })();
    await u.app.listen({ port: 0, host: '127.0.0.1' });
    const port = (u.app.server.address() as { port: number }).port;
    // what the JS heap keeps while streaming, sampled after forced collections (garbage is not growth);
    // the test's own HTTP client sits in the same process, and its socket buffers live outside the heap
    const gc = (globalThis as { gc?: () => void }).gc;
    const retained = () => {
      gc?.();
      return process.memoryUsage().heapUsed;
    };
    const before = retained();
    let peak = before;
    const sampler = setInterval(() => {
      peak = Math.max(peak, retained());
    }, 20);
    const res = await fetch(`http://127.0.0.1:${port}/api/exports/packs.csv?${q(from, from + 20_000 * 60_000)}`, { headers: { cookie: u.cookies.quality } });
    let bytes = 0;
    let lines = 0;
    const reader = (res.body as ReadableStream<Uint8Array>).getReader();
    for (;;) {
      const { done, value } = await reader.read();
      if (done) break;
      bytes += value.length;
      for (const b of value) if (b === 10) lines += 1;
    }
    clearInterval(sampler);
    const growthMb = (peak - before) / 1024 / 1024;
    console.log(`export: 100,000 packs, ${(bytes / 1024 / 1024).toFixed(1)} MB of CSV; peak retained memory growth ${growthMb.toFixed(1)} MB${gc ? '' : ' (no --expose-gc: garbage included)'}`);
    expect(lines).toBe(100_001);
    expect(growthMb).toBeLessThan(gc ? 6 : 100);
    expect(bytes).toBeGreaterThan(5 * 1024 * 1024);
    await u.close();
    removeDir(u.dir);
  }, 60_000);
});
