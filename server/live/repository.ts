import type { Db } from '../db/database.js';

export interface LiveMessage {
  seq: number;
  type: string;
  at: string;
  lineId: number | null;
  [key: string]: unknown;
}

/** A check's message parts as they were sent (the check as entered, its own signals), read back from their rows. */
export type CheckParts = (checkId: number) => { check: unknown; signals: unknown } | null;

/**
 * The numbered log of live messages; the hub replays from it. A check's message is stored without
 * its check and signals (see migrations/018): `checkParts` reads them back for a replay.
 */
export function createLiveRepository(db: Db, checkParts: CheckParts) {
  const insert = db.prepare('INSERT INTO live_messages (at, type, line_id, payload, check_id) VALUES (?, ?, ?, ?, ?)');
  const after = db.prepare('SELECT seq, payload, check_id FROM live_messages WHERE seq > ? ORDER BY seq LIMIT ?');
  const countAfter = db.prepare('SELECT COUNT(*) AS n FROM live_messages WHERE seq > ?');
  const latest = db.prepare("SELECT COALESCE(MAX(seq), 0) AS seq FROM live_messages");
  const oldest = db.prepare('SELECT MIN(seq) AS seq FROM live_messages');
  const prune = db.prepare(
    `DELETE FROM live_messages WHERE seq IN (SELECT seq FROM live_messages
       WHERE at < @before AND seq < (SELECT MAX(seq) FROM live_messages) ORDER BY seq LIMIT @limit)`,
  );
  return {
    /**
     * Call inside the transaction that makes the change; returns the message with its seq. Given
     * `checkId`, the message is a check's: its body (the check, its signals) is not stored, the id is.
     */
    append(message: { type: string; at: number; lineId: number | null; body: Record<string, unknown>; checkId?: number }): LiveMessage {
      const envelope = { type: message.type, at: new Date(message.at).toISOString(), lineId: message.lineId };
      const stored = message.checkId === undefined ? { ...envelope, ...message.body } : envelope;
      const seq = Number(insert.run(message.at, message.type, message.lineId, JSON.stringify(stored), message.checkId ?? null).lastInsertRowid);
      return { seq, ...envelope, ...message.body };
    },
    after(seq: number, limit: number): LiveMessage[] {
      const rows = after.all(seq, limit) as { seq: number; payload: string; check_id: number | null }[];
      const messages: LiveMessage[] = [];
      for (const r of rows) {
        const stored = JSON.parse(r.payload) as LiveMessage;
        if (r.check_id === null) {
          messages.push({ ...stored, seq: r.seq });
          continue;
        }
        // checks are never deleted (no code path does), so a missing one is damage: said, not skipped
        const parts = checkParts(r.check_id);
        if (!parts) throw new Error(`live message ${r.seq} is about check ${r.check_id}, which is not stored`);
        messages.push({ ...stored, ...parts, seq: r.seq });
      }
      return messages;
    },
    countAfter(seq: number): number {
      return (countAfter.get(seq) as { n: number }).n;
    },
    latestSeq(): number {
      return (latest.get() as { seq: number }).seq;
    },
    oldestSeq(): number | null {
      return (oldest.get() as { seq: number | null }).seq;
    },
    /** Drops up to `limit` messages older than the cut-off, oldest first, always keeping the newest so seq never restarts. */
    prune(before: number, limit: number): number {
      return prune.run({ before, limit }).changes;
    },
  };
}

export type LiveRepository = ReturnType<typeof createLiveRepository>;
