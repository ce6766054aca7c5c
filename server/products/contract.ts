import { z } from 'zod';
import { code, freeText, idParam } from '../shared/schemas.js';
import { falseAlarmSchema, instant, unit } from '../shared/contract.js';
import { RULE_CATALOGUE, type RuleId } from '../stats/rules.js';

/** What the products routes take and answer (API.md, "Product"). */

const ruleIds = RULE_CATALOGUE.map((r) => r.id) as [RuleId, ...RuleId[]];
const weight = z.number().finite().positive().max(1_000_000);

/** A product's departures from the rule catalogue's defaults. */
export const ruleOverrides = z.strictObject({
  rules: z
    .partialRecord(z.enum(ruleIds), z.strictObject({ enabled: z.boolean().optional(), severity: z.enum(['act', 'watch']).optional() }))
    .optional(),
  runLength: z.union([z.literal(8), z.literal(9)]).optional(),
  ewma: z.strictObject({ lambda: z.number().gt(0).max(1).optional(), L: z.number().positive().max(10).optional() }).optional(),
  cusum: z.strictObject({ k: z.number().min(0).max(5).optional(), h: z.number().positive().max(50).optional() }).optional(),
});

const productFields = {
  code,
  name: freeText(100),
  nominal: weight,
  unit,
  target: weight,
  subgroupSize: z.number().int().min(1).max(50),
  samplingMinutes: z.number().int().min(1).max(24 * 60),
  tare: z.number().finite().min(0).max(1_000_000).optional(),
  windowSize: z.number().int().min(1).max(500).optional(),
  sigma: weight.nullable().optional(),
  lsl: weight.nullable().optional(),
  usl: weight.nullable().optional(),
  entryBasis: z.enum(['net', 'gross']).optional(),
  costPerKg: z.number().finite().min(0).max(1_000_000).nullable().optional(),
  rules: ruleOverrides.optional(),
};
export const productBody = z.strictObject(productFields);
export const productPatch = z.strictObject(productFields).partial();
export const productParams = z.strictObject({ productId: idParam });

/** A product as the API shows it, with the TNE, T1 and T2 its nominal gives. */
export const productViewSchema = z.strictObject({
  id: z.number(),
  code: z.string(),
  name: z.string(),
  nominal: z.number(),
  unit,
  target: z.number(),
  subgroupSize: z.number(),
  samplingMinutes: z.number(),
  windowSize: z.number(),
  tare: z.number(),
  sigma: z.number().nullable(),
  lsl: z.number().nullable(),
  usl: z.number().nullable(),
  entryBasis: z.enum(['net', 'gross']),
  costPerKg: z.number().nullable(),
  rules: ruleOverrides,
  tne: z.number().nullable(),
  t1: z.number().nullable(),
  t2: z.number().nullable(),
  /** The settings version in force now; every change of a setting makes the next one. */
  version: z.number().int(),
});
export type ProductView = z.output<typeof productViewSchema>;

export const productAnswer = z.strictObject({ product: productViewSchema });
/** Every settings version of a product, oldest first, with the time each came into force. */
export const productVersionsAnswer = z.strictObject({
  versions: z.array(z.strictObject({ version: z.number().int(), validFrom: instant, product: productViewSchema })),
});
export const productListAnswer = z.strictObject({ products: z.array(productViewSchema) });

/** What an imported file did: the codes created and the codes changed (mode=update), in file order. */
export const productImportAnswer = z.strictObject({ created: z.array(z.string()), updated: z.array(z.string()) });

/** What the set-up form shows as the user types: the figures Heft derives from a nominal (and σ). */
export const productPreviewBody = z.strictObject({
  nominal: weight,
  unit,
  subgroupSize: z.number().int().min(1).max(50).optional(),
  sigma: weight.nullable().optional(),
});
export const productPreviewSchema = z.strictObject({
  tne: z.number().nullable(),
  t1: z.number().nullable(),
  t2: z.number().nullable(),
  /** σ/√n: the spread of a check's mean. */
  sigmaOfMean: z.number().nullable(),
  /** max(Qn, T1 + 1.96σ, T2 + 3.72σ): the lowest target the review would advise for this σ. */
  lowestTarget: z.number().nullable(),
});
export type ProductPreview = z.output<typeof productPreviewSchema>;
export const productPreviewAnswer = z.strictObject({ preview: productPreviewSchema });

/** A rule choice to judge before saving it: the false-alarm interval at this check size and interval. */
export const falseAlarmBody = z.strictObject({
  rules: ruleOverrides.optional(),
  subgroupSize: z.number().int().min(1).max(50),
  samplingMinutes: z.number().int().min(1).max(24 * 60),
});
/** `working`: the simulation runs between the server's other work, ask again; `busy`: too many at once, ask again shortly. */
export const falseAlarmAnswer = z.strictObject({
  falseAlarm: z.strictObject({
    state: z.enum(['ready', 'working', 'busy']),
    runsDone: z.number(),
    runs: z.number(),
    figure: falseAlarmSchema.nullable(),
  }),
});

