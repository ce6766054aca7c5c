import { describe, expect } from 'vitest';
import { heftTest, postCheck, setupLine, weightsWithMean } from '../helpers.js';

const HOUR = 3_600_000;

describe('a check costs the same however big its alert is', () => {
  heftTest('when a line runs off target for 2,000 checks with nobody resolving the alert, then every answer stays under 2 KB and the last is no bigger than the 200th', async ({ heft: t }) => {
    const { lineId } = await setupLine(t);
    const sizes: number[] = [];
    let alertId = 0;
    for (let i = 0; i < 2000; i += 1) {
      t.clock.advance(HOUR / 4);
      // 507 g against a centre of 503 g and σ of the mean 0.894 g: beyond 3σ on every check
      const res = await postCheck(t, lineId, weightsWithMean(i % 2 === 0 ? 507 : 507.4));
      expect(res.statusCode).toBe(201);
      sizes.push(Buffer.byteLength(res.body));
      const shift = (res.json().alerts as { id: number; kind: string }[]).find((a) => a.kind === 'mean-shift');
      expect(shift).toBeDefined();
      alertId = shift?.id ?? 0;
    }
    const alert = (await t.app.inject({ method: 'GET', url: `/api/alerts/${alertId}`, headers: { cookie: t.cookies.supervisor } })).json();
    expect(alert.alert.signalCount).toBeGreaterThanOrEqual(2000);

    expect(Math.max(...sizes)).toBeLessThanOrEqual(2048);
    // ids and the signal count gain a digit between the 200th and the 2,000th check (a few bytes each
    // in the check, its signals and the summary): that much growth, nothing that follows the alert's size
    expect(sizes[1999]! - sizes[199]!).toBeLessThanOrEqual(32);
    // the live message for a check is as small as its answer
    const checkMessages = t.events.filter((e) => e.type === 'check').slice(-1);
    expect(Buffer.byteLength(JSON.stringify(checkMessages[0]))).toBeLessThanOrEqual(2048);
    const alertMessage = t.events.filter((e) => e.type === 'alert-updated').at(-1);
    expect(Buffer.byteLength(JSON.stringify(alertMessage))).toBeLessThanOrEqual(1024);
  }, 120_000);

  heftTest('when an alert holds more signals than a page, then GET /api/alerts/:id pages back through all of them, each once', async ({ heft: t }) => {
    const { lineId } = await setupLine(t);
    let alertId = 0;
    for (let i = 0; i < 40; i += 1) {
      t.clock.advance(HOUR / 4);
      const res = await postCheck(t, lineId, weightsWithMean(507));
      alertId = (res.json().alerts as { id: number; kind: string }[]).find((a) => a.kind === 'mean-shift')?.id ?? 0;
    }
    const headers = { cookie: t.cookies.supervisor };
    const first = (await t.app.inject({ method: 'GET', url: `/api/alerts/${alertId}?limit=25`, headers })).json();
    const seen: number[] = [];
    let page = first;
    for (let guard = 0; guard < 100; guard += 1) {
      seen.unshift(...(page.alert.signals as { checkId: number }[]).map((s) => s.checkId));
      if (page.nextBefore === null) break;
      page = (await t.app.inject({ method: 'GET', url: `/api/alerts/${alertId}?limit=25&before=${page.nextBefore}`, headers })).json();
    }
    expect(seen.length).toBe(first.alert.signalCount);
    expect(first.alert.signals.length).toBe(25);
    // oldest first: check ids never go down
    expect(seen.every((id, i) => i === 0 || id >= (seen[i - 1] as number))).toBe(true);
  });
});
