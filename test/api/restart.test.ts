import { describe, expect, it } from 'vitest';
import { makeTestApp, postCheck, removeDir, rulesOf, setupLine, type TestApp } from '../helpers.js';
import { mulberry32, normalGenerator } from '../../server/stats/random.js';

const HOUR = 3_600_000;

/** The same seeded checks for both histories: an in-control stretch, then a slow upward drift. */
function history(count: number): number[][] {
  const normal = normalGenerator(mulberry32(99));
  return Array.from({ length: count }, (_, i) => {
    const drift = i > 20 ? (i - 20) * 0.25 : 0;
    return Array.from({ length: 5 }, () => Math.round((503 + drift + 2 * normal()) * 10) / 10);
  });
}

async function feed(t: TestApp, lineId: number, checks: number[][]) {
  const rules: string[][] = [];
  for (const weights of checks) {
    t.clock.advance(HOUR);
    const res = await postCheck(t, lineId, weights);
    expect(res.statusCode).toBe(201);
    rules.push(rulesOf(res.json()).sort());
  }
  return rules;
}

describe('restart', () => {
  it('when the server restarts mid-run, then the line state and the next signals are exactly as without the restart', async () => {
    const checks = history(40);
    const straight = await makeTestApp();
    const a = await setupLine(straight);
    const expected = await feed(straight, a.lineId, checks);
    const stateStraight = straight.app.heft.monitor.lineState(a.lineId);

    let restarted = await makeTestApp();
    const b = await setupLine(restarted);
    const firstPart = await feed(restarted, b.lineId, checks.slice(0, 27));
    restarted = await restarted.restart();
    const secondPart = await feed(restarted, b.lineId, checks.slice(27));
    const stateRestarted = restarted.app.heft.monitor.lineState(b.lineId);

    expect([...firstPart, ...secondPart]).toEqual(expected);
    // the drift did fire something, and every entry is a rule id
    expect(expected.flat().length).toBeGreaterThan(0);
    expect(expected.flat().every((rule) => typeof rule === 'string' && rule.length > 0)).toBe(true);
    expect(stateRestarted.segment).toEqual(stateStraight.segment);
    expect(stateRestarted.openAlerts.map((x) => [x.kind, x.direction, x.rules, x.state])).toEqual(
      stateStraight.openAlerts.map((x) => [x.kind, x.direction, x.rules, x.state]),
    );
    expect(stateRestarted.status).toBe(stateStraight.status);
    for (const t of [straight, restarted]) {
      await t.close();
      removeDir(t.dir);
    }
  });
});
