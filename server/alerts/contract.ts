import { notificationSchema } from '../escalations/contract.js';
import { z } from 'zod';
import { direction, instant, instantOrNull, severity, shiftSize } from '../shared/contract.js';
import { freeText, idParam, isoTime } from '../shared/schemas.js';
import { RULE_CATALOGUE, type RuleId } from '../stats/rules.js';

/** What the alerts routes take and answer, and the alert shapes a check's answer and the live feed carry. */

/** How many of an alert's signals a full view carries (the latest); `signalCount` says how many there are. */
export const SIGNALS_IN_VIEW = 50;

export const alertParams = z.strictObject({ id: idParam });
export const alertListQuery = z.strictObject({
  state: z.enum(['open', 'acknowledged', 'resolved']).optional(),
  lineId: idParam.optional(),
  from: isoTime.optional(),
  to: isoTime.optional(),
  limit: z.coerce.number().int().min(1).max(5000).default(500),
});
export const signalPageQuery = z.strictObject({
  before: idParam.optional(),
  limit: z.coerce.number().int().min(1).max(1000).default(SIGNALS_IN_VIEW),
});
export const acknowledgeBody = z.strictObject({ note: freeText(1000) });
export const resolveBody = z.strictObject({ cause: freeText(1000), action: freeText(1000) });
/** Shelving: for 1 minute to 8 hours, with the reason. */
export const shelveBody = z.strictObject({ minutes: z.number().int().min(1).max(480), reason: freeText(500) });

const ruleIds: [RuleId | 'check-overdue', ...(RuleId | 'check-overdue')[]] = ['check-overdue', ...RULE_CATALOGUE.map((r) => r.id)];
export const ruleId = z.enum(ruleIds);
const alertKind = z.enum(['mean-shift', 'spread-up', 'pack-below-t2', 'check-overdue']);

/** One rule firing on one check (or, for an overdue check, at one time). */
export const signalViewSchema = z.strictObject({
  rule: ruleId,
  words: z.string(),
  severity,
  checkId: z.number().nullable(),
  at: instant,
  direction: direction.nullable(),
  size: shiftSize.nullable(),
  onsetCheckId: z.number().nullable(),
});
export type SignalView = z.output<typeof signalViewSchema>;

/** A check's signals for one alert they joined, as the check's answer and its live message give them. */
export const checkSignalViewSchema = z.strictObject({
  alertId: z.number(),
  direction: direction.nullable(),
  size: shiftSize.nullable(),
  rules: z.array(z.strictObject({ rule: ruleId, severity, onsetCheckId: z.number().nullable() })),
});
export type CheckSignalView = z.output<typeof checkSignalViewSchema>;

/** An alert without its signal history or notes: its size does not grow with the alert. */
export const alertSummarySchema = z.strictObject({
  id: z.number(),
  lineId: z.number(),
  runId: z.number().nullable(),
  kind: alertKind,
  direction: direction.nullable(),
  severity,
  state: z.enum(['open', 'acknowledged', 'resolved']),
  rules: z.array(ruleId),
  ruleWords: z.array(z.string()),
  signalCount: z.number(),
  openedAt: instant,
  updatedAt: instant,
  onset: z.strictObject({ at: instantOrNull, checkId: z.number().nullable() }),
  changePoint: z.strictObject({ at: instantOrNull, checkId: z.number() }).nullable(),
  size: shiftSize.nullable(),
  latestCheckId: z.number().nullable(),
});
export type AlertSummary = z.output<typeof alertSummarySchema>;

/** An alert in full: the summary, who saw to it and why, and a page of its signals (oldest first). */
export const alertViewSchema = alertSummarySchema.extend({
  signals: z.array(signalViewSchema),
  acknowledged: z.strictObject({ by: z.string().nullable(), at: instant, note: z.string().nullable() }).nullable(),
  resolved: z.strictObject({ by: z.string().nullable(), at: instant, cause: z.string().nullable(), action: z.string().nullable() }).nullable(),
  /** The latest shelving (null if never shelved): shelved now while `until` lies ahead. */
  shelved: z.strictObject({ until: instant, by: z.string().nullable(), reason: z.string().nullable(), times: z.number() }).nullable(),
  /** Who escalation told of the alert, by which rule and channel, and when it was sent. */
  told: z.array(z.strictObject({ rule: z.string(), channel: z.enum(['email', 'webhook']), at: instant })),
});
export type AlertView = z.output<typeof alertViewSchema>;

export const alertAnswer = z.strictObject({ alert: alertViewSchema });
export const alertListAnswer = z.strictObject({ alerts: z.array(alertViewSchema) });
/** One alert with a page of its signals (`nextBefore` asks for the page before it; null: no more) and who was told of it. */
export const alertPageAnswer = z.strictObject({ alert: alertViewSchema, nextBefore: z.number().nullable(), notifications: z.array(notificationSchema) });
