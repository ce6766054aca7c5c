import type { Db } from '../db/database.js';

export interface LiveMessage {
  seq: number;
  type: string;
  at: string;
  lineId: number | null;
  [key: string]: unknown;
}

/** The numbered log of live messages; the hub replays from it. */
export function createLiveRepository(db: Db) {
  const insert = db.prepare('INSERT INTO live_messages (at, type, line_id, payload) VALUES (?, ?, ?, ?)');
  const after = db.prepare('SELECT seq, payload FROM live_messages WHERE seq > ? ORDER BY seq LIMIT ?');
  const countAfter = db.prepare('SELECT COUNT(*) AS n FROM live_messages WHERE seq > ?');
  const latest = db.prepare("SELECT COALESCE(MAX(seq), 0) AS seq FROM live_messages");
  const oldest = db.prepare('SELECT MIN(seq) AS seq FROM live_messages');
  const prune = db.prepare(
    `DELETE FROM live_messages WHERE seq IN (SELECT seq FROM live_messages
       WHERE at < @before AND seq < (SELECT MAX(seq) FROM live_messages) ORDER BY seq LIMIT @limit)`,
  );
  return {
    /** Call inside the transaction that makes the change; returns the message with its seq. */
    append(message: { type: string; at: number; lineId: number | null; body: Record<string, unknown> }): LiveMessage {
      const payload = { type: message.type, at: new Date(message.at).toISOString(), lineId: message.lineId, ...message.body };
      const seq = Number(insert.run(message.at, message.type, message.lineId, JSON.stringify(payload)).lastInsertRowid);
      return { seq, ...payload };
    },
    after(seq: number, limit: number): LiveMessage[] {
      return (after.all(seq, limit) as { seq: number; payload: string }[]).map((r) => ({ ...(JSON.parse(r.payload) as LiveMessage), seq: r.seq }));
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
