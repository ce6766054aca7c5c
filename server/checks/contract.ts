import { z } from 'zod';
import { alertSummarySchema, alertViewSchema, checkSignalViewSchema } from '../alerts/contract.js';
import { productViewSchema } from '../products/contract.js';
import { falseAlarmSchema, inference, instant, instantOrNull, lineStatus, meanChartLimits, sampleSummary, spreadChartLimits, lineStopSchema } from '../shared/contract.js';
import { freeText, isoTime, rangeQuery } from '../shared/schemas.js';
import { CHECK_SOURCES } from './repository.js';

/** What the checks and status routes take and answer (API.md, "Check entry" and "Status"). */

export const checkBody = z.strictObject({
  weights: z
    .array(z.number().finite().positive().max(1_000_000), 'a list of 1 to 50 weights')
    .min(1, 'at least one weight')
    .max(50, 'at most 50 weights'),
  clientId: z.uuid('a UUID made by the client'),
  takenAt: isoTime.optional(),
  basis: z.enum(['net', 'gross']).optional(),
  note: freeText(500).nullable().optional(),
  confirmSuspect: z.boolean().optional(),
  /** Where the weights came from (a checkweigher's checks are formed by POST /api/lines/:lineId/packs). */
  source: z.enum(['keyed', 'scale', 'bridge'], { error: 'one of keyed, scale, bridge' }).optional(),
});

export const correctionBody = z.strictObject({
  weights: checkBody.shape.weights,
  clientId: checkBody.shape.clientId,
  reason: freeText(500),
  basis: checkBody.shape.basis,
  confirmSuspect: checkBody.shape.confirmSuspect,
});

export const checkListQuery = rangeQuery.extend({ revisions: z.enum(['all', 'current']).default('current') });

/** A stored check with its own statistics and those of the window of checks it closes. */
export const checkViewSchema = z.strictObject({
  id: z.number(),
  lineId: z.number(),
  productId: z.number(),
  runId: z.number(),
  clientId: z.string(),
  takenAt: instant,
  recordedAt: instant,
  basis: z.enum(['net', 'gross']),
  weights: z.array(z.number()),
  grossWeights: z.array(z.number()).nullable(),
  n: z.number(),
  mean: z.number(),
  sd: z.number().nullable(),
  range: z.number(),
  ...inference,
  target: z.number(),
  belowT1: z.number(),
  belowT2: z.number(),
  revision: z.number(),
  revisesCheckId: z.number().nullable(),
  supersededBy: z.number().nullable(),
  revisionReason: z.string().nullable(),
  enteredBy: z.string().nullable(),
  source: z.enum(CHECK_SOURCES),
  note: z.string().nullable(),
  limitsVersionId: z.number().nullable(),
  window: z.strictObject({ checks: z.number(), n: z.number(), mean: z.number(), sd: z.number().nullable(), ...inference }),
});
export type CheckView = z.output<typeof checkViewSchema>;

/** A check's answer: the check, its own signals by alert, and a summary of each alert they touched. */
export const checkAnswer = z.strictObject({
  check: checkViewSchema,
  signals: z.array(checkSignalViewSchema),
  alerts: z.array(alertSummarySchema),
});
export type CheckAnswer = z.output<typeof checkAnswer>;

export const checkListAnswer = z.strictObject({ checks: z.array(checkViewSchema) });

/** The limits a line judges against now, and where they came from. */
export const limitsInForce = z.strictObject({
  source: z.enum(['product', 'approved']),
  versionId: z.number().nullable(),
  centre: z.number(),
  sigma: z.number(),
  meanChart: meanChartLimits,
  spreadChart: spreadChartLimits,
});


/** Where a line stands now: what the board and the entry page show. */
export const statusViewSchema = z.strictObject({
  line: z.strictObject({ id: z.number(), code: z.string(), name: z.string() }),
  state: lineStatus,
  product: productViewSchema.nullable(),
  run: z.strictObject({ id: z.number(), startedAt: instant }).nullable(),
  limits: limitsInForce.nullable(),
  window: sampleSummary.extend({ checks: z.number() }).nullable(),
  detectors: z
    .strictObject({
      points: z.number(),
      ewma: z.strictObject({ lambda: z.number(), L: z.number(), value: z.number() }).nullable(),
      cusum: z.strictObject({ k: z.number(), h: z.number(), upper: z.number(), lower: z.number() }).nullable(),
    })
    .nullable(),
  openAlerts: z.array(alertViewSchema),
  lastCheckAt: instantOrNull,
  /** False while the line stands still: then no check falls due. */
  running: z.boolean(),
  stop: lineStopSchema.nullable(),
  nextCheckDue: instantOrNull,
  overdue: z.boolean(),
  falseAlarm: falseAlarmSchema.nullable(),
  now: instant,
});
export type StatusView = z.output<typeof statusViewSchema>;

export const statusAnswer = z.strictObject({ status: statusViewSchema });
