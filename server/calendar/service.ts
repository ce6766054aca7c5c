import type { HeftContext } from '../context.js';
import type { CalendarRepository } from './repository.js';
import { shiftAt, type Shift } from './schedule.js';

/** The name the calendar's own stops and starts go by in the audit trail and on the board. */
export const CALENDAR_ACTOR = 'plant calendar';

/**
 * The plant calendar: outside every shift (and on planned non-working days) it stops the lines that
 * run a product, and starts them again when a shift begins, except continuous lines and lines a
 * person stopped (those wait for a person).
 */
export function createCalendarService(ctx: Pick<HeftContext, 'db' | 'clock' | 'config' | 'repos' | 'monitor'> & { calendarRepo: CalendarRepository }) {
  const { db, clock, config, repos, monitor, calendarRepo } = ctx;
  return {
    view() {
      const c = calendarRepo.get();
      return { shifts: c.shifts, closedDays: c.closedNotes, inShift: c.shifts.length === 0 ? null : (shiftAt(c, clock.now(), config.timeZone)?.name ?? null) };
    },

    replace(shifts: Shift[], closedDays: { date: string; note?: string | null | undefined }[], actor: string) {
      const now = clock.now();
      db.transaction(() => {
        const before = calendarRepo.get();
        calendarRepo.replace(shifts, closedDays.map((d) => ({ date: d.date, note: d.note ?? null })));
        repos.audit.record({ at: now, actor, action: 'calendar.replace', entity: 'calendar', entityId: 1, before: { shifts: before.shifts, closedDays: before.closedDays }, after: { shifts, closedDays } });
      }).immediate();
    },

    /** Stops or starts each line as the calendar says now; returns the lines it changed. */
    sweep(): { stopped: number[]; started: number[] } {
      const out = { stopped: [] as number[], started: [] as number[] };
      const calendar = calendarRepo.get();
      if (calendar.shifts.length === 0) return out;
      const now = clock.now();
      const working = shiftAt(calendar, now, config.timeZone) !== null;
      const today = new Intl.DateTimeFormat('en-CA', { timeZone: config.timeZone, year: 'numeric', month: '2-digit', day: '2-digit' }).format(new Date(now));
      for (const line of repos.lines.list()) {
        if (line.continuous) continue;
        const state = monitor.lineState(line.id);
        if (!state.run) continue;
        if (!working && !state.stop) {
          const note = calendar.closedDays.includes(today) ? 'a planned non-working day' : null;
          monitor.stopLine(line.id, 'off-shift', note, CALENDAR_ACTOR);
          out.stopped.push(line.id);
        } else if (working && state.stop?.stoppedBy === CALENDAR_ACTOR) {
          monitor.startLine(line.id, CALENDAR_ACTOR);
          out.started.push(line.id);
        }
      }
      return out;
    },
  };
}

export type CalendarService = ReturnType<typeof createCalendarService>;
