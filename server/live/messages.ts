import { z } from 'zod';
import { alertSummarySchema, alertViewSchema, checkSignalViewSchema } from '../alerts/contract.js';
import { checkViewSchema } from '../checks/contract.js';
import { instant } from '../shared/contract.js';

/**
 * A live message before it is numbered. A check's message carries the check and its own signals, and
 * the alerts it touched as summaries; an acknowledgement or resolution carries the alert in full.
 */
export const liveEventBodySchema = z.discriminatedUnion('type', [
  z.strictObject({ type: z.literal('check'), lineId: z.number(), check: checkViewSchema, signals: z.array(checkSignalViewSchema) }),
  z.strictObject({ type: z.enum(['alert-opened', 'alert-updated']), lineId: z.number(), alert: z.union([alertViewSchema, alertSummarySchema]) }),
  z.strictObject({ type: z.literal('line-status'), lineId: z.number(), reason: z.string() }),
]);
export type LiveEventBody = z.output<typeof liveEventBodySchema>;

/** A live message as stored and sent: numbered by seq, stamped with its time. */
export type LiveEvent = LiveEventBody & { seq: number; at: string };

/** What the live feed sends: a numbered message, or a word from the feed itself about the connection. */
export const liveMessageSchema = z.union([
  z.intersection(liveEventBodySchema, z.strictObject({ seq: z.number(), at: instant })),
  z.strictObject({ type: z.literal('hello'), seq: z.number(), at: instant }),
  z.strictObject({ type: z.literal('resumed'), seq: z.number(), at: instant }),
  z.strictObject({ type: z.literal('resync'), seq: z.number(), at: instant, message: z.string() }),
  z.strictObject({ type: z.literal('error'), seq: z.number(), at: instant, message: z.string() }),
]);
export type LiveMessage = z.output<typeof liveMessageSchema>;
