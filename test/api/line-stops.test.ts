import { describe, expect } from 'vitest';
import { countRows, heftTest, postCheck, setupLine, weightsWithMean, type TestApp } from '../helpers.js';

const MINUTE = 60_000;
const HOUR = 60 * MINUTE;
const GRACE = 10 * MINUTE; // the default overdue grace

const stop = (t: TestApp, lineId: number, payload: unknown, cookie = t.cookies.operator) =>
  t.app.inject({ method: 'POST', url: `/api/lines/${lineId}/stop`, headers: { cookie }, payload: payload as Record<string, unknown> });
const start = (t: TestApp, lineId: number, cookie = t.cookies.operator) => t.app.inject({ method: 'POST', url: `/api/lines/${lineId}/start`, headers: { cookie } });
const overdueAlerts = (t: TestApp) => t.app.heft.repos.alerts.unresolved().filter((a) => a.kind === 'check-overdue');

describe('a line that stands still', () => {
  heftTest('when a line is stopped for cleaning, then no check falls due however long it stands, and the first is due one interval after it starts', async ({ heft: t }) => {
    const { lineId } = await setupLine(t); // a check every 60 minutes
    expect((await postCheck(t, lineId, weightsWithMean(503))).statusCode).toBe(201);
    t.clock.advance(20 * MINUTE);
    const stopped = await stop(t, lineId, { reason: 'cleaning', note: 'after the changeover' });
    expect(stopped.statusCode).toBe(200);
    const stoppedAt = t.clock.now();
    expect(stopped.json().line).toMatchObject({ running: false, stop: { reason: 'cleaning', note: 'after the changeover', since: new Date(stoppedAt).toISOString(), by: 'operator' } });
    for (let i = 0; i < 12; i += 1) {
      t.clock.advance(30 * MINUTE);
      expect(t.app.heft.monitor.sweepOverdue()).toEqual([]);
    }
    const status = (await t.app.inject({ method: 'GET', url: `/api/lines/${lineId}/status`, headers: { cookie: t.cookies.supervisor } })).json().status;
    expect([status.running, status.stop.reason, status.nextCheckDue, status.overdue]).toEqual([false, 'cleaning', null, false]);

    const started = await start(t, lineId, t.cookies.supervisor);
    expect(started.json().line).toMatchObject({ running: true, stop: null });
    const startedAt = t.clock.now();
    t.clock.advance(HOUR + GRACE);
    expect(t.app.heft.monitor.sweepOverdue()).toEqual([]); // exactly at the end of the grace: not yet
    t.clock.advance(MINUTE);
    const opened = t.app.heft.monitor.sweepOverdue();
    expect(opened.map((a) => a.kind)).toEqual(['check-overdue']);
    expect(opened[0]?.onset.at).toBe(new Date(startedAt + HOUR).toISOString());
  });

  heftTest('when a line is stopped while its check is overdue, then the overdue alert closes with the stop as its cause', async ({ heft: t }) => {
    const { lineId } = await setupLine(t);
    await postCheck(t, lineId, weightsWithMean(503));
    t.clock.advance(HOUR + GRACE + MINUTE);
    expect(t.app.heft.monitor.sweepOverdue()).toHaveLength(1);
    expect((await stop(t, lineId, { reason: 'breakdown' })).statusCode).toBe(200);
    expect(overdueAlerts(t)).toEqual([]);
    const closed = t.app.heft.repos.alerts.list({ lineId, limit: 5 }).find((a) => a.kind === 'check-overdue');
    expect([closed?.state, closed?.cause]).toEqual(['resolved', 'line stopped']);
  });

  heftTest('when a stop names no reason from the list, then the answer names the field and nothing is stored', async ({ heft: t }) => {
    const { lineId } = await setupLine(t);
    const bad = await stop(t, lineId, { reason: 'lunch' });
    expect(bad.statusCode).toBe(400);
    expect(bad.json().issues[0].field).toBe('reason');
    // "off-shift" is the plant calendar's own reason: a person cannot give it
    const calendars = await stop(t, lineId, { reason: 'off-shift' });
    expect([calendars.statusCode, calendars.json().issues[0].field]).toEqual([400, 'reason']);
    const long = await stop(t, lineId, { reason: 'other', note: 'x'.repeat(201) });
    expect(long.json().issues[0].field).toBe('note');
    expect(countRows(t.db, 'line_stops')).toBe(0);
  });

  heftTest('when a stopped line is stopped again or a running one started, then the answer is 409 and nothing changes', async ({ heft: t }) => {
    const { lineId } = await setupLine(t);
    expect((await start(t, lineId)).statusCode).toBe(409);
    expect((await stop(t, lineId, { reason: 'break' })).statusCode).toBe(200);
    const again = await stop(t, lineId, { reason: 'other' });
    expect(again.statusCode).toBe(409);
    expect(again.json().message).toMatch(/already stopped \(break\)/);
    expect(countRows(t.db, 'line_stops')).toBe(1);
  });

  heftTest('when a line is stopped and started, then both are audited, in the live feed, and kept across a restart of the engine', async ({ heft: t }) => {
    const { lineId, productId } = await setupLine(t);
    const seq = t.app.heft.repos.live.latestSeq();
    await stop(t, lineId, { reason: 'no-orders', note: 'waiting for film' }, t.cookies.supervisor);
    // the engine reads the line again from storage (as at start, or after a product edit): still stopped
    t.app.heft.monitor.reloadLinesRunning(productId);
    const reloaded = (await t.app.inject({ method: 'GET', url: '/api/lines', headers: { cookie: t.cookies.operator } })).json().lines[0];
    expect([reloaded.running, reloaded.stop.reason, reloaded.stop.by]).toEqual([false, 'no-orders', 'supervisor']);
    t.clock.advance(15 * MINUTE);
    await start(t, lineId, t.cookies.supervisor);
    const audit = t.app.heft.repos.audit.list({ entity: 'line', limit: 5 }).map((a) => a.action);
    expect(audit.slice(0, 2)).toEqual(['line.start', 'line.stop']);
    const live = t.app.heft.repos.live.after(seq, 10).map((m) => [m.type, m.reason]);
    expect(live).toEqual([
      ['line-status', 'stopped'],
      ['line-status', 'started'],
    ]);
  });

  heftTest('when a line stood stopped during a range, then the review counts hours running and stopped by reason, and no check was due while it stood', async ({ heft: t }) => {
    const { lineId } = await setupLine(t);
    const from = t.clock.now();
    await postCheck(t, lineId, weightsWithMean(503));
    t.clock.advance(2 * HOUR);
    await stop(t, lineId, { reason: 'cleaning' });
    t.clock.advance(3 * HOUR);
    await start(t, lineId);
    t.clock.advance(HOUR);
    await stop(t, lineId, { reason: 'break' });
    t.clock.advance(30 * MINUTE);
    await start(t, lineId);
    t.clock.advance(30 * MINUTE);
    await stop(t, lineId, { reason: 'cleaning' });
    t.clock.advance(HOUR);
    const to = t.clock.now(); // 8 h in all: 3.5 h running, 4.5 h stopped (cleaning 3 + 1, break 0.5)
    const line = (await t.app.inject({ method: 'GET', url: `/api/review?from=${new Date(from).toISOString()}&to=${new Date(to).toISOString()}`, headers: { cookie: t.cookies.quality } })).json().review.lines[0];
    expect(line.running.hoursRunning).toBeCloseTo(3.5, 10);
    expect(line.running.hoursStopped).toBeCloseTo(4.5, 10);
    // in the order of the reasons' list (break before cleaning), though the cleaning came first
    expect(line.running.stopped.map((s: { reason: string; stops: number; hours: number }) => [s.reason, s.stops, s.hours])).toEqual([
      ['break', 1, 0.5],
      ['cleaning', 2, 4],
    ]);
    expect(line.sampling.checksDue).toBe(3); // ⌊3.5 h running / 60 min⌋, not ⌊8 h / 60 min⌋
  });
});
