import { z } from 'zod';
import { instant, instantOrNull, meanChartLimits, spreadChartLimits } from '../shared/contract.js';
import { freeText, isoTime } from '../shared/schemas.js';

/** What the limits routes take and answer (API.md, "Limits"). */

export const sigmaMethod = z.enum(['rbar', 'sbar', 'pooled', 'mrbar']);
/** A baseline check left out of the estimate, and why (a known upset, a trial run …). */
const exclusion = z.strictObject({ checkId: z.number().int().positive(), reason: freeText(200) });
const exclusions = z.array(exclusion).max(1000);
export const baselineBody = z.strictObject({ from: isoTime, to: isoTime, method: sigmaMethod.optional(), exclude: exclusions.optional() });
export const approveBody = z.discriminatedUnion('basis', [
  z.strictObject({ basis: z.literal('baseline'), from: isoTime, to: isoTime, method: sigmaMethod.optional(), exclude: exclusions.optional(), note: freeText(500).optional() }),
  z.strictObject({ basis: z.literal('standard'), centre: z.number().finite().positive(), sigma: z.number().finite().positive(), note: freeText(500).optional() }),
]);
export type ApproveBody = z.output<typeof approveBody>;

/** One approved version of a line's limits for one product. */
export const limitsVersionSchema = z.strictObject({
  id: z.number(),
  lineId: z.number(),
  productId: z.number(),
  centre: z.number(),
  sigma: z.number(),
  method: z.enum(['rbar', 'sbar', 'pooled', 'mrbar', 'standard']),
  baselineFrom: instantOrNull,
  baselineTo: instantOrNull,
  baselineChecks: z.number().nullable(),
  approvedBy: z.string(),
  approvedAt: instant,
  note: z.string().nullable(),
  excluded: z.array(z.strictObject({ checkId: z.number(), reason: z.string() })),
});
export type LimitsVersionView = z.output<typeof limitsVersionSchema>;

/** Limits estimated from a baseline, with the baseline's checks that break them. */
export const proposalSchema = z.strictObject({
  lineId: z.number(),
  productId: z.number(),
  from: instant,
  to: instant,
  centre: z.number(),
  sigma: z.number(),
  method: sigmaMethod,
  checks: z.number(),
  packs: z.number(),
  meanChart: meanChartLimits,
  spreadChart: spreadChartLimits,
  /** Every check of the baseline, for a chart: `excludedReason` set on those left out. */
  points: z.array(
    z.strictObject({ checkId: z.number(), takenAt: instant, n: z.number(), mean: z.number(), sd: z.number().nullable(), range: z.number(), excludedReason: z.string().nullable() }),
  ),
  breaking: z.array(
    z.strictObject({ checkId: z.number(), takenAt: instant, mean: z.number(), sd: z.number().nullable(), range: z.number(), reasons: z.array(z.string()) }),
  ),
});
export type Proposal = z.output<typeof proposalSchema>;

export const limitsHistoryAnswer = z.strictObject({ limits: z.array(limitsVersionSchema) });
export const limitsAnswer = z.strictObject({ limits: limitsVersionSchema });
export const proposalAnswer = z.strictObject({ proposal: proposalSchema });
