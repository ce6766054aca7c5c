import type Database from 'better-sqlite3';
import type { Db } from '../db/database.js';
import type { Basis } from '../products/repository.js';

/** Where a check's weights came from: typed, a tablet's serial scale, a scale bridge, or a checkweigher's stream. */
export const CHECK_SOURCES = ['keyed', 'scale', 'bridge', 'checkweigher'] as const;
export type CheckSource = (typeof CHECK_SOURCES)[number];

export interface StoredCheck {
  id: number;
  lineId: number;
  runId: number;
  productId: number;
  clientId: string;
  takenAt: number;
  recordedAt: number;
  basis: Basis;
  source: CheckSource;
  enteredBy: string | null;
  note: string | null;
  revision: number;
  revisesCheckId: number | null;
  supersededBy: number | null;
  revisionReason: string | null;
  n: number;
  mean: number;
  sd: number | null;
  range: number;
  target: number;
  belowT1: number;
  belowT2: number;
  windowChecks: number;
  windowN: number;
  windowMean: number;
  windowSd: number | null;
  limitsVersionId: number | null;
  /** Net weights, in the order they were keyed. */
  weights: number[];
  /** Gross weights as keyed, when the check was entered gross. */
  grossWeights: number[] | null;
}

export type NewCheck = Omit<StoredCheck, 'id' | 'supersededBy'>;

interface CheckRow {
  id: number;
  line_id: number;
  run_id: number;
  product_id: number;
  client_id: string;
  taken_at: number;
  recorded_at: number;
  basis: Basis;
  source: CheckSource;
  entered_by: string | null;
  note: string | null;
  revision: number;
  revises_check_id: number | null;
  superseded_by: number | null;
  revision_reason: string | null;
  n: number;
  mean: number;
  sd: number | null;
  range: number;
  target: number;
  below_t1: number;
  below_t2: number;
  window_checks: number;
  window_n: number;
  window_mean: number;
  window_sd: number | null;
  limits_version_id: number | null;
  nets: string;
  grosses: string;
}

// Packs come back as JSON arrays in keyed order, so one query reads a page of checks with their packs.
const SELECT_CHECK = `SELECT c.*,
  (SELECT json_group_array(net) FROM (SELECT net FROM packs WHERE check_id = c.id ORDER BY position)) AS nets,
  (SELECT json_group_array(gross) FROM (SELECT gross FROM packs WHERE check_id = c.id ORDER BY position)) AS grosses
  FROM checks c`;

function toCheck(r: CheckRow): StoredCheck {
  const grosses = JSON.parse(r.grosses) as (number | null)[];
  return {
    id: r.id,
    lineId: r.line_id,
    runId: r.run_id,
    productId: r.product_id,
    clientId: r.client_id,
    takenAt: r.taken_at,
    recordedAt: r.recorded_at,
    basis: r.basis,
    source: r.source,
    enteredBy: r.entered_by,
    note: r.note,
    revision: r.revision,
    revisesCheckId: r.revises_check_id,
    supersededBy: r.superseded_by,
    revisionReason: r.revision_reason,
    n: r.n,
    mean: r.mean,
    sd: r.sd,
    range: r.range,
    target: r.target,
    belowT1: r.below_t1,
    belowT2: r.below_t2,
    windowChecks: r.window_checks,
    windowN: r.window_n,
    windowMean: r.window_mean,
    windowSd: r.window_sd,
    limitsVersionId: r.limits_version_id,
    weights: JSON.parse(r.nets) as number[],
    grossWeights: r.basis === 'gross' ? grosses.map((g) => g as number) : null,
  };
}

export interface CheckQuery {
  lineId: number;
  from?: number;
  to?: number;
  limit: number;
  includeSuperseded?: boolean;
}

export function createCheckRepository(db: Db) {
  // bound by position, not by name (a named binding looks each of the 25 up on the object: about 3 % of
  // a check's engine time); the column list here and the argument list in insert() keep the same order
  const insertCheck = db.prepare(
    `INSERT INTO checks (line_id, run_id, product_id, client_id, taken_at, recorded_at, basis, source, entered_by, note, revision,
       revises_check_id, revision_reason, n, mean, sd, range, target, below_t1, below_t2, window_checks, window_n,
       window_mean, window_sd, limits_version_id)
     VALUES (${Array.from({ length: 25 }, () => '?').join(', ')})`,
  );
  // one statement per check's packs, prepared once for each pack count seen
  const packInserts = new Map<number, Database.Statement>();
  const insertPacks = (n: number) => {
    let stmt = packInserts.get(n);
    if (!stmt) {
      stmt = db.prepare(`INSERT INTO packs (check_id, position, net, gross) VALUES ${Array.from({ length: n }, () => '(?, ?, ?, ?)').join(', ')}`);
      packInserts.set(n, stmt);
    }
    return stmt;
  };
  const markSuperseded = db.prepare('UPDATE checks SET superseded_by = @by WHERE id = @id AND superseded_by IS NULL');
  const byId = db.prepare(`${SELECT_CHECK} WHERE c.id = ?`);
  const byClientId = db.prepare(`${SELECT_CHECK} WHERE c.client_id = ?`);
  // The newest checks first, then reversed, so `limit` keeps the latest ones and the answer reads oldest to newest.
  const list = db.prepare(
    `SELECT * FROM (${SELECT_CHECK}
       WHERE c.line_id = @lineId AND c.taken_at >= @from AND c.taken_at < @to
         AND (@all = 1 OR c.superseded_by IS NULL)
       ORDER BY c.taken_at DESC, c.id DESC LIMIT @limit)
     ORDER BY taken_at, id`,
  );
  const latestOfRun = db.prepare(
    `SELECT * FROM (${SELECT_CHECK} WHERE c.run_id = @runId AND c.superseded_by IS NULL AND c.id >= @sinceId
       ORDER BY c.id DESC LIMIT @limit) ORDER BY id`,
  );
  const runRange = db.prepare(
    `${SELECT_CHECK} WHERE c.run_id = @runId AND c.superseded_by IS NULL AND c.taken_at >= @from AND c.taken_at <= @to
     ORDER BY c.taken_at, c.id`,
  );
  const lastTakenInRun = db.prepare('SELECT MAX(taken_at) AS at FROM checks WHERE run_id = ?');
  const count = db.prepare('SELECT COUNT(*) AS n FROM checks');

  return {
    insert(c: NewCheck): number {
      const id = Number(
        insertCheck.run(c.lineId, c.runId, c.productId, c.clientId, c.takenAt, c.recordedAt, c.basis, c.source, c.enteredBy, c.note, c.revision,
          c.revisesCheckId, c.revisionReason, c.n, c.mean, c.sd, c.range, c.target, c.belowT1, c.belowT2, c.windowChecks, c.windowN,
          c.windowMean, c.windowSd, c.limitsVersionId).lastInsertRowid,
      );
      // a plain loop: flatMap measured slow on this path
      const values: (number | null)[] = [];
      for (let i = 0; i < c.weights.length; i += 1) values.push(id, i, c.weights[i] as number, c.grossWeights?.[i] ?? null);
      insertPacks(c.weights.length).run(values);
      return id;
    },
    markSuperseded(id: number, by: number): boolean {
      return markSuperseded.run({ id, by }).changes === 1;
    },
    get(id: number): StoredCheck | null {
      const row = byId.get(id) as CheckRow | undefined;
      return row ? toCheck(row) : null;
    },
    getByClientId(clientId: string): StoredCheck | null {
      const row = byClientId.get(clientId) as CheckRow | undefined;
      return row ? toCheck(row) : null;
    },
    list(q: CheckQuery): StoredCheck[] {
      return (
        list.all({
          lineId: q.lineId,
          from: q.from ?? 0,
          to: q.to ?? Number.MAX_SAFE_INTEGER,
          all: q.includeSuperseded ? 1 : 0,
          limit: q.limit,
        }) as CheckRow[]
      ).map(toCheck);
    },
    /** The run's latest current checks (at most `limit`), oldest first, from check `sinceId` on. */
    latestOfRun(runId: number, limit: number, sinceId = 0): StoredCheck[] {
      return (latestOfRun.all({ runId, limit, sinceId }) as CheckRow[]).map(toCheck);
    },
    inRunBetween(runId: number, from: number, to: number): StoredCheck[] {
      return (runRange.all({ runId, from, to }) as CheckRow[]).map(toCheck);
    },
    lastTakenAt(runId: number): number | null {
      return (lastTakenInRun.get(runId) as { at: number | null }).at;
    },
    count(): number {
      return (count.get() as { n: number }).n;
    },
  };
}

export type CheckRepository = ReturnType<typeof createCheckRepository>;
