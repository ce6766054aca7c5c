import { z } from 'zod';
import { instant } from '../shared/contract.js';
import { freeText, idParam } from '../shared/schemas.js';

/** What the escalation routes take and answer (docs/api.md, "Escalation"). */

const channel = z.enum(['email', 'webhook']);
const severity = z.enum(['watch', 'act']);
const email = z.email('an e-mail address');
const webhookUrl = z.url({ protocol: /^https?$/, error: 'an http:// or https:// address' });

const ruleFields = {
  name: freeText(100),
  to: z.string().min(1).max(500),
  /** The lowest severity the rule takes: "watch" takes every alert, "act" only act-level ones. */
  severity,
  /** 0: at once when the alert opens; else when it is still open (not acknowledged) this many minutes after. */
  afterMinutes: z.number().int().min(0).max(7 * 24 * 60),
  lineIds: z.array(idParam).min(1).max(200).nullable().optional(),
};

/** The address must suit the channel: an e-mail address, or an http(s) URL for a webhook. */
function addressFits(value: { channel?: 'email' | 'webhook'; to?: string }, ctx: z.RefinementCtx) {
  if (value.to === undefined || value.channel === undefined) return;
  const parsed = (value.channel === 'email' ? email : webhookUrl).safeParse(value.to);
  if (!parsed.success) ctx.addIssue({ code: 'custom', path: ['to'], message: `must be ${value.channel === 'email' ? 'an e-mail address' : 'an http:// or https:// address'}` });
}

export const escalationBody = z.strictObject({ ...ruleFields, channel }).superRefine(addressFits);
export const escalationPatch = z.strictObject({ ...ruleFields, enabled: z.boolean() }).partial();
export const escalationParams = z.strictObject({ id: idParam });

export const escalationRuleSchema = z.strictObject({
  id: z.number(),
  name: z.string(),
  channel,
  to: z.string(),
  severity,
  afterMinutes: z.number(),
  lineIds: z.array(z.number()).nullable(),
  enabled: z.boolean(),
  disabledReason: z.string().nullable(),
  createdAt: instant,
});
export type EscalationRuleView = z.output<typeof escalationRuleSchema>;

/** A webhook's signing secret (whsec_…) is in the answer that creates the rule, and never again. */
export const escalationCreated = z.strictObject({ rule: escalationRuleSchema, secret: z.string().nullable() });
export const escalationAnswer = z.strictObject({ rule: escalationRuleSchema });
export const escalationListAnswer = z.strictObject({ rules: z.array(escalationRuleSchema) });

/** Who was told of an alert, when, by which rule, and how it went. */
export const notificationSchema = z.strictObject({
  rule: z.string(),
  ruleId: z.number(),
  channel,
  to: z.string(),
  event: z.enum(['alert.opened', 'alert.escalated', 'alert.acknowledged', 'alert.resolved']),
  at: instant,
  status: z.enum(['pending', 'sent', 'failed', 'gave-up']),
  attempts: z.number(),
  sentAt: instant.nullable(),
  lastError: z.string().nullable(),
});
export type NotificationView = z.output<typeof notificationSchema>;
