import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import type { z } from 'zod';
import { ADMIN, BOARD_READ, requireActor } from '../auth/access.js';
import { actorName } from '../auth/service.js';
import type { HeftContext } from '../context.js';
import { badField, notFound } from '../errors.js';
import { productAnswer, productBody, productListAnswer, productParams, productPatch, productVersionsAnswer } from './contract.js';
import { productView } from './views.js';
import type { Product, ProductFields } from './repository.js';
import { createProductService } from './service.js';

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

export const productsPlugin: FastifyPluginAsync<{ ctx: HeftContext }> = async (fastify, { ctx }) => {
  const app = fastify.withTypeProvider<ZodTypeProvider>();
  const { repos } = ctx;
  const products = createProductService(ctx);

  app.get('/api/products', { config: { roles: BOARD_READ }, schema: { response: { 200: productListAnswer } } }, async () => ({ products: repos.products.list().map(productView) }));

  app.get('/api/products/:productId', { config: { roles: BOARD_READ }, schema: { params: productParams, response: { 200: productAnswer } } }, async (req) => {
    const product = repos.products.get(req.params.productId);
    if (!product) throw notFound(`product ${req.params.productId}`);
    return { product: productView(product) };
  });

  app.get('/api/products/:productId/versions', { config: { roles: BOARD_READ }, schema: { params: productParams, response: { 200: productVersionsAnswer } } }, async (req) => {
    if (!repos.products.get(req.params.productId)) throw notFound(`product ${req.params.productId}`);
    const versions = repos.products.versions(req.params.productId);
    return { versions: versions.map((v) => ({ version: v.version, validFrom: new Date(v.validFrom).toISOString(), product: productView(v.product) })) };
  });

  app.post('/api/products', { config: { roles: ADMIN }, schema: { body: productBody, response: { 201: productAnswer } } }, async (req, reply) => {
    const product = products.create(toFields(req.body), actorName(requireActor(req)));
    return reply.code(201).send({ product: productView(product) });
  });

  app.patch('/api/products/:productId', { config: { roles: ADMIN }, schema: { params: productParams, body: productPatch, response: { 200: productAnswer } } }, async (req) => {
    const merge = (before: Product) => toFields({ ...productView(before), ...req.body } as ProductInput, before);
    return { product: productView(products.update(req.params.productId, merge, productView, actorName(requireActor(req)))) };
  });
};
