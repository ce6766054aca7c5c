import type { Db } from '../db/database.js';
import type { PlantCalendar, Shift } from './schedule.js';

export function createCalendarRepository(db: Db) {
  const shifts = db.prepare('SELECT name, starts, ends, days FROM plant_shifts ORDER BY starts, id');
  const closed = db.prepare('SELECT day, note FROM plant_closed_days ORDER BY day');
  const clearShifts = db.prepare('DELETE FROM plant_shifts');
  const clearClosed = db.prepare('DELETE FROM plant_closed_days');
  const insertShift = db.prepare('INSERT INTO plant_shifts (name, starts, ends, days) VALUES (@name, @starts, @ends, @days)');
  const insertClosed = db.prepare('INSERT INTO plant_closed_days (day, note) VALUES (@day, @note)');
  return {
    get(): PlantCalendar & { closedNotes: { date: string; note: string | null }[] } {
      const s = (shifts.all() as { name: string; starts: string; ends: string; days: string }[]).map((r): Shift => ({ ...r, days: JSON.parse(r.days) as number[] }));
      const c = closed.all() as { day: string; note: string | null }[];
      return { shifts: s, closedDays: c.map((d) => d.day), closedNotes: c.map((d) => ({ date: d.day, note: d.note })) };
    },
    /** Replaces the calendar whole (the caller's transaction). */
    replace(shiftList: Shift[], closedDays: { date: string; note: string | null }[]): void {
      clearShifts.run();
      clearClosed.run();
      for (const s of shiftList) insertShift.run({ ...s, days: JSON.stringify(s.days) });
      for (const d of closedDays) insertClosed.run({ day: d.date, note: d.note });
    },
  };
}

export type CalendarRepository = ReturnType<typeof createCalendarRepository>;
