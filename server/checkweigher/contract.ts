import { z } from 'zod';
import { alertSummarySchema } from '../alerts/contract.js';
import { instant } from '../shared/contract.js';
import { isoTime } from '../shared/schemas.js';

/** What an automatic checkweigher posts: every pack it weighed, in order, and what it is told back. */
export const packsBody = z.strictObject({
  packs: z
    .array(z.strictObject({ weight: z.number().finite().positive().max(1_000_000), at: isoTime.optional() }), 'a list of packs')
    .min(1, 'at least one pack')
    .max(2000, 'at most 2,000 packs per post'),
  clientId: z.uuid('a UUID made by the client'),
});

export const packsAnswer = z.strictObject({
  /** False when this clientId was taken before: nothing new was stored. */
  created: z.boolean(),
  /** The checks these packs completed, oldest first. */
  checks: z.array(z.strictObject({ id: z.number(), n: z.number(), mean: z.number(), takenAt: instant })),
  /** Each alert those checks touched, as it stands after the last of them. */
  alerts: z.array(alertSummarySchema),
  /** Packs on the line now waiting for the rest of their check. */
  waiting: z.number(),
});
export type PacksAnswer = z.output<typeof packsAnswer>;
