import { readFileSync } from 'node:fs';
import * as ss from 'simple-statistics';
import { describe, expect } from 'vitest';
import { mulberry32, normalGenerator } from '../../server/stats/random.js';
import { heftTest, postCheck, setupLine, type TestApp } from '../helpers.js';

const HOUR = 3_600_000;
const q = (from: number, to: number) => `from=${new Date(from).toISOString()}&to=${new Date(to).toISOString()}`;

/** n hourly checks of five packs around `centre` with σ = 2 (seeded; property-test data). */
async function hourlyChecks(t: TestApp, lineId: number, count: number, seed: number, centre = 504): Promise<void> {
  const normal = normalGenerator(mulberry32(seed));
  for (let i = 0; i < count; i += 1) {
    t.clock.advance(HOUR);
    const weights = Array.from({ length: 5 }, () => Math.round((centre + 2 * normal()) * 10) / 10);
    expect((await postCheck(t, lineId, weights)).statusCode).toBe(201);
    for (const a of t.app.heft.repos.alerts.unresolved()) {
      t.clock.advance(60_000);
      t.app.heft.monitor.acknowledge(a.id, 'seen', 'supervisor');
      t.app.heft.monitor.resolve(a.id, 'no assignable cause', 'none', 'supervisor');
    }
  }
}

const review = async (t: TestApp, from: number, to: number) => {
  const res = await t.app.inject({ method: 'GET', url: `/api/review?${q(from, to)}`, headers: { cookie: t.cookies.quality } });
  expect(res.statusCode).toBe(200);
  return res.json().review;
};

/** d2 and d3 for n = 5 from the shared table of control-chart constants (computed from their definitions). */
function d2d3(n: number): [number, number] {
  const row = readFileSync(new URL('../fixtures/control-chart-constants.csv', import.meta.url), 'utf8')
    .split('\n')
    .find((l) => l.startsWith(`${n},`)) as string;
  const [, d2, d3] = row.split(',').map(Number);
  return [d2 as number, d3 as number];
}

describe('the review judges each check by the settings of its own time', () => {
  heftTest('when a product is edited today, then last week’s review is the same as before, and a range across the edit is cut in two', async ({ heft: t }) => {
    const { lineId, productId } = await setupLine(t, { target: 504, sigma: 2, costPerKg: 2 });
    const from = t.clock.now();
    await hourlyChecks(t, lineId, 25, 3);
    t.clock.advance(HOUR);
    const to = t.clock.now(); // a range that has ended, as last week has
    const before = await review(t, from, to);
    expect(before.lines[0].products[0].settings.productVersion).toBe(1);

    const edit = await t.app.inject({ method: 'PATCH', url: `/api/products/${productId}`, headers: { cookie: t.cookies.admin }, payload: { lsl: 490, sigma: 1.5, costPerKg: 3, target: 506 } });
    expect(edit.statusCode).toBe(200);
    expect(edit.json().product.version).toBe(2);
    expect(await review(t, from, to)).toEqual(before);

    await hourlyChecks(t, lineId, 25, 4, 506);
    const across = await review(t, from, t.clock.now() + 1);
    const sections = across.lines[0].products as { settings: { productVersion: number }; product: { lsl: number | null; target: number }; checks: number }[];
    expect(sections.map((s) => [s.settings.productVersion, s.product.lsl, s.product.target, s.checks])).toEqual([
      [1, null, 504, 25],
      [2, 490, 506, 25],
    ]);
    // the export names each check by the version that judged it, and by the code of that time
    await t.app.inject({ method: 'PATCH', url: `/api/products/${productId}`, headers: { cookie: t.cookies.admin }, payload: { code: 'P-RENAMED' } });
    const exported = await t.app.inject({ method: 'GET', url: `/api/exports/checks.json?${q(from, t.clock.now() + 1)}`, headers: { cookie: t.cookies.quality } });
    const rows = exported.json().checks as { product: string; product_version: number }[];
    expect(rows.map((r) => `${r.product} v${r.product_version}`)).toEqual([...Array(25).fill('P-L1 v1'), ...Array(25).fill('P-L1 v2')]);
    const versions = (await t.app.inject({ method: 'GET', url: `/api/products/${productId}/versions`, headers: { cookie: t.cookies.quality } })).json().versions;
    expect(versions.map((v: { version: number; product: { sigma: number; code: string } }) => [v.version, v.product.sigma, v.product.code])).toEqual([
      [1, 2, 'P-L1'],
      [2, 1.5, 'P-L1'],
      [3, 1.5, 'P-RENAMED'],
    ]);
  });

  heftTest('when a save changes nothing, then no new version is made', async ({ heft: t }) => {
    const { productId } = await setupLine(t);
    const same = await t.app.inject({ method: 'PATCH', url: `/api/products/${productId}`, headers: { cookie: t.cookies.admin }, payload: { target: 503 } });
    expect(same.json().product.version).toBe(1);
  });

  heftTest('when limits were approved from a baseline, then the week after uses them with the baseline’s ν by Patnaik, and the week before does not', async ({ heft: t }) => {
    const { lineId } = await setupLine(t, { target: 504, sigma: null, lsl: 490, usl: 520 });
    const baselineFrom = t.clock.now();
    await hourlyChecks(t, lineId, 25, 8);
    const baselineTo = t.clock.now() + 1;
    const approved = await t.app.inject({
      method: 'POST',
      url: `/api/lines/${lineId}/limits`,
      headers: { cookie: t.cookies.quality },
      payload: { basis: 'baseline', from: new Date(baselineFrom).toISOString(), to: new Date(baselineTo).toISOString(), method: 'rbar', note: 'first baseline' },
    });
    expect(approved.statusCode).toBe(201);
    const limits = approved.json().limits as { id: number; sigma: number };
    const weekFrom = t.clock.now();
    await hourlyChecks(t, lineId, 30, 9);
    const weekTo = t.clock.now() + 1;

    const p = (await review(t, weekFrom, weekTo)).lines[0].products[0];
    expect(p.settings.limitsVersion).toBe(limits.id);
    expect(p.capability.within.source).toMatch(new RegExp(`approved limits v${limits.id}, R̄/d2 of 25 baseline checks`));
    // Patnaik (1950): ν = 1/(2·Var(σ̂)/σ²) with Var(R̄/d2)/σ² = (d3/d2)²/k for k checks of n = 5
    const [d2, d3] = d2d3(5);
    const nu = (25 * d2 * d2) / (2 * d3 * d3);
    expect(p.capability.within.degreesOfFreedom).toBeCloseTo(nu, 6);
    // Cpk = min(USL − x̄, x̄ − LSL)/3σ, interval by the delta method: Var = Var(x̄)/(9σ²) + Cpk²/(2ν) (Bissell 1990's form)
    const means = (t.db.prepare('SELECT mean FROM checks WHERE taken_at >= ? AND taken_at < ? ORDER BY taken_at').all(weekFrom, weekTo) as { mean: number }[]).map((r) => r.mean);
    const packs = (t.db.prepare('SELECT p.net FROM packs p JOIN checks c ON c.id = p.check_id WHERE c.taken_at >= ? AND c.taken_at < ?').all(weekFrom, weekTo) as { net: number }[]).map((r) => r.net);
    const m = ss.mean(packs);
    const cpk = Math.min(520 - m, m - 490) / (3 * limits.sigma);
    const meanVar = ss.sampleVariance(means) / means.length;
    const half = 1.959964 * Math.sqrt(meanVar / (9 * limits.sigma ** 2) + (cpk * cpk) / (2 * nu));
    expect(p.capability.within.cpk.value).toBeCloseTo(cpk, 10);
    expect(p.capability.within.cpk.ci95[0]).toBeCloseTo(cpk - half, 5);
    expect(p.capability.within.cpk.ci95[1]).toBeCloseTo(cpk + half, 5);

    const earlier = (await review(t, baselineFrom, baselineTo)).lines[0].products[0];
    expect(earlier.settings.limitsVersion).toBeNull();
    expect(earlier.capability.within.source).toMatch(/estimated from this range/);
  });
});
