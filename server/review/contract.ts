import { STOP_REASONS } from '../lines/stops-repository.js';
import { z } from 'zod';
import { alertViewSchema } from '../alerts/contract.js';
import { productViewSchema } from '../products/contract.js';
import { instant, interval, unit } from '../shared/contract.js';
import { idParam, isoTime, reportRange } from '../shared/schemas.js';

/** What the review and comparison routes take and answer (API.md, "Review"). */

const lineList = z
  .string()
  .regex(/^\d+(,\d+)*$/, 'line ids separated by commas')
  .transform((s) => s.split(',').map(Number));
export const reviewQuery = z.strictObject({ ...reportRange, lineIds: lineList.optional() });

const period = z.strictObject({ from: isoTime, to: isoTime, operators: z.array(z.string().min(1).max(40)).max(50).optional() });
export const compareBody = z.strictObject({ lineId: idParam, productId: idParam.optional(), a: period, b: period });

const index = z.strictObject({ value: z.number(), ci95: interval });
const indices = {
  cp: index.nullable(),
  cpk: index,
  unavailable: z.strictObject({ cp: z.string().optional() }),
};
/** Cp and Cpk from the within-subgroup σ and from all packs together, or why none is given. */
export const capabilitySchema = z.union([
  z.strictObject({ refused: z.string() }),
  z.strictObject({
    lsl: z.number(),
    usl: z.number().nullable(),
    /** σ in force; ν null when σ is taken as known (configured or set from a standard). */
    within: z.strictObject({ sigma: z.number(), source: z.string(), degreesOfFreedom: z.number().nullable(), interval: z.string(), ...indices }),
    overall: z.strictObject({ sigma: z.number(), degreesOfFreedom: z.number(), interval: z.string(), ...indices }),
  }),
]);
export type CapabilityView = z.output<typeof capabilitySchema>;

/** Where the packs stand against the average system's three tests. */
export const netQuantitySchema = z.strictObject({
  packs: z.number(),
  mean: z.number(),
  meetsMean: z.boolean(),
  belowT1: z.number(),
  shareBelowT1: z.number(),
  estimatedShareBelowT1: z.number().nullable(),
  meetsT1: z.boolean(),
  meetsT1Estimated: z.boolean().nullable(),
  belowT2: z.number(),
  meetsT2: z.boolean(),
  meetsAll: z.boolean(),
});

export const productSectionSchema = z.strictObject({
  product: productViewSchema.pick({ id: true, code: true, name: true, nominal: true, unit: true, target: true, tne: true, t1: true, t2: true, lsl: true, usl: true, costPerKg: true }),
  checks: z.number(),
  packs: z.number(),
  mean: z.number().nullable(),
  sd: z.number().nullable(),
  capability: capabilitySchema,
  netQuantity: netQuantitySchema.nullable(),
  giveaway: z.strictObject({
    perPack: z.number().nullable(),
    percentOfNominal: z.number().nullable(),
    packsMade: z.number().nullable(),
    hoursRunning: z.number(),
    cost: z.number().nullable(),
  }),
  targetAdvice: z.strictObject({
    sigma: z.number().nullable(),
    lowestTarget: z.number().nullable(),
    rule: z.string(),
    savingPerPack: z.number().nullable(),
    saving: z.number().nullable(),
    /** The reference test on a lot of an hour's output at the advised target: its plan, the mean's allowance λ·σ and the chance to pass each criterion. */
    referenceTest: z
      .strictObject({
        lotSize: z.number().nullable(),
        sampleSize: z.number(),
        factor: z.number(),
        allowance: z.number(),
        passMean: z.number(),
        passCount: z.number(),
      })
      .nullable(),
  }),
  points: z.array(z.strictObject({ checkId: z.number(), at: instant, mean: z.number(), n: z.number(), sd: z.number().nullable(), range: z.number() })),
  limits: z.strictObject({ centre: z.number(), sigma: z.number() }).nullable(),
  /** The part of the range this section covers and the settings that judged it: a change of either starts a new section. */
  settings: z.strictObject({ from: instant, to: instant, productVersion: z.number(), productVersionFrom: instant, limitsVersion: z.number().nullable() }),
});
export type ProductSection = z.output<typeof productSectionSchema>;

/** An alert of the range with how long it took to see to. */
export const reviewEventSchema = alertViewSchema.extend({ minutesToAcknowledge: z.number().nullable(), minutesToResolve: z.number().nullable() });

export const lineSectionSchema = z.strictObject({
  line: z.strictObject({ id: z.number(), code: z.string(), name: z.string(), packsPerHour: z.number().nullable() }),
  /** Hours making product (a product running and the line not stopped) against hours stopped, by reason. */
  running: z.strictObject({
    hoursRunning: z.number(),
    hoursStopped: z.number(),
    stopped: z.array(z.strictObject({ reason: z.enum(STOP_REASONS), stops: z.number(), hours: z.number() })),
  }),
  sampling: z.strictObject({ checksTaken: z.number(), checksDue: z.number(), kept: z.boolean() }),
  events: z.array(reviewEventSchema),
  medianMinutesToAcknowledge: z.number().nullable(),
  medianMinutesToResolve: z.number().nullable(),
  /** Shift alerts against the rule set's predicted false alarms, and the alarm-load figures (EEMUA 191 style) over every alert of the range. */
  alertLoad: z.strictObject({
    days: z.number(),
    shiftAlerts: z.number(),
    perDay: z.number(),
    predictedFalseAlarmsPerDay: z.number(),
    /** False alarms the rule set's ARL₀ predicts for the checks due in the hours actually running. */
    predictedFalseAlarmsWhileRunning: z.number(),
    alerts: z.number(),
    alertsPerDay: z.number(),
    per10Minutes: z.number(),
    busiest10Minutes: z.number(),
    floodShare: z.number(),
    standingOver24h: z.number(),
    topRuleCombinations: z.array(z.strictObject({ rules: z.array(z.string()), alerts: z.number() })),
    bySeverity: z.array(z.strictObject({ severity: z.enum(['watch', 'act']), alerts: z.number(), medianMinutesToAcknowledge: z.number().nullable(), medianMinutesToResolve: z.number().nullable() })),
    note: z.string(),
  }),
  operators: z.array(z.strictObject({ name: z.string(), checks: z.number() })),
  products: z.array(productSectionSchema),
});
export type LineSection = z.output<typeof lineSectionSchema>;

export const reviewSchema = z.strictObject({ from: instant, to: instant, timeZone: z.string(), lines: z.array(lineSectionSchema) });
export type Review = z.output<typeof reviewSchema>;

const moments = z.strictObject({ n: z.number(), mean: z.number(), sd: z.number() });
/** Two periods (or crews) of one line and product side by side: Welch's t on the means and an F-test of the spread. */
export const comparisonSchema = z.strictObject({
  line: z.strictObject({ id: z.number(), code: z.string() }),
  product: z.strictObject({ id: z.number(), code: z.string(), unit }),
  a: moments,
  b: moments,
  welch: z.strictObject({ difference: z.number(), t: z.number(), df: z.number(), p: z.number(), ci95: interval }),
  fTest: z.strictObject({ f: z.number(), df1: z.number(), df2: z.number(), p: z.number() }),
  words: z.string(),
});
export type Comparison = z.output<typeof comparisonSchema>;

export const reviewAnswer = z.strictObject({ review: reviewSchema });
export const comparisonAnswer = z.strictObject({ comparison: comparisonSchema });
