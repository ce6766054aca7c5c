import { z } from 'zod';
import { instant, instantOrNull, meanChartLimits, spreadChartLimits } from '../shared/contract.js';
import { freeText, isoTime } from '../shared/schemas.js';

/** What the limits routes take and answer (API.md, "Limits"). */

export const sigmaMethod = z.enum(['rbar', 'sbar', 'pooled', 'mrbar']);
export const baselineBody = z.strictObject({ from: isoTime, to: isoTime, method: sigmaMethod.optional() });
export const approveBody = z.discriminatedUnion('basis', [
  z.strictObject({ basis: z.literal('baseline'), from: isoTime, to: isoTime, method: sigmaMethod.optional(), note: freeText(500).optional() }),
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
  breaking: z.array(
    z.strictObject({ checkId: z.number(), takenAt: instant, mean: z.number(), sd: z.number().nullable(), range: z.number(), reasons: z.array(z.string()) }),
  ),
});
export type Proposal = z.output<typeof proposalSchema>;

export const limitsHistoryAnswer = z.strictObject({ limits: z.array(limitsVersionSchema) });
export const limitsAnswer = z.strictObject({ limits: limitsVersionSchema });
export const proposalAnswer = z.strictObject({ proposal: proposalSchema });
