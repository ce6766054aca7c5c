import { describe, expect } from 'vitest';
import { CALENDAR_ACTOR } from '../../server/calendar/service.js';
import { heftTest, setupLine, type TestApp } from '../helpers.js';

const MINUTE = 60_000;
const HOUR = 60 * MINUTE;
const TWO_SHIFTS = {
  shifts: [
    { name: 'early', starts: '06:00', ends: '14:00', days: [1, 2, 3, 4, 5] },
    { name: 'late', starts: '14:00', ends: '22:00', days: [1, 2, 3, 4, 5] },
  ],
  closedDays: [],
};

const putCalendar = (t: TestApp, body: unknown, cookie = t.cookies.admin) => t.app.inject({ method: 'PUT', url: '/api/calendar', headers: { cookie }, payload: body as Record<string, unknown> });
const lineOf = async (t: TestApp, id: number) => (await t.app.inject({ method: 'GET', url: `/api/lines/${id}`, headers: { cookie: t.cookies.supervisor } })).json().line;

describe('the plant calendar on the lines', () => {
  heftTest('when the late shift ends, then the line stops by itself, no check falls overdue overnight, and it starts at the early shift with its first check an interval later', async ({ heft: t }) => {
    // the test clock starts Monday 2 March 2026, 06:00 in London (GMT)
    const { lineId } = await setupLine(t);
    expect((await putCalendar(t, TWO_SHIFTS)).json().calendar.inShift).toBe('early');
    t.clock.advance(16 * HOUR - MINUTE); // 21:59
    expect(t.app.heft.calendar.sweep()).toEqual({ stopped: [], started: [] });
    t.app.heft.monitor.sweepOverdue(); // overdue by now: the line's checks were not keyed
    t.clock.advance(MINUTE); // 22:00
    expect(t.app.heft.calendar.sweep()).toEqual({ stopped: [lineId], started: [] });
    const stopped = await lineOf(t, lineId);
    expect([stopped.running, stopped.stop.reason, stopped.stop.note, stopped.stop.by]).toEqual([false, 'off-shift', null, CALENDAR_ACTOR]);
    expect(t.app.heft.repos.alerts.unresolved().filter((a) => a.kind === 'check-overdue')).toEqual([]);
    for (let i = 0; i < 8; i += 1) {
      t.clock.advance(HOUR);
      expect(t.app.heft.monitor.sweepOverdue()).toEqual([]);
    }
    expect(t.app.heft.calendar.sweep().started).toEqual([lineId]); // 06:00 Tuesday
    const started = await lineOf(t, lineId);
    expect(started.running).toBe(true);
    const status = (await t.app.inject({ method: 'GET', url: `/api/lines/${lineId}/status`, headers: { cookie: t.cookies.supervisor } })).json().status;
    expect(status.nextCheckDue).toBe(new Date(t.clock.now() + HOUR).toISOString());
  });

  heftTest('when a line is continuous or was stopped by a person, then the calendar leaves it alone', async ({ heft: t }) => {
    const { lineId } = await setupLine(t);
    const { lineId: roundTheClock } = await setupLine(t, { code: 'P-L2' }, 'L2');
    await t.app.inject({ method: 'PATCH', url: `/api/lines/${roundTheClock}`, headers: { cookie: t.cookies.admin }, payload: { continuous: true } });
    await putCalendar(t, TWO_SHIFTS);
    t.clock.advance(15 * HOUR); // 21:00
    await t.app.inject({ method: 'POST', url: `/api/lines/${lineId}/stop`, headers: { cookie: t.cookies.operator }, payload: { reason: 'breakdown' } });
    t.clock.advance(2 * HOUR); // 23:00
    expect(t.app.heft.calendar.sweep()).toEqual({ stopped: [], started: [] });
    t.clock.advance(7 * HOUR); // 06:00
    expect(t.app.heft.calendar.sweep()).toEqual({ stopped: [], started: [] });
    expect((await lineOf(t, lineId)).stop.reason).toBe('breakdown');
    expect((await lineOf(t, roundTheClock)).running).toBe(true);
  });

  heftTest('when a calendar has a bad time or a supervisor sends it, then it is refused, naming the field, and nothing changes', async ({ heft: t }) => {
    const bad = await putCalendar(t, { shifts: [{ name: 'early', starts: '6:00', ends: '14:00', days: [1] }], closedDays: [] });
    expect(bad.statusCode).toBe(400);
    expect(bad.json().issues[0].field).toMatch(/^shifts\.0\.starts$/);
    expect((await putCalendar(t, TWO_SHIFTS, t.cookies.supervisor)).statusCode).toBe(403);
    expect((await t.app.inject({ method: 'GET', url: '/api/calendar', headers: { cookie: t.cookies.operator } })).json().calendar.shifts).toEqual([]);
  });

  heftTest('when a day is planned as closed, then the lines stop that day with that reason', async ({ heft: t }) => {
    const { lineId } = await setupLine(t);
    await putCalendar(t, { ...TWO_SHIFTS, closedDays: [{ date: '2026-03-03', note: 'stocktake' }] });
    t.clock.advance(24 * HOUR + 2 * HOUR); // Tuesday 08:00
    expect(t.app.heft.calendar.sweep().stopped).toEqual([lineId]);
    expect((await lineOf(t, lineId)).stop.note).toBe('a planned non-working day');
  });
});
