import { z } from 'zod';
import { instant, severity } from '../shared/contract.js';
import { ruleId } from '../alerts/contract.js';

/** What the health, plant and rule catalogue routes answer. */

/** The newest backup the server knows of (null: no backup folder set, or none taken yet). */
export const backupSchema = z.strictObject({ file: z.string(), at: instant, bytes: z.number(), checks: z.number().nullable() });
export const healthAnswer = z.strictObject({ status: z.literal('ok'), version: z.string(), backup: backupSchema.nullable() });
export const plantSchema = z.strictObject({ name: z.string(), timeZone: z.string() });
export type Plant = z.output<typeof plantSchema>;
export const plantAnswer = z.strictObject({ plant: plantSchema });
/** A rule as the catalogue offers it, with the severity and on/off a product gets unless it says otherwise. */
export const ruleDescriptionSchema = z.strictObject({ id: ruleId, words: z.string(), defaultSeverity: severity, defaultEnabled: z.boolean() });
/** The detectors' design and run length a product gets unless it says otherwise. */
export const ruleDefaultsSchema = z.strictObject({
  runLength: z.union([z.literal(8), z.literal(9)]),
  ewma: z.strictObject({ lambda: z.number(), L: z.number() }),
  cusum: z.strictObject({ k: z.number(), h: z.number() }),
});
export const rulesAnswer = z.strictObject({ rules: z.array(ruleDescriptionSchema), defaults: ruleDefaultsSchema });
