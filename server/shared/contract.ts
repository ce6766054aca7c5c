import { STOP_REASONS } from '../lines/stops-repository.js';
import { z } from 'zod';

/**
 * Pieces the response schemas share. Every response schema is strict: a field the server sends and
 * the contract does not name fails the answer (and the contract test), so the two cannot drift.
 */

/** An instant as the API writes it: ISO 8601 in UTC. */
export const instant = z.iso.datetime();
export const instantOrNull = instant.nullable();
/** A two-sided interval [low, high]. */
export const interval = z.tuple([z.number(), z.number()]);
export const unit = z.enum(['g', 'kg']);
export const severity = z.enum(['act', 'watch']);
export const direction = z.enum(['up', 'down']);
export const lineStatus = z.enum(['steady', 'watch', 'act', 'idle']);
/** How far a shift moved the process: in the product's unit and in σ of a pack (null without a σ). */
export const shiftSize = z.strictObject({ unit: z.number(), sigma: z.number().nullable() });
/** Why a figure is missing, by figure. */
export const unavailable = z.strictObject({
  sd: z.string().optional(),
  se: z.string().optional(),
  t: z.string().optional(),
  p: z.string().optional(),
  ci95: z.string().optional(),
});
/** Student's t on a sample's mean against the target, with its standard error and 95 % interval. */
export const inference = {
  se: z.number().nullable(),
  t: z.number().nullable(),
  df: z.number().nullable(),
  p: z.number().nullable(),
  ci95: interval.nullable(),
  unavailable,
};
export const sampleSummary = z.strictObject({ n: z.number(), mean: z.number(), sd: z.number().nullable(), range: z.number(), ...inference });

export const meanChartLimits = z.strictObject({
  centre: z.number(),
  lcl: z.number(),
  ucl: z.number(),
  zone1: interval,
  zone2: interval,
  sigmaOfMean: z.number(),
});
export const spreadChartLimits = z.strictObject({ chart: z.enum(['S', 'R', 'MR']), centre: z.number(), lcl: z.number(), ucl: z.number() });

/** The error body every 4xx and 5xx answer carries. */
export const errorBody = z.object({
  error: z.string(),
  message: z.string(),
  issues: z.array(z.strictObject({ field: z.string(), message: z.string() })).optional(),
});

/** Why and since when a line stands still, and who stopped it. */
export const lineStopSchema = z.strictObject({
  reason: z.enum(STOP_REASONS),
  note: z.string().nullable(),
  since: instant,
  by: z.string(),
});
export type LineStopView = z.output<typeof lineStopSchema>;

/** How often the enabled rules would fire on an in-control process, by simulation. */
export const falseAlarmSchema = z.strictObject({
  arlChecks: z.number(),
  standardError: z.number(),
  intervalMinutes: z.number(),
  words: z.string(),
  method: z.string(),
});
