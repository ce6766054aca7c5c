import type { Db } from '../db/database.js';
import type { SegmentState } from '../stats/judge.js';

export interface StoredMonitorState {
  lineId: number;
  runId: number;
  limitsKey: string;
  segmentStartCheckId: number | null;
  segment: SegmentState;
  /** The segment before the latest check (for correcting it); null after a reset. */
  previous: { segment: SegmentState; segmentStartCheckId: number | null } | null;
}

/** Each line's detector state, written in the same transaction as the check that changed it. */
export function createMonitorStateRepository(db: Db) {
  const upsert = db.prepare(
    `INSERT INTO line_monitor_state (line_id, run_id, limits_key, segment_start_check_id, detectors, previous, updated_at)
     VALUES (@lineId, @runId, @limitsKey, @segmentStartCheckId, @detectors, @previous, @at)
     ON CONFLICT (line_id) DO UPDATE SET run_id = excluded.run_id, limits_key = excluded.limits_key,
       segment_start_check_id = excluded.segment_start_check_id, detectors = excluded.detectors,
       previous = excluded.previous, updated_at = excluded.updated_at`,
  );
  const get = db.prepare('SELECT * FROM line_monitor_state WHERE line_id = ?');
  return {
    save(s: StoredMonitorState, at: number): void {
      upsert.run({
        lineId: s.lineId,
        runId: s.runId,
        limitsKey: s.limitsKey,
        segmentStartCheckId: s.segmentStartCheckId,
        detectors: JSON.stringify(s.segment),
        previous: s.previous === null ? null : JSON.stringify(s.previous),
        at,
      });
    },
    get(lineId: number): StoredMonitorState | null {
      const row = get.get(lineId) as
        | { line_id: number; run_id: number; limits_key: string; segment_start_check_id: number | null; detectors: string; previous: string | null }
        | undefined;
      if (!row) return null;
      return {
        lineId: row.line_id,
        runId: row.run_id,
        limitsKey: row.limits_key,
        segmentStartCheckId: row.segment_start_check_id,
        segment: JSON.parse(row.detectors) as SegmentState,
        previous: row.previous === null ? null : (JSON.parse(row.previous) as StoredMonitorState['previous']),
      };
    },
  };
}

export type MonitorStateRepository = ReturnType<typeof createMonitorStateRepository>;
