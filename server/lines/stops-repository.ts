import type { Db } from '../db/database.js';

/** Why a person stops a line: the short list they pick from, with free text beside it. */
export const PERSON_STOP_REASONS = ['break', 'cleaning', 'changeover', 'no-orders', 'breakdown', 'other'] as const;
/** Every reason a stop can carry: a person's, or the plant calendar's own between its shifts. */
export const STOP_REASONS = [...PERSON_STOP_REASONS, 'off-shift'] as const;
export type StopReason = (typeof STOP_REASONS)[number];

export interface LineStop {
  id: number;
  lineId: number;
  reason: StopReason;
  note: string | null;
  stoppedAt: number;
  stoppedBy: string;
  startedAt: number | null;
  startedBy: string | null;
}

interface Row {
  id: number;
  line_id: number;
  reason: StopReason;
  note: string | null;
  stopped_at: number;
  stopped_by: string;
  started_at: number | null;
  started_by: string | null;
}

const toStop = (r: Row): LineStop => ({
  id: r.id,
  lineId: r.line_id,
  reason: r.reason,
  note: r.note,
  stoppedAt: r.stopped_at,
  stoppedBy: r.stopped_by,
  startedAt: r.started_at,
  startedBy: r.started_by,
});

export function createLineStopRepository(db: Db) {
  const open = db.prepare('SELECT * FROM line_stops WHERE line_id = ? AND started_at IS NULL');
  const lastEnded = db.prepare('SELECT MAX(started_at) AS at FROM line_stops WHERE line_id = ? AND started_at IS NOT NULL');
  const insert = db.prepare('INSERT INTO line_stops (line_id, reason, note, stopped_at, stopped_by) VALUES (@lineId, @reason, @note, @at, @by)');
  const end = db.prepare('UPDATE line_stops SET started_at = @at, started_by = @by WHERE id = @id');
  const inRange = db.prepare('SELECT * FROM line_stops WHERE line_id = @lineId AND stopped_at < @to AND (started_at IS NULL OR started_at > @from) ORDER BY stopped_at');
  const byId = db.prepare('SELECT * FROM line_stops WHERE id = ?');
  return {
    /** The line's stop in force, if it is stopped. */
    open(lineId: number): LineStop | null {
      const row = open.get(lineId) as Row | undefined;
      return row ? toStop(row) : null;
    },
    /** When the line last started again after a stop (null if it never stopped). */
    lastStartedAt(lineId: number): number | null {
      return (lastEnded.get(lineId) as { at: number | null }).at;
    },
    stop(lineId: number, reason: StopReason, note: string | null, at: number, by: string): LineStop {
      const id = Number(insert.run({ lineId, reason, note, at, by }).lastInsertRowid);
      return toStop(byId.get(id) as Row);
    },
    start(stopId: number, at: number, by: string): LineStop {
      end.run({ id: stopId, at, by });
      return toStop(byId.get(stopId) as Row);
    },
    /** Stops that overlap [from, to), oldest first. */
    during(lineId: number, from: number, to: number): LineStop[] {
      return (inRange.all({ lineId, from, to }) as Row[]).map(toStop);
    },
  };
}

export type LineStopRepository = ReturnType<typeof createLineStopRepository>;
