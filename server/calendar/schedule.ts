import { localParts } from '../shared/time-zone.js';

/** A shift: plant-local "HH:MM" start and end (an end at or before the start runs past midnight) on ISO weekdays (1 = Monday). */
export interface Shift {
  name: string;
  starts: string;
  ends: string;
  days: number[];
}

export interface PlantCalendar {
  shifts: Shift[];
  /** Planned non-working days, plant-local "YYYY-MM-DD": no shift starts on them. */
  closedDays: string[];
}

const minutesOf = (hhmm: string) => Number(hhmm.slice(0, 2)) * 60 + Number(hhmm.slice(3, 5));
const isoDay = (p: { year: number; month: number; day: number }) => `${p.year}-${String(p.month).padStart(2, '0')}-${String(p.day).padStart(2, '0')}`;

/**
 * The shift the plant is in at `at`, or null between shifts. A shift belongs to the day it starts:
 * one from 22:00 to 06:00 on Friday runs into Saturday morning, and a closed day stops the shifts
 * that would start on it (common practice, no source).
 */
export function shiftAt(calendar: PlantCalendar, at: number, timeZone: string): Shift | null {
  const now = localParts(at, timeZone);
  const minute = now.hour * 60 + now.minute;
  const today = isoDay(now);
  const yesterdayParts = localParts(at - 86_400_000, timeZone);
  const yesterday = isoDay(yesterdayParts);
  for (const s of calendar.shifts) {
    const start = minutesOf(s.starts);
    const end = minutesOf(s.ends);
    const overnight = end <= start;
    if (s.days.includes(now.weekday) && !calendar.closedDays.includes(today) && minute >= start && (overnight || minute < end)) return s;
    if (overnight && s.days.includes(yesterdayParts.weekday) && !calendar.closedDays.includes(yesterday) && minute < end) return s;
  }
  return null;
}
