import { describe, expect } from 'vitest';
import { heftTest, postCheck, setupLine, weightsWithMean, type TestApp } from '../helpers.js';

// setupLine's product: target 503 g, σ 2 g, 5 packs a check → σ of the mean 0.894 g, 3σ limits
// 500.32 and 505.68 (centre ± 3σ/√n, Montgomery, Introduction to SQC, x̄ chart with known σ).
const CENTRE = 503;
const SIGMA = 2;
const HOUR = 3_600_000;
const CALM = [503.2, 502.7, 503.3, 502.8, 503.1];

interface AlertAnswer {
  id: number;
  kind: string;
  direction: string | null;
  state: string;
  size: { unit: number; sigma: number | null } | null;
}

async function feed(t: TestApp, lineId: number, means: number[]) {
  const answers = [];
  for (const m of means) {
    t.clock.advance(HOUR);
    const res = await postCheck(t, lineId, weightsWithMean(m));
    expect(res.statusCode).toBe(201);
    answers.push(res.json() as { check: { id: number; mean: number }; alerts: AlertAnswer[] });
  }
  return answers;
}

const shiftOf = (answer: { alerts: AlertAnswer[] }, direction: 'up' | 'down') =>
  answer.alerts.find((a) => a.kind === 'mean-shift' && a.direction === direction);

// A long shift up, +2 g for ten checks: its evidence in the segment outweighs one low check, which is
// what a change-point estimate over the whole segment latched on to.
const LONG_UP = [507, 504.6, 505.2, 504.8, 505.1, 504.9, 505.3, 504.7, 505.0, 504.9];

/** Calm checks, then a long stretch above: one mean shift up, open. */
async function upShift(t: TestApp, lineId: number) {
  await feed(t, lineId, CALM);
  const answers = await feed(t, lineId, LONG_UP);
  const up = shiftOf(answers[answers.length - 1]!, 'up');
  expect(up?.size?.unit).toBeGreaterThan(1.5);
  return up as AlertAnswer;
}

function expectOwnSize(down: AlertAnswer | undefined, ownMean: number) {
  expect(down, 'a mean shift down opened').toBeDefined();
  expect(down?.size?.unit).toBeCloseTo(ownMean - CENTRE, 9);
  expect(down?.size?.sigma).toBeCloseTo((ownMean - CENTRE) / SIGMA, 9);
}

describe('an alert is sized by its own points', () => {
  heftTest('when a shift up stands acknowledged and a check falls far below the centre, then the shift down is negative and sized by that check alone', async ({ heft: t }) => {
    const { lineId } = await setupLine(t);
    const up = await upShift(t, lineId);
    const sv = { cookie: t.cookies.supervisor };
    expect((await t.app.inject({ method: 'POST', url: `/api/alerts/${up.id}/acknowledge`, headers: sv, payload: { note: 'on my way' } })).statusCode).toBe(200);
    const [low] = await feed(t, lineId, [499.6]);
    expectOwnSize(shiftOf(low!, 'down'), low!.check.mean);
    // the up alert keeps its own size
    const stored = (await t.app.inject({ method: 'GET', url: `/api/alerts/${up.id}`, headers: sv })).json().alert as AlertAnswer;
    expect(stored.size?.unit).toBeGreaterThan(1.5);
  });

  heftTest('when a shift up is resolved and then a check falls far below, then the shift down is sized by its own point', async ({ heft: t }) => {
    const { lineId } = await setupLine(t);
    const up = await upShift(t, lineId);
    t.app.heft.monitor.resolve(up.id, 'filler adjusted', 'set back to 503 g', 'supervisor');
    const [low] = await feed(t, lineId, [499.6]);
    expectOwnSize(shiftOf(low!, 'down'), low!.check.mean);
  });

  heftTest('when an acknowledgement, a resolution and checks arrive in the same moment, then every shift down is sized by its own points', async ({ heft: t }) => {
    const { lineId } = await setupLine(t);
    const up = await upShift(t, lineId);
    const sv = { cookie: t.cookies.supervisor };
    t.clock.advance(HOUR);
    const answers = await Promise.all([
      t.app.inject({ method: 'POST', url: `/api/alerts/${up.id}/acknowledge`, headers: sv, payload: { note: 'seen' } }),
      postCheck(t, lineId, weightsWithMean(499.6)),
      t.app.inject({ method: 'POST', url: `/api/alerts/${up.id}/resolve`, headers: sv, payload: { cause: 'filler', action: 'reset' } }),
      postCheck(t, lineId, weightsWithMean(499.9)),
    ]);
    for (const a of answers) expect(a.statusCode).toBeLessThan(300);
    const downs = (await t.app.inject({ method: 'GET', url: `/api/alerts?lineId=${lineId}`, headers: sv })).json().alerts.filter(
      (a: AlertAnswer) => a.kind === 'mean-shift' && a.direction === 'down',
    ) as AlertAnswer[];
    expect(downs.length).toBeGreaterThan(0);
    for (const d of downs) {
      expect(d.size?.unit).toBeLessThan(0);
      // its own points are the low checks: their mean or one of them, never the up shift's
      expect(d.size?.unit).toBeGreaterThanOrEqual(499.6 - CENTRE - 1e-9);
      expect(d.size?.unit).toBeLessThanOrEqual(499.9 - CENTRE + 1e-9);
    }
  });

  heftTest('when the server restarts while a shift up stands acknowledged, then a shift down after the restart is sized by its own point', async ({ heft: first }) => {
    const { lineId } = await setupLine(first);
    const up = await upShift(first, lineId);
    first.app.heft.monitor.acknowledge(up.id, 'seen', 'supervisor');
    const t = await first.restart();
    try {
      const [low] = await feed(t, lineId, [499.6]);
      expectOwnSize(shiftOf(low!, 'down'), low!.check.mean);
    } finally {
      await t.close();
    }
  });
});
