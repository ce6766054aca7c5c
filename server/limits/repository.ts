import type { Db } from '../db/database.js';
import type { SigmaMethod } from '../stats/control-limits.js';

/** How a version's σ was found: estimated from a baseline, or set from a standard. */
export type LimitsMethod = SigmaMethod | 'standard';

export interface LimitsVersion {
  id: number;
  lineId: number;
  productId: number;
  centre: number;
  sigma: number;
  method: LimitsMethod;
  baselineFrom: number | null;
  baselineTo: number | null;
  baselineChecks: number | null;
  approvedBy: string;
  approvedAt: number;
  note: string | null;
  /** Baseline checks left out of the estimate, each with its reason. */
  excluded: Exclusion[];
}

export interface Exclusion {
  checkId: number;
  reason: string;
}

interface Row {
  id: number;
  line_id: number;
  product_id: number;
  centre: number;
  sigma: number;
  method: LimitsMethod;
  baseline_from: number | null;
  baseline_to: number | null;
  baseline_checks: number | null;
  approved_by: string;
  approved_at: number;
  note: string | null;
  excluded: string;
}

const toVersion = (r: Row): LimitsVersion => ({
  id: r.id,
  lineId: r.line_id,
  productId: r.product_id,
  centre: r.centre,
  sigma: r.sigma,
  method: r.method,
  baselineFrom: r.baseline_from,
  baselineTo: r.baseline_to,
  baselineChecks: r.baseline_checks,
  approvedBy: r.approved_by,
  approvedAt: r.approved_at,
  note: r.note,
  excluded: JSON.parse(r.excluded) as Exclusion[],
});

export function createLimitsRepository(db: Db) {
  const latest = db.prepare('SELECT * FROM limit_versions WHERE line_id = ? AND product_id = ? ORDER BY id DESC LIMIT 1');
  const history = db.prepare('SELECT * FROM limit_versions WHERE line_id = ? ORDER BY id');
  const byId = db.prepare('SELECT * FROM limit_versions WHERE id = ?');
  const inForceAt = db.prepare('SELECT * FROM limit_versions WHERE line_id = ? AND product_id = ? AND approved_at <= ? ORDER BY approved_at DESC, id DESC LIMIT 1');
  const approvedDuring = db.prepare('SELECT approved_at AS at FROM limit_versions WHERE line_id = ? AND product_id = ? AND approved_at > ? AND approved_at < ? ORDER BY approved_at');
  const insert = db.prepare(
    `INSERT INTO limit_versions (line_id, product_id, centre, sigma, method, baseline_from, baseline_to, baseline_checks,
       approved_by, approved_at, note, excluded)
     VALUES (@lineId, @productId, @centre, @sigma, @method, @baselineFrom, @baselineTo, @baselineChecks, @approvedBy,
       @approvedAt, @note, @excluded)`,
  );
  return {
    latest(lineId: number, productId: number): LimitsVersion | null {
      const row = latest.get(lineId, productId) as Row | undefined;
      return row ? toVersion(row) : null;
    },
    /** The version approved last at or before `at`: the one that judged a check taken then. */
    inForceAt(lineId: number, productId: number, at: number): LimitsVersion | null {
      const row = inForceAt.get(lineId, productId, at) as Row | undefined;
      return row ? toVersion(row) : null;
    },
    /** When versions were approved inside (from, to). */
    approvalsDuring(lineId: number, productId: number, from: number, to: number): number[] {
      return (approvedDuring.all(lineId, productId, from, to) as { at: number }[]).map((r) => r.at);
    },
    get(id: number): LimitsVersion | null {
      const row = byId.get(id) as Row | undefined;
      return row ? toVersion(row) : null;
    },
    history(lineId: number): LimitsVersion[] {
      return (history.all(lineId) as Row[]).map(toVersion);
    },
    insert(v: Omit<LimitsVersion, 'id'>): LimitsVersion {
      const id = Number(insert.run({ ...v, excluded: JSON.stringify(v.excluded) }).lastInsertRowid);
      return { ...v, id };
    },
  };
}

export type LimitsRepository = ReturnType<typeof createLimitsRepository>;
