import { z } from 'zod';
import { instant } from '../shared/contract.js';
import { isoTime } from '../shared/schemas.js';

/** What the audit route takes and answers. */

export const auditQuery = z.strictObject({
  from: isoTime.optional(),
  to: isoTime.optional(),
  entity: z.enum(['line', 'product', 'alert', 'user', 'token', 'check', 'sign-in']).optional(),
  limit: z.coerce.number().int().min(1).max(5000).default(500),
});

/** One change as the trail keeps it: who, when, what, and the thing before and after (as stored then). */
export const auditEntrySchema = z.strictObject({
  id: z.number(),
  at: instant,
  actor: z.string(),
  action: z.string(),
  entity: z.string(),
  entityId: z.string().nullable(),
  before: z.unknown(),
  after: z.unknown(),
});

export const auditAnswer = z.strictObject({ entries: z.array(auditEntrySchema) });
