import type { Db } from '../db/database.js';

export type Channel = 'email' | 'webhook';
export type EventType = 'alert.opened' | 'alert.escalated' | 'alert.acknowledged' | 'alert.resolved';
export type DeliveryStatus = 'pending' | 'sent' | 'failed' | 'gave-up';

export interface EscalationRule {
  id: number;
  name: string;
  channel: Channel;
  target: string;
  severity: 'watch' | 'act';
  afterMinutes: number;
  lineIds: number[] | null;
  secret: string | null;
  enabled: boolean;
  disabledReason: string | null;
  createdAt: number;
  updatedAt: number;
}

export interface Notification {
  id: number;
  alertId: number;
  ruleId: number;
  ruleName: string;
  channel: Channel;
  target: string;
  eventType: EventType;
  messageId: string;
  body: string;
  createdAt: number;
  status: DeliveryStatus;
  attempts: number;
  nextAttemptAt: number;
  lastError: string | null;
  sentAt: number | null;
}

interface RuleRow {
  id: number;
  name: string;
  channel: Channel;
  target: string;
  severity: 'watch' | 'act';
  after_minutes: number;
  line_ids: string | null;
  secret: string | null;
  enabled: number;
  disabled_reason: string | null;
  created_at: number;
  updated_at: number;
}

interface NotificationRow {
  id: number;
  alert_id: number;
  rule_id: number;
  rule_name: string;
  channel: Channel;
  target: string;
  event_type: EventType;
  message_id: string;
  body: string;
  created_at: number;
  status: DeliveryStatus;
  attempts: number;
  next_attempt_at: number;
  last_error: string | null;
  sent_at: number | null;
}

const toRule = (r: RuleRow): EscalationRule => ({
  id: r.id,
  name: r.name,
  channel: r.channel,
  target: r.target,
  severity: r.severity,
  afterMinutes: r.after_minutes,
  lineIds: r.line_ids === null ? null : (JSON.parse(r.line_ids) as number[]),
  secret: r.secret,
  enabled: r.enabled === 1,
  disabledReason: r.disabled_reason,
  createdAt: r.created_at,
  updatedAt: r.updated_at,
});

const toNotification = (r: NotificationRow): Notification => ({
  id: r.id,
  alertId: r.alert_id,
  ruleId: r.rule_id,
  ruleName: r.rule_name,
  channel: r.channel,
  target: r.target,
  eventType: r.event_type,
  messageId: r.message_id,
  body: r.body,
  createdAt: r.created_at,
  status: r.status,
  attempts: r.attempts,
  nextAttemptAt: r.next_attempt_at,
  lastError: r.last_error,
  sentAt: r.sent_at,
});

export type RuleFields = Pick<EscalationRule, 'name' | 'channel' | 'target' | 'severity' | 'afterMinutes' | 'lineIds'>;

/** Alerts whose time has come under a rule: still open (not acknowledged), of its severity or higher, on its lines, and not yet told by it. */
/**
 * Alerts whose time has come under a rule: still open (not acknowledged) and not on the shelf, of the
 * rule's severity or higher, on its lines, and not yet told by it in this round. An alert back from the
 * shelf starts a new round whose delays count from its return.
 */
const DUE_SQL = `
  SELECT alertId, ruleId, round FROM (
    SELECT a.id AS alertId, r.id AS ruleId, r.after_minutes AS afterMinutes, a.shelve_count AS round,
      CASE WHEN a.shelved_until IS NULL THEN a.opened_at ELSE a.shelved_until END AS since, r.created_at AS ruleMade
    FROM alerts a JOIN escalation_rules r ON r.enabled = 1
    WHERE a.state = 'open' AND (a.shelved_until IS NULL OR a.shelved_until <= @now)
      AND (r.severity = 'watch' OR a.severity = 'act')
      AND (r.line_ids IS NULL OR a.line_id IN (SELECT value FROM json_each(r.line_ids)))
      AND NOT EXISTS (SELECT 1 FROM notifications n WHERE n.alert_id = a.id AND n.rule_id = r.id AND n.round = a.shelve_count
        AND n.event_type IN ('alert.opened', 'alert.escalated'))
  ) WHERE since + afterMinutes * 60000 <= @now AND since + afterMinutes * 60000 >= ruleMade
  ORDER BY alertId, afterMinutes, ruleId`;

/** Webhooks that told of an alert which has since been acknowledged or resolved, and not yet of that. */
const FOLLOW_UP_SQL = `
  SELECT DISTINCT a.id AS alertId, r.id AS ruleId, a.shelve_count AS round, CASE WHEN a.state = 'resolved' THEN 'alert.resolved' ELSE 'alert.acknowledged' END AS eventType
  FROM notifications n JOIN alerts a ON a.id = n.alert_id JOIN escalation_rules r ON r.id = n.rule_id AND r.enabled = 1 AND r.channel = 'webhook'
  WHERE n.event_type IN ('alert.opened', 'alert.escalated') AND a.state IN ('acknowledged', 'resolved')
    AND NOT EXISTS (SELECT 1 FROM notifications m WHERE m.alert_id = a.id AND m.rule_id = r.id
      AND m.event_type = CASE WHEN a.state = 'resolved' THEN 'alert.resolved' ELSE 'alert.acknowledged' END)`;

export function createEscalationRepository(db: Db) {
  const insertRule = db.prepare(
    `INSERT INTO escalation_rules (name, channel, target, severity, after_minutes, line_ids, secret, created_at, updated_at)
     VALUES (@name, @channel, @target, @severity, @afterMinutes, @lineIds, @secret, @at, @at)`,
  );
  const updateRule = db.prepare(
    `UPDATE escalation_rules SET name = @name, target = @target, severity = @severity, after_minutes = @afterMinutes, line_ids = @lineIds,
       enabled = @enabled, disabled_reason = @disabledReason, updated_at = @at WHERE id = @id`,
  );
  const ruleById = db.prepare('SELECT * FROM escalation_rules WHERE id = ?');
  const rules = db.prepare('SELECT * FROM escalation_rules ORDER BY after_minutes, id');
  const deleteRule = db.prepare('DELETE FROM escalation_rules WHERE id = ?');
  const disable = db.prepare('UPDATE escalation_rules SET enabled = 0, disabled_reason = @reason, updated_at = @at WHERE id = @id');
  const due = db.prepare(DUE_SQL);
  const enabledRules = db.prepare('SELECT COUNT(*) AS n FROM escalation_rules WHERE enabled = 1');
  const followUps = db.prepare(FOLLOW_UP_SQL);
  const insertNotification = db.prepare(
    `INSERT OR IGNORE INTO notifications (alert_id, rule_id, rule_name, channel, target, event_type, round, message_id, body, created_at, next_attempt_at)
     VALUES (@alertId, @ruleId, @ruleName, @channel, @target, @eventType, @round, @messageId, @body, @at, @at)`,
  );
  const pending = db.prepare("SELECT * FROM notifications WHERE status = 'pending' AND next_attempt_at <= ? ORDER BY id LIMIT ?");
  const settle = db.prepare(
    'UPDATE notifications SET status = @status, attempts = attempts + 1, next_attempt_at = @next, last_error = @error, sent_at = @sentAt WHERE id = @id',
  );
  const ofAlert = db.prepare('SELECT * FROM notifications WHERE alert_id = ? ORDER BY id');
  const rows = (fields: RuleFields, at: number) => ({ ...fields, lineIds: fields.lineIds === null ? null : JSON.stringify(fields.lineIds), at });
  return {
    createRule(fields: RuleFields, secret: string | null, at: number): EscalationRule {
      const id = Number(insertRule.run({ ...rows(fields, at), secret }).lastInsertRowid);
      return toRule(ruleById.get(id) as RuleRow);
    },
    updateRule(id: number, fields: RuleFields & { enabled: boolean; disabledReason: string | null }, at: number): EscalationRule {
      updateRule.run({ ...rows(fields, at), id, enabled: fields.enabled ? 1 : 0, disabledReason: fields.disabledReason });
      return toRule(ruleById.get(id) as RuleRow);
    },
    getRule(id: number): EscalationRule | null {
      const row = ruleById.get(id) as RuleRow | undefined;
      return row ? toRule(row) : null;
    },
    rules(): EscalationRule[] {
      return (rules.all() as RuleRow[]).map(toRule);
    },
    deleteRule(id: number): void {
      deleteRule.run(id);
    },
    disableRule(id: number, reason: string, at: number): void {
      disable.run({ id, reason, at });
    },
    /** Whether any rule is switched on: without one there is nothing to decide. */
    anyEnabled(): boolean {
      return (enabledRules.get() as { n: number }).n > 0;
    },
    due(now: number): { alertId: number; ruleId: number; round: number }[] {
      return due.all({ now }) as { alertId: number; ruleId: number; round: number }[];
    },
    followUps(): { alertId: number; ruleId: number; round: number; eventType: EventType }[] {
      return followUps.all() as { alertId: number; ruleId: number; round: number; eventType: EventType }[];
    },
    enqueue(n: { alertId: number; ruleId: number; ruleName: string; channel: Channel; target: string; eventType: EventType; round: number; messageId: string; body: string }, at: number): boolean {
      return insertNotification.run({ ...n, at }).changes === 1;
    },
    pending(now: number, limit: number): Notification[] {
      return (pending.all(now, limit) as NotificationRow[]).map(toNotification);
    },
    settle(id: number, outcome: { status: DeliveryStatus; next: number; error: string | null; sentAt: number | null }): void {
      settle.run({ id, ...outcome });
    },
    ofAlert(alertId: number): Notification[] {
      return (ofAlert.all(alertId) as NotificationRow[]).map(toNotification);
    },
  };
}

export type EscalationRepository = ReturnType<typeof createEscalationRepository>;
