import { describe, expect, it } from 'vitest';
import { lastWeek, localDaysToUtc, localStamp } from '../../server/shared/time-zone.js';
import { isoToWallTime, wallTimeToIso } from '../../web/shared/format.js';

describe('plant-local time', () => {
  it('when UK clocks go forward and back, then the local column follows (01:00 UTC on the last Sundays of March and October)', () => {
    // common practice, no source: UK summer time starts and ends at 01:00 UTC on the last Sunday of March / October
    expect(localStamp(Date.parse('2026-03-29T00:30:00Z'), 'Europe/London')).toBe('2026-03-29 00:30:00');
    expect(localStamp(Date.parse('2026-03-29T01:00:00Z'), 'Europe/London')).toBe('2026-03-29 02:00:00');
    expect(localStamp(Date.parse('2026-10-25T00:59:59Z'), 'Europe/London')).toBe('2026-10-25 01:59:59');
    expect(localStamp(Date.parse('2026-10-25T01:00:00Z'), 'Europe/London')).toBe('2026-10-25 01:00:00');
    expect(localStamp(Date.parse('2026-07-01T12:34:56.789Z'), 'Asia/Kolkata')).toBe('2026-07-01 18:04:56');
  });

  it('when last week is asked for in summer, then it runs Monday 00:00 to Monday 00:00 local (23:00 UTC the day before)', () => {
    const week = lastWeek(Date.parse('2026-07-08T10:00:00Z'), 'Europe/London'); // a Wednesday
    expect(new Date(week.from).toISOString()).toBe('2026-06-28T23:00:00.000Z');
    expect(new Date(week.to).toISOString()).toBe('2026-07-05T23:00:00.000Z');
  });

  it('when a range of local days spans the clock change, then it has the short day in it', () => {
    const r = localDaysToUtc('2026-03-29', '2026-03-29', 'Europe/London');
    expect((r.to - r.from) / 3_600_000).toBe(23);
  });

  it('when the set-up page reads a baseline time typed in the plant zone, then it names the instant the wall clock showed, across the change of clocks', () => {
    // common practice, no source: UK summer time starts at 01:00 UTC on the last Sunday of March
    expect(wallTimeToIso('2026-01-15T06:00', 'Europe/London')).toBe('2026-01-15T06:00:00.000Z');
    expect(wallTimeToIso('2026-03-29T00:30', 'Europe/London')).toBe('2026-03-29T00:30:00.000Z');
    expect(wallTimeToIso('2026-03-29T03:30', 'Europe/London')).toBe('2026-03-29T02:30:00.000Z');
    expect(wallTimeToIso('2026-07-01T18:04', 'Asia/Kolkata')).toBe('2026-07-01T12:34:00.000Z');
    expect(isoToWallTime('2026-07-01T12:34:56.789Z', 'Asia/Kolkata')).toBe('2026-07-01T18:04');
    expect(wallTimeToIso('1 March', 'Europe/London')).toBeNull();
  });
});
