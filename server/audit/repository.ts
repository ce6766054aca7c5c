import type { Db } from '../db/database.js';

export interface AuditEntry {
  id: number;
  at: number;
  actor: string;
  action: string;
  entity: string;
  entityId: string | null;
  before: unknown;
  after: unknown;
}

export interface AuditQuery {
  from?: number;
  to?: number;
  entity?: string;
  limit: number;
}

interface AuditRow {
  id: number;
  at: number;
  actor: string;
  action: string;
  entity: string;
  entity_id: string | null;
  before: string | null;
  after: string | null;
}

/** The append-only trail. It has an insert and reads, and nothing else: there is no path that edits it. */
export function createAuditRepository(db: Db) {
  const insert = db.prepare(
    `INSERT INTO audit (at, actor, action, entity, entity_id, before, after)
     VALUES (@at, @actor, @action, @entity, @entityId, @before, @after)`,
  );
  const list = db.prepare(
    `SELECT * FROM audit
     WHERE at >= @from AND at < @to AND (@entity IS NULL OR entity = @entity)
     ORDER BY id DESC LIMIT @limit`,
  );
  return {
    /** Call inside the transaction that makes the change, so both land or neither does. */
    record(entry: { at: number; actor: string; action: string; entity: string; entityId?: string | number | null; before?: unknown; after?: unknown }): void {
      insert.run({
        at: entry.at,
        actor: entry.actor,
        action: entry.action,
        entity: entry.entity,
        entityId: entry.entityId === undefined || entry.entityId === null ? null : String(entry.entityId),
        before: entry.before === undefined ? null : JSON.stringify(entry.before),
        after: entry.after === undefined ? null : JSON.stringify(entry.after),
      });
    },
    list(query: AuditQuery): AuditEntry[] {
      const rows = list.all({
        from: query.from ?? 0,
        to: query.to ?? Number.MAX_SAFE_INTEGER,
        entity: query.entity ?? null,
        limit: query.limit,
      }) as AuditRow[];
      return rows.map((r) => ({
        id: r.id,
        at: r.at,
        actor: r.actor,
        action: r.action,
        entity: r.entity,
        entityId: r.entity_id,
        before: r.before === null ? null : JSON.parse(r.before),
        after: r.after === null ? null : JSON.parse(r.after),
      }));
    },
  };
}

export type AuditRepository = ReturnType<typeof createAuditRepository>;
