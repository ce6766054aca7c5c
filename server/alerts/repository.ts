import type { Db } from '../db/database.js';
import type { Direction, RuleId, Severity } from '../stats/rules.js';

export type AlertKind = 'mean-shift' | 'spread-up' | 'pack-below-t2' | 'check-overdue';
export type AlertState = 'open' | 'acknowledged' | 'resolved';

export interface ShiftSize {
  unit: number;
  sigma: number | null;
}

export interface StoredSignal {
  id: number;
  alertId: number;
  checkId: number | null;
  rule: RuleId | 'check-overdue';
  severity: Severity;
  direction: Direction | null;
  at: number;
  size: ShiftSize | null;
  onsetCheckId: number | null;
}

export interface StoredAlert {
  id: number;
  lineId: number;
  runId: number | null;
  kind: AlertKind;
  direction: Direction | null;
  severity: Severity;
  state: AlertState;
  rules: string[];
  openedAt: number;
  onsetAt: number | null;
  onsetCheckId: number | null;
  changePointAt: number | null;
  changePointCheckId: number | null;
  size: ShiftSize | null;
  latestCheckId: number | null;
  updatedAt: number;
  acknowledgedBy: string | null;
  acknowledgedAt: number | null;
  acknowledgeNote: string | null;
  resolvedBy: string | null;
  resolvedAt: number | null;
  cause: string | null;
  action: string | null;
  /** How many signals the alert holds; written with the alert, never counted. */
  signalCount: number;
  /** The latest shelving: until when, by whom, why; and how many times it was shelved. */
  shelvedUntil: number | null;
  shelvedBy: string | null;
  shelveReason: string | null;
  shelveCount: number;
}

interface AlertRow {
  id: number;
  line_id: number;
  run_id: number | null;
  kind: AlertKind;
  direction: Direction | null;
  severity: Severity;
  state: AlertState;
  rules: string;
  opened_at: number;
  onset_at: number | null;
  onset_check_id: number | null;
  change_point_at: number | null;
  change_point_check_id: number | null;
  size_unit: number | null;
  size_sigma: number | null;
  latest_check_id: number | null;
  updated_at: number;
  acknowledged_by: string | null;
  acknowledged_at: number | null;
  acknowledge_note: string | null;
  resolved_by: string | null;
  resolved_at: number | null;
  cause: string | null;
  action: string | null;
  signal_count: number;
  shelved_until: number | null;
  shelved_by: string | null;
  shelve_reason: string | null;
  shelve_count: number;
}

interface SignalRow {
  id: number;
  alert_id: number;
  check_id: number | null;
  rule: StoredSignal['rule'];
  severity: Severity;
  direction: Direction | null;
  at: number;
  size_unit: number | null;
  size_sigma: number | null;
  onset_check_id: number | null;
}

const toAlert = (r: AlertRow): StoredAlert => ({
  id: r.id,
  lineId: r.line_id,
  runId: r.run_id,
  kind: r.kind,
  direction: r.direction,
  severity: r.severity,
  state: r.state,
  rules: JSON.parse(r.rules) as string[],
  openedAt: r.opened_at,
  onsetAt: r.onset_at,
  onsetCheckId: r.onset_check_id,
  changePointAt: r.change_point_at,
  changePointCheckId: r.change_point_check_id,
  size: r.size_unit === null ? null : { unit: r.size_unit, sigma: r.size_sigma },
  latestCheckId: r.latest_check_id,
  updatedAt: r.updated_at,
  acknowledgedBy: r.acknowledged_by,
  acknowledgedAt: r.acknowledged_at,
  acknowledgeNote: r.acknowledge_note,
  resolvedBy: r.resolved_by,
  resolvedAt: r.resolved_at,
  cause: r.cause,
  action: r.action,
  signalCount: r.signal_count,
  shelvedUntil: r.shelved_until ?? null,
  shelvedBy: r.shelved_by ?? null,
  shelveReason: r.shelve_reason ?? null,
  shelveCount: r.shelve_count ?? 0,
});

const toSignal = (r: SignalRow): StoredSignal => ({
  id: r.id,
  alertId: r.alert_id,
  checkId: r.check_id,
  rule: r.rule,
  severity: r.severity,
  direction: r.direction,
  at: r.at,
  size: r.size_unit === null ? null : { unit: r.size_unit, sigma: r.size_sigma },
  onsetCheckId: r.onset_check_id,
});

function alertParams(a: Omit<StoredAlert, 'id'>) {
  return {
    lineId: a.lineId,
    runId: a.runId,
    kind: a.kind,
    direction: a.direction,
    severity: a.severity,
    state: a.state,
    rules: JSON.stringify(a.rules),
    openedAt: a.openedAt,
    onsetAt: a.onsetAt,
    onsetCheckId: a.onsetCheckId,
    changePointAt: a.changePointAt,
    changePointCheckId: a.changePointCheckId,
    sizeUnit: a.size?.unit ?? null,
    sizeSigma: a.size?.sigma ?? null,
    latestCheckId: a.latestCheckId,
    updatedAt: a.updatedAt,
    acknowledgedBy: a.acknowledgedBy,
    acknowledgedAt: a.acknowledgedAt,
    acknowledgeNote: a.acknowledgeNote,
    resolvedBy: a.resolvedBy,
    resolvedAt: a.resolvedAt,
    cause: a.cause,
    action: a.action,
    signalCount: a.signalCount,
    shelvedUntil: a.shelvedUntil,
    shelvedBy: a.shelvedBy,
    shelveReason: a.shelveReason,
    shelveCount: a.shelveCount,
  };
}

export interface AlertQuery {
  state?: AlertState;
  lineId?: number;
  from?: number;
  to?: number;
  limit: number;
}

export function createAlertRepository(db: Db) {
  const insert = db.prepare(
    `INSERT INTO alerts (line_id, run_id, kind, direction, severity, state, rules, opened_at, onset_at, onset_check_id,
       change_point_at, change_point_check_id, size_unit, size_sigma, latest_check_id, updated_at, acknowledged_by,
       acknowledged_at, acknowledge_note, resolved_by, resolved_at, cause, action, signal_count, shelved_until, shelved_by,
       shelve_reason, shelve_count)
     VALUES (@lineId, @runId, @kind, @direction, @severity, @state, @rules, @openedAt, @onsetAt, @onsetCheckId,
       @changePointAt, @changePointCheckId, @sizeUnit, @sizeSigma, @latestCheckId, @updatedAt, @acknowledgedBy,
       @acknowledgedAt, @acknowledgeNote, @resolvedBy, @resolvedAt, @cause, @action, @signalCount, @shelvedUntil, @shelvedBy,
       @shelveReason, @shelveCount)`,
  );
  const update = db.prepare(
    `UPDATE alerts SET severity = @severity, state = @state, rules = @rules, onset_at = @onsetAt,
       onset_check_id = @onsetCheckId, change_point_at = @changePointAt, change_point_check_id = @changePointCheckId,
       size_unit = @sizeUnit, size_sigma = @sizeSigma, latest_check_id = @latestCheckId, updated_at = @updatedAt,
       acknowledged_by = @acknowledgedBy, acknowledged_at = @acknowledgedAt, acknowledge_note = @acknowledgeNote,
       resolved_by = @resolvedBy, resolved_at = @resolvedAt, cause = @cause, action = @action, signal_count = @signalCount,
       shelved_until = @shelvedUntil, shelved_by = @shelvedBy, shelve_reason = @shelveReason, shelve_count = @shelveCount
     WHERE id = @id`,
  );
  const byId = db.prepare('SELECT * FROM alerts WHERE id = ?');
  // who escalation told of the alert (sent e-mail and webhooks), for the alert's view
  const told = db.prepare(
    "SELECT rule_name AS rule, channel, sent_at AS at FROM notifications WHERE alert_id = ? AND status = 'sent' AND event_type IN ('alert.opened', 'alert.escalated') ORDER BY sent_at, id",
  );
  const unresolved = db.prepare("SELECT * FROM alerts WHERE state != 'resolved' ORDER BY id");
  const list = db.prepare(
    `SELECT * FROM (SELECT * FROM alerts
       WHERE (@state IS NULL OR state = @state) AND (@lineId IS NULL OR line_id = @lineId)
         AND opened_at >= @from AND opened_at < @to
       ORDER BY opened_at DESC, id DESC LIMIT @limit) ORDER BY opened_at, id`,
  );
  const overlapping = db.prepare(
    `SELECT * FROM alerts WHERE line_id = @lineId AND opened_at < @to
       AND (opened_at >= @from OR resolved_at IS NULL OR resolved_at > @from)
     ORDER BY opened_at, id`,
  );
  const insertSignal = db.prepare(
    `INSERT INTO signals (alert_id, check_id, rule, severity, direction, at, size_unit, size_sigma, onset_check_id)
     VALUES (@alertId, @checkId, @rule, @severity, @direction, @at, @sizeUnit, @sizeSigma, @onsetCheckId)`,
  );
  const signalsOf = db.prepare('SELECT * FROM signals WHERE alert_id = ? ORDER BY id');
  // an alert left open for weeks gathers thousands of signals: they are read a page at a time
  const signalPage = db.prepare('SELECT * FROM (SELECT * FROM signals WHERE alert_id = @alertId AND id < @before ORDER BY id DESC LIMIT @limit) ORDER BY id');
  const signalsOfCheck = db.prepare('SELECT * FROM signals WHERE check_id = ? ORDER BY id');
  const alertsOfCheck = db.prepare('SELECT DISTINCT alert_id AS id FROM signals WHERE check_id = ? ORDER BY alert_id');

  return {
    /** Who was told of the alert by escalation, and when it was sent. */
    told(alertId: number): { rule: string; channel: 'email' | 'webhook'; at: number }[] {
      return told.all(alertId) as { rule: string; channel: 'email' | 'webhook'; at: number }[];
    },
    insert(alert: Omit<StoredAlert, 'id'>): StoredAlert {
      const id = Number(insert.run(alertParams(alert)).lastInsertRowid);
      return { ...alert, id };
    },
    update(alert: StoredAlert): void {
      update.run({ ...alertParams(alert), id: alert.id });
    },
    get(id: number): StoredAlert | null {
      const row = byId.get(id) as AlertRow | undefined;
      return row ? toAlert(row) : null;
    },
    unresolved(): StoredAlert[] {
      return (unresolved.all() as AlertRow[]).map(toAlert);
    },
    list(q: AlertQuery): StoredAlert[] {
      return (
        list.all({
          state: q.state ?? null,
          lineId: q.lineId ?? null,
          from: q.from ?? 0,
          to: q.to ?? Number.MAX_SAFE_INTEGER,
          limit: q.limit,
        }) as AlertRow[]
      ).map(toAlert);
    },
    /** The line's alerts that were open at some time in [from, to): opened in it, or still unresolved when it began. */
    overlapping(lineId: number, from: number, to: number): StoredAlert[] {
      return (overlapping.all({ lineId, from, to }) as AlertRow[]).map(toAlert);
    },
    insertSignal(s: Omit<StoredSignal, 'id'>): StoredSignal {
      const id = Number(
        insertSignal.run({
          alertId: s.alertId,
          checkId: s.checkId,
          rule: s.rule,
          severity: s.severity,
          direction: s.direction,
          at: s.at,
          sizeUnit: s.size?.unit ?? null,
          sizeSigma: s.size?.sigma ?? null,
          onsetCheckId: s.onsetCheckId,
        }).lastInsertRowid,
      );
      return { ...s, id };
    },
    alertIdsForCheck(checkId: number): number[] {
      return (alertsOfCheck.all(checkId) as { id: number }[]).map((r) => r.id);
    },
    signalsOf(alertId: number): StoredSignal[] {
      return (signalsOf.all(alertId) as SignalRow[]).map(toSignal);
    },
    /** Up to `limit` of an alert's signals older than signal `before` (all when null), oldest first. */
    signalPage(alertId: number, before: number | null, limit: number): StoredSignal[] {
      return (signalPage.all({ alertId, before: before ?? Number.MAX_SAFE_INTEGER, limit }) as SignalRow[]).map(toSignal);
    },
    /** The signals one check raised, over every alert. */
    signalsOfCheck(checkId: number): StoredSignal[] {
      return (signalsOfCheck.all(checkId) as SignalRow[]).map(toSignal);
    },
  };
}

export type AlertRepository = ReturnType<typeof createAlertRepository>;
