import type { Db } from '../db/database.js';

export interface WaitingPack {
  id: number;
  lineId: number;
  runId: number;
  weight: number;
  weighedAt: number;
}

/** A checkweigher's packs waiting to make a check, and the batches already taken (by client id). */
export function createCheckweigherRepository(db: Db) {
  const insertPack = db.prepare('INSERT INTO waiting_packs (line_id, run_id, weight, weighed_at, received_at) VALUES (?, ?, ?, ?, ?)');
  const waitingOf = db.prepare('SELECT id, line_id AS lineId, run_id AS runId, weight, weighed_at AS weighedAt FROM waiting_packs WHERE line_id = ? ORDER BY id');
  const countOf = db.prepare('SELECT COUNT(*) AS n FROM waiting_packs WHERE line_id = ?');
  const removeUpTo = db.prepare('DELETE FROM waiting_packs WHERE line_id = ? AND id <= ?');
  const oldestPerLine = db.prepare('SELECT line_id AS lineId, MIN(weighed_at) AS oldest FROM waiting_packs GROUP BY line_id');
  const batchById = db.prepare('SELECT line_id AS lineId, check_ids AS checkIds FROM pack_batches WHERE client_id = ?');
  const insertBatch = db.prepare('INSERT INTO pack_batches (client_id, line_id, packs, check_ids, received_at) VALUES (?, ?, ?, ?, ?)');
  return {
    add(lineId: number, runId: number, packs: { weight: number; at: number }[], receivedAt: number): void {
      for (const p of packs) insertPack.run(lineId, runId, p.weight, p.at, receivedAt);
    },
    waiting: (lineId: number) => waitingOf.all(lineId) as WaitingPack[],
    count: (lineId: number) => (countOf.get(lineId) as { n: number }).n,
    /** Takes the packs up to and including `lastId` off the line's waiting list (they made a check). */
    remove(lineId: number, lastId: number): void {
      removeUpTo.run(lineId, lastId);
    },
    oldestPerLine: () => oldestPerLine.all() as { lineId: number; oldest: number }[],
    batch(clientId: string): { lineId: number; checkIds: number[] } | null {
      const r = batchById.get(clientId) as { lineId: number; checkIds: string } | undefined;
      return r ? { lineId: r.lineId, checkIds: JSON.parse(r.checkIds) as number[] } : null;
    },
    recordBatch(clientId: string, lineId: number, packs: number, checkIds: number[], at: number): void {
      insertBatch.run(clientId, lineId, packs, JSON.stringify(checkIds), at);
    },
  };
}

export type CheckweigherRepository = ReturnType<typeof createCheckweigherRepository>;
