import { z } from 'zod';
import { instant } from '../shared/contract.js';
import { patternProblem } from './reading.js';

/** What the scale routes take and answer: a line's scale profile and the reading of a sample line. */

const pattern = z
  .string()
  .min(1)
  .max(300)
  .superRefine((value, ctx) => {
    const problem = patternProblem(value);
    if (problem) ctx.addIssue({ code: 'custom', message: problem });
  });

const unstablePattern = z
  .string()
  .min(1)
  .max(300)
  .superRefine((value, ctx) => {
    try {
      new RegExp(value);
    } catch (err) {
      ctx.addIssue({ code: 'custom', message: `not a regular expression: ${(err as Error).message}` });
    }
  });

export const scaleProfileBody = z.strictObject({
  /** `web-serial`: the entry tablet reads the scale; `bridge`: a PC next to it runs the scale bridge. */
  connection: z.enum(['web-serial', 'bridge'], { error: 'web-serial or bridge' }),
  baudRate: z.number().int().min(110).max(921_600).default(9600),
  dataBits: z.union([z.literal(7), z.literal(8)], { error: '7 or 8' }).default(8),
  parity: z.enum(['none', 'even', 'odd'], { error: 'none, even or odd' }).default('none'),
  stopBits: z.union([z.literal(1), z.literal(2)], { error: '1 or 2' }).default(1),
  lineEnding: z.enum(['cr', 'lf', 'crlf'], { error: 'cr, lf or crlf' }).default('crlf'),
  /** A regular expression with a named group `weight` (and `unit`); null: the first signed decimal number. */
  pattern: pattern.nullable().default(null),
  /** Readings matching this are the scale still settling: ignored. */
  unstablePattern: unstablePattern.nullable().default(null),
  defaultUnit: z.enum(['g', 'kg'], { error: 'g or kg' }).default('g'),
  /** Send the check when its last pack is read (true) or wait for the operator's Enter (false). */
  sendOnLast: z.boolean().default(true),
});

export const scaleProfileSchema = z.strictObject({
  connection: z.enum(['web-serial', 'bridge']),
  baudRate: z.number(),
  dataBits: z.number(),
  parity: z.enum(['none', 'even', 'odd']),
  stopBits: z.number(),
  lineEnding: z.enum(['cr', 'lf', 'crlf']),
  pattern: z.string().nullable(),
  unstablePattern: z.string().nullable(),
  defaultUnit: z.enum(['g', 'kg']),
  sendOnLast: z.boolean(),
  /** False while the line has no profile of its own (these are the defaults). */
  configured: z.boolean(),
  updatedAt: instant.nullable(),
  updatedBy: z.string().nullable(),
});
export type ScaleProfileView = z.output<typeof scaleProfileSchema>;

export const scaleAnswer = z.strictObject({ scale: scaleProfileSchema });

/** A sample line read by a profile (the set-up's test box): the profile's fields may be tried before saving. */
export const scaleTryBody = z.strictObject({
  sample: z.string().max(500),
  pattern: pattern.nullable().optional(),
  unstablePattern: unstablePattern.nullable().optional(),
  defaultUnit: z.enum(['g', 'kg']).optional(),
});

export const readingSchema = z.union([
  z.strictObject({ kind: z.literal('weight'), value: z.number(), unit: z.enum(['g', 'kg']), inProductUnit: z.number().nullable() }),
  z.strictObject({ kind: z.literal('unstable') }),
  z.strictObject({ kind: z.literal('empty'), value: z.number(), unit: z.enum(['g', 'kg']) }),
  z.strictObject({ kind: z.literal('unreadable'), reason: z.string() }),
]);
export const scaleTryAnswer = z.strictObject({ reading: readingSchema });

/** Each line the caller may post checks to, with what a scale bridge needs to read and collect for it. */
export const scaleLinesAnswer = z.strictObject({
  lines: z.array(
    z.strictObject({
      id: z.number(),
      code: z.string(),
      name: z.string(),
      product: z.strictObject({ code: z.string(), unit: z.enum(['g', 'kg']), subgroupSize: z.number(), samplingMinutes: z.number(), entryBasis: z.enum(['net', 'gross']) }).nullable(),
      scale: scaleProfileSchema,
    }),
  ),
});
