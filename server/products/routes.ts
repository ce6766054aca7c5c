import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { ADMIN, BOARD_READ, requireActor } from '../auth/access.js';
import { actorName } from '../auth/service.js';
import type { HeftContext } from '../context.js';
import { badField, notFound } from '../errors.js';
import { code, freeText, idParam } from '../shared/schemas.js';
import { RULE_CATALOGUE, type RuleId } from '../stats/rules.js';
import type { Product, ProductFields } from './repository.js';
import { createProductService } from './service.js';

const ruleIds = RULE_CATALOGUE.map((r) => r.id) as [RuleId, ...RuleId[]];
const weight = z.number().finite().positive().max(1_000_000);

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
  unit: z.enum(['g', 'kg']),
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
const productBody = z.strictObject(productFields);
const productPatch = z.strictObject(productFields).partial();
const productParams = z.strictObject({ productId: idParam });

type ProductInput = z.output<typeof productBody>;

function toFields(input: ProductInput, base?: ProductFields): ProductFields {
  const fields: ProductFields = {
    code: input.code,
    name: input.name,
    nominal: input.nominal,
    unit: input.unit,
    target: input.target,
    subgroupSize: input.subgroupSize,
    samplingMinutes: input.samplingMinutes,
    tare: input.tare ?? base?.tare ?? 0,
    windowSize: input.windowSize ?? base?.windowSize ?? 10,
    sigma: input.sigma === undefined ? (base?.sigma ?? null) : input.sigma,
    lsl: input.lsl === undefined ? (base?.lsl ?? null) : input.lsl,
    usl: input.usl === undefined ? (base?.usl ?? null) : input.usl,
    entryBasis: input.entryBasis ?? base?.entryBasis ?? 'net',
    costPerKg: input.costPerKg === undefined ? (base?.costPerKg ?? null) : input.costPerKg,
    rules: input.rules ?? base?.rules ?? {},
  };
  if (fields.lsl !== null && fields.usl !== null && fields.lsl >= fields.usl) throw badField('usl', 'must be above lsl');
  if (fields.target > 2 * fields.nominal) throw badField('target', 'more than twice the nominal: check the unit');
  return fields;
}

/** A product as the API shows it, with its TNE, T1 and T2. */
export function productView(p: Product) {
  return {
    id: p.id,
    code: p.code,
    name: p.name,
    nominal: p.nominal,
    unit: p.unit,
    target: p.target,
    subgroupSize: p.subgroupSize,
    samplingMinutes: p.samplingMinutes,
    windowSize: p.windowSize,
    tare: p.tare,
    sigma: p.sigma,
    lsl: p.lsl,
    usl: p.usl,
    entryBasis: p.entryBasis,
    costPerKg: p.costPerKg,
    rules: p.rules,
    tne: p.tne,
    t1: p.t1,
    t2: p.t2,
  };
}

export const productsPlugin: FastifyPluginAsync<{ ctx: HeftContext }> = async (fastify, { ctx }) => {
  const app = fastify.withTypeProvider<ZodTypeProvider>();
  const { repos } = ctx;
  const products = createProductService(ctx);

  app.get('/api/products', { config: { roles: BOARD_READ } }, async () => ({ products: repos.products.list().map(productView) }));

  app.get('/api/products/:productId', { config: { roles: BOARD_READ }, schema: { params: productParams } }, async (req) => {
    const product = repos.products.get(req.params.productId);
    if (!product) throw notFound(`product ${req.params.productId}`);
    return { product: productView(product) };
  });

  app.post('/api/products', { config: { roles: ADMIN }, schema: { body: productBody } }, async (req, reply) => {
    const product = products.create(toFields(req.body), actorName(requireActor(req)));
    return reply.code(201).send({ product: productView(product) });
  });

  app.patch('/api/products/:productId', { config: { roles: ADMIN }, schema: { params: productParams, body: productPatch } }, async (req) => {
    const merge = (before: Product) => toFields({ ...productView(before), ...req.body } as ProductInput, before);
    return { product: productView(products.update(req.params.productId, merge, productView, actorName(requireActor(req)))) };
  });
};
