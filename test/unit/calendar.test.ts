import { describe, expect, it } from 'vitest';
import { shiftAt, type PlantCalendar } from '../../server/calendar/schedule.js';

// Europe/London in March 2026 is on GMT until the 29th (the EU/UK summer-time rule: the last Sunday of March)
const at = (iso: string) => Date.parse(iso);
const WEEKDAYS = [1, 2, 3, 4, 5];
const twoShifts: PlantCalendar = {
  shifts: [
    { name: 'early', starts: '06:00', ends: '14:00', days: WEEKDAYS },
    { name: 'late', starts: '14:00', ends: '22:00', days: WEEKDAYS },
  ],
  closedDays: ['2026-03-04'],
};

describe('the plant calendar', () => {
  it.each([
    ['2026-03-02T05:59:00Z', null],
    ['2026-03-02T06:00:00Z', 'early'],
    ['2026-03-02T13:59:00Z', 'early'],
    ['2026-03-02T14:00:00Z', 'late'],
    ['2026-03-02T22:00:00Z', null],
    ['2026-03-04T10:00:00Z', null], // a planned non-working day
    ['2026-03-07T10:00:00Z', null], // Saturday
  ])('when it is %s, then the plant is in shift %s', (when, expected) => {
    expect(shiftAt(twoShifts, at(when), 'Europe/London')?.name ?? null).toBe(expected);
  });

  it('when a night shift starts on Friday, then it runs into Saturday morning but none starts on Saturday night', () => {
    const nights: PlantCalendar = { shifts: [{ name: 'night', starts: '22:00', ends: '06:00', days: WEEKDAYS }], closedDays: [] };
    expect(shiftAt(nights, at('2026-03-07T03:00:00Z'), 'Europe/London')?.name).toBe('night'); // Saturday 03:00, from Friday
    expect(shiftAt(nights, at('2026-03-08T03:00:00Z'), 'Europe/London')).toBeNull(); // Sunday 03:00: Saturday starts none
    expect(shiftAt(nights, at('2026-03-02T05:00:00Z'), 'Europe/London')).toBeNull(); // Monday 05:00: Sunday starts none
  });

  it('when summer time has begun, then shift times stay plant-local', () => {
    // 30 March 2026 is on BST (UTC+1): the early shift starts at 05:00 UTC
    expect(shiftAt(twoShifts, at('2026-03-30T04:59:00Z'), 'Europe/London')).toBeNull();
    expect(shiftAt(twoShifts, at('2026-03-30T05:00:00Z'), 'Europe/London')?.name).toBe('early');
  });
});
