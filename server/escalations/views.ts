import { toIso } from '../clock.js';
import type { EscalationRuleView, NotificationView } from './contract.js';
import type { EscalationRule, Notification } from './repository.js';

/** A rule as the API shows it: never its secret. */
export function ruleView(r: EscalationRule): EscalationRuleView {
  return { id: r.id, name: r.name, channel: r.channel, to: r.target, severity: r.severity, afterMinutes: r.afterMinutes, lineIds: r.lineIds, enabled: r.enabled, disabledReason: r.disabledReason, createdAt: toIso(r.createdAt) as string };
}

export function notificationView(n: Notification): NotificationView {
  return {
    rule: n.ruleName,
    ruleId: n.ruleId,
    channel: n.channel,
    to: n.target,
    event: n.eventType,
    at: toIso(n.createdAt) as string,
    status: n.status,
    attempts: n.attempts,
    sentAt: toIso(n.sentAt),
    lastError: n.lastError,
  };
}
