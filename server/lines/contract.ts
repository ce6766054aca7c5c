import { z } from 'zod';
import { productViewSchema } from '../products/contract.js';
import { instantOrNull, lineStatus } from '../shared/contract.js';
import { code, freeText, idParam } from '../shared/schemas.js';

/** What the lines routes take and answer. */

export const lineBody = z.strictObject({
  code,
  name: freeText(100),
  packsPerHour: z.number().positive().max(1_000_000).nullable().optional(),
});
export const linePatch = lineBody.partial();
export const lineParams = z.strictObject({ lineId: idParam });
export const changeoverBody = z.strictObject({ productId: idParam });

/** A line with the product it runs now, its run and how it stands. */
export const lineViewSchema = z.strictObject({
  id: z.number(),
  code: z.string(),
  name: z.string(),
  packsPerHour: z.number().nullable(),
  product: productViewSchema.nullable(),
  runId: z.number().nullable(),
  runStartedAt: instantOrNull,
  status: lineStatus,
});
export type LineView = z.output<typeof lineViewSchema>;

export const lineAnswer = z.strictObject({ line: lineViewSchema });
export const lineListAnswer = z.strictObject({ lines: z.array(lineViewSchema) });
