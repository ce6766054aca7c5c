import { z } from 'zod';
import { productViewSchema } from '../products/contract.js';
import { instantOrNull, lineStatus, lineStopSchema } from '../shared/contract.js';
import { PERSON_STOP_REASONS } from './stops-repository.js';
import { code, freeText, idParam } from '../shared/schemas.js';

/** What the lines routes take and answer. */

export const lineBody = z.strictObject({
  code,
  name: freeText(100),
  packsPerHour: z.number().positive().max(1_000_000).nullable().optional(),
  /** Runs round the clock: the plant calendar never stops it. */
  continuous: z.boolean().optional(),
});
export const linePatch = lineBody.partial();
export const lineParams = z.strictObject({ lineId: idParam });
export const changeoverBody = z.strictObject({ productId: idParam });
export const stopBody = z.strictObject({
  reason: z.enum(PERSON_STOP_REASONS, { error: `one of ${PERSON_STOP_REASONS.join(', ')}` }),
  note: freeText(200).optional(),
});

/** A line with the product it runs now, its run and how it stands. */
export const lineViewSchema = z.strictObject({
  id: z.number(),
  code: z.string(),
  name: z.string(),
  packsPerHour: z.number().nullable(),
  continuous: z.boolean(),
  product: productViewSchema.nullable(),
  runId: z.number().nullable(),
  runStartedAt: instantOrNull,
  status: lineStatus,
  /** False while the line stands still (a break, cleaning, …): no check falls due then. */
  running: z.boolean(),
  stop: lineStopSchema.nullable(),
});
export type LineView = z.output<typeof lineViewSchema>;

export const lineAnswer = z.strictObject({ line: lineViewSchema });
export const lineListAnswer = z.strictObject({ lines: z.array(lineViewSchema) });
