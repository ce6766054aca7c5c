import { z } from 'zod';

/** Path ids: a positive whole number. */
export const idParam = z.coerce.number().int().positive().max(Number.MAX_SAFE_INTEGER);

/** An ISO 8601 time with a zone (Z or ±hh:mm), turned into epoch milliseconds. */
export const isoTime = z.iso.datetime({ offset: true }).transform((s) => Date.parse(s));

/** Free text a person types: trimmed, not empty, bounded, no control characters but newlines and tabs. */
export const freeText = (max: number) =>
  z
    .string()
    .trim()
    .min(1, 'must not be empty')
    .max(max, `at most ${max} characters`)
    .refine((s) => !/[\u0000-\u0008\u000b\u000c\u000e-\u001f\u007f]/.test(s), 'contains control characters');

export const code = z
  .string()
  .trim()
  .min(1)
  .max(32)
  .regex(/^[A-Za-z0-9][A-Za-z0-9._-]*$/, 'letters, digits, dot, dash and underscore only');

export const rangeQuery = z.strictObject({
  from: isoTime.optional(),
  to: isoTime.optional(),
  limit: z.coerce.number().int().min(1).max(10_000).default(500),
});

/** A calendar day, YYYY-MM-DD, read in the plant's time zone. */
export const localDate = z.iso.date();

/**
 * A reporting range: ISO instants (from, to) or plant-local calendar days (fromDate, toDate, both
 * inclusive). Either pair, not both; neither gives the caller's default.
 */
export const reportRange = {
  from: isoTime.optional(),
  to: isoTime.optional(),
  fromDate: localDate.optional(),
  toDate: localDate.optional(),
};
