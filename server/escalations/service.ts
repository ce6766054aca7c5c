import { randomBytes, randomUUID } from 'node:crypto';
import { Webhook } from 'standardwebhooks';
import type { StoredAlert } from '../alerts/repository.js';
import type { Clock } from '../clock.js';
import type { Db } from '../db/database.js';
import { notFound } from '../errors.js';
import type { Line } from '../lines/repository.js';
import type { Repositories } from '../monitor/monitor.js';
import { alertSummary } from '../monitor/views.js';
import type { Deliverers, Mail } from './delivery.js';
import type { EscalationRepository, EscalationRule, EventType, Notification, RuleFields } from './repository.js';

const MINUTE = 60_000;
/** Retries of one notification stop this long after it was stored (the delivery window). */
export const RETRY_WINDOW_MS = 24 * 60 * MINUTE;
const FIRST_RETRY_MS = 30_000;
const LONGEST_WAIT_MS = 60 * MINUTE;

/** The wait before attempt a + 1: 30 s doubling, at most an hour (exponential backoff). */
export const retryDelay = (attempts: number) => Math.min(FIRST_RETRY_MS * 2 ** Math.max(0, attempts - 1), LONGEST_WAIT_MS);

const KIND_WORDS: Record<string, string> = { 'mean-shift': 'mean shift', 'spread-up': 'spread up', 'pack-below-t2': 'pack below T2', 'check-overdue': 'check overdue' };

export interface EscalationOptions {
  db: Db;
  clock: Clock;
  repos: Pick<Repositories, 'alerts' | 'lines' | 'audit' | 'products'> & { escalations: EscalationRepository };
  deliverers: Deliverers;
  /** Where the pages are reached from a phone or a mail client, for the link to the board. */
  publicUrl: string;
  timeZone: string;
  maxInFlight: number;
  /** Called after a notification about an alert was sent, so the boards can show who was told. */
  onSent?: (alertId: number) => void;
  log: (message: string, err?: unknown) => void;
  /** Resolves once the writer's changes are on the disk: nobody is told of an alert a power cut could take back. */
  durable?: () => Promise<void>;
}

/**
 * Escalation: rules say who is told of an alert still open after so many minutes. Deciding is a
 * transaction that stores the notification (the outbox); sending happens after the commit, retried
 * with the same message id until it is sent, refused or the window closes.
 */
export function createEscalationService(o: EscalationOptions) {
  const { db, clock, repos } = o;
  const esc = repos.escalations;
  const inFlight = new Set<number>();

  function event(type: EventType, alert: StoredAlert, line: Line, at: number): string {
    return JSON.stringify({ type, timestamp: new Date(at).toISOString(), data: { alert: alertSummary(alert), line: { id: line.id, code: line.code, name: line.name } } });
  }

  function mailOf(n: Notification): Mail {
    const body = JSON.parse(n.body) as { type: EventType; data: { alert: ReturnType<typeof alertSummary>; line: { id: number; code: string; name: string } } };
    const a = body.data.alert;
    const l = body.data.line;
    const what = `${KIND_WORDS[a.kind] ?? a.kind}${a.direction ? ` ${a.direction}` : ''}`;
    const when = (iso: string | null) => (iso ? new Intl.DateTimeFormat('en-GB', { timeZone: o.timeZone, dateStyle: 'medium', timeStyle: 'short' }).format(new Date(iso)) : 'unknown');
    const run = a.runId === null ? null : repos.lines.run(a.runId);
    const unit = (run && repos.products.get(run.productId)?.unit) ?? '';
    const size = a.size ? `${a.size.unit > 0 ? '+' : ''}${a.size.unit.toPrecision(3)} ${unit}${a.size.sigma === null ? '' : ` (${a.size.sigma.toFixed(1)}σ of one pack)`}` : 'not measured';
    const link = `${o.publicUrl.replace(/\/$/, '')}/board?line=${l.id}`;
    const openMinutes = Math.round((n.createdAt - Date.parse(a.openedAt)) / 60_000);
    const standing = body.type === 'alert.opened' ? 'just raised' : a.state === 'open' ? `not acknowledged after ${openMinutes} min` : `now ${a.state}`;
    const lines = [
      `${a.severity === 'act' ? 'Act' : 'Watch'}: ${what} on ${l.code} ${l.name}, ${standing}.`,
      '',
      `Line: ${l.code} ${l.name}`,
      `Alert: ${what} (${a.severity}), alert ${a.id}`,
      `Rules: ${a.ruleWords.join(', ') || '—'}`,
      `Size: ${size}`,
      `Began about: ${when(a.onset.at)}`,
      `Raised: ${when(a.openedAt)}`,
      `Open it: ${link}`,
      '',
      `You are told by the escalation rule "${n.ruleName}". Acknowledging the alert stops further escalation.`,
    ];
    const esc = (s: string) => s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c] as string);
    const html = `<p><strong>${esc(lines[0] as string)}</strong></p><table>${lines
      .slice(2, 8)
      .map((row) => {
        const [k, ...v] = row.split(': ');
        return `<tr><th align="left">${esc(k as string)}</th><td>${esc(v.join(': '))}</td></tr>`;
      })
      .join('')}</table><p><a href="${esc(link)}">Open the line on the board</a></p><p>${esc(lines[10] as string)}</p>`;
    return { to: n.target, subject: `[Heft] ${a.severity}: ${what} on ${l.code} ${l.name}`, text: lines.join('\n'), html };
  }

  async function attempt(n: Notification, rule: EscalationRule | null) {
    if (n.channel === 'email') return o.deliverers.email(mailOf(n));
    if (!rule?.secret) return { ok: false as const, retry: false, error: 'the rule is gone' };
    // the receiver checks the timestamp against its own clock, so it is the real time of this attempt
    const at = new Date();
    const signature = new Webhook(rule.secret).sign(n.messageId, at, n.body);
    return o.deliverers.webhook(n.target, { 'webhook-id': n.messageId, 'webhook-timestamp': String(Math.floor(at.getTime() / 1000)), 'webhook-signature': signature }, n.body);
  }

  async function deliver(n: Notification): Promise<void> {
    const rule = esc.getRule(n.ruleId);
    const result = await attempt(n, rule).catch((err: unknown) => ({ ok: false as const, retry: true, error: String(err) }));
    const now = clock.now();
    db.transaction(() => {
      if (result.ok) {
        esc.settle(n.id, { status: 'sent', next: now, error: null, sentAt: now });
        return;
      }
      const next = now + retryDelay(n.attempts + 1);
      const status = !result.retry ? 'failed' : next > n.createdAt + RETRY_WINDOW_MS ? 'gave-up' : 'pending';
      esc.settle(n.id, { status, next, error: result.error, sentAt: null });
      if ('gone' in result && result.gone && rule) {
        esc.disableRule(rule.id, `the receiver answered 410 Gone on ${new Date(now).toISOString()}`, now);
        repos.audit.record({ at: now, actor: 'heft', action: 'escalation.disable', entity: 'escalation', entityId: rule.id, after: { reason: '410 Gone' } });
      }
    }).immediate();
    if (result.ok && (n.eventType === 'alert.opened' || n.eventType === 'alert.escalated')) o.onSent?.(n.alertId);
  }

  return {
    createRule(fields: RuleFields, actor: string): { rule: EscalationRule; secret: string | null } {
      const now = clock.now();
      const secret = fields.channel === 'webhook' ? `whsec_${randomBytes(24).toString('base64')}` : null;
      const rule = db.transaction(() => {
        const created = esc.createRule(fields, secret, now);
        repos.audit.record({ at: now, actor, action: 'escalation.create', entity: 'escalation', entityId: created.id, after: fields });
        return created;
      }).immediate();
      return { rule, secret };
    },

    updateRule(id: number, change: Partial<RuleFields> & { enabled?: boolean }, actor: string): EscalationRule {
      const before = esc.getRule(id);
      if (!before) throw notFound(`escalation rule ${id}`);
      const now = clock.now();
      const enabled = change.enabled ?? before.enabled;
      return db.transaction(() => {
        const after = esc.updateRule(
          id,
          {
            name: change.name ?? before.name,
            channel: before.channel,
            target: change.target ?? before.target,
            severity: change.severity ?? before.severity,
            afterMinutes: change.afterMinutes ?? before.afterMinutes,
            lineIds: change.lineIds === undefined ? before.lineIds : change.lineIds,
            enabled,
            disabledReason: enabled ? null : (before.disabledReason ?? `disabled by ${actor}`),
          },
          now,
        );
        repos.audit.record({ at: now, actor, action: 'escalation.update', entity: 'escalation', entityId: id, before: { ...before, secret: undefined }, after: change });
        return after;
      }).immediate();
    },

    deleteRule(id: number, actor: string): void {
      const before = esc.getRule(id);
      if (!before) throw notFound(`escalation rule ${id}`);
      const now = clock.now();
      db.transaction(() => {
        esc.deleteRule(id);
        repos.audit.record({ at: now, actor, action: 'escalation.delete', entity: 'escalation', entityId: id, before: { ...before, secret: undefined } });
      }).immediate();
    },

    rules: () => esc.rules(),
    getRule: (id: number) => esc.getRule(id),
    notificationsOf: (alertId: number) => esc.ofAlert(alertId),

    /** Stores a notification for every rule whose time has come for an open alert, and a follow-up to each webhook that told of one since acknowledged or resolved. */
    sweep(): number {
      if (!esc.anyEnabled()) return 0;
      const now = clock.now();
      return db.transaction(() => {
        let stored = 0;
        const store = (alertId: number, ruleId: number, round: number, type: EventType) => {
          const alert = repos.alerts.get(alertId);
          const rule = esc.getRule(ruleId);
          const line = alert ? repos.lines.get(alert.lineId) : null;
          if (!alert || !rule || !line) return;
          const eventType = type === 'alert.opened' && rule.afterMinutes > 0 ? 'alert.escalated' : type;
          const body = event(eventType, alert, line, now);
          if (esc.enqueue({ alertId, ruleId, ruleName: rule.name, channel: rule.channel, target: rule.target, eventType, round, messageId: `msg_${randomUUID()}`, body }, now)) stored += 1;
        };
        for (const d of esc.due(now)) store(d.alertId, d.ruleId, d.round, d.round > 0 ? 'alert.escalated' : 'alert.opened');
        for (const f of esc.followUps()) store(f.alertId, f.ruleId, f.round, f.eventType);
        return stored;
      }).immediate();
    },

    /** Sends what is due (never more than `maxInFlight` at once); resolves when this round's attempts are settled. */
    async deliverDue(): Promise<number> {
      const room = o.maxInFlight - inFlight.size;
      if (room <= 0) return 0;
      const due = esc.pending(clock.now(), room + inFlight.size).filter((n) => !inFlight.has(n.id)).slice(0, room);
      for (const n of due) inFlight.add(n.id);
      const flushed = due.length > 0 && o.durable ? o.durable() : Promise.resolve();
      await Promise.all(
        due.map(async (n) => {
          try {
            await flushed;
            await deliver(n);
          } catch (err) {
            o.log('a notification could not be settled', err);
          } finally {
            inFlight.delete(n.id);
          }
        }),
      );
      return due.length;
    },
  };
}

export type EscalationService = ReturnType<typeof createEscalationService>;
