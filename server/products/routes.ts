import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { BOARD_READ, QUALITY_UP, requireActor } from '../auth/access.js';
import { netQuantityLimits } from '../stats/tne.js';
import { lowestTarget } from '../stats/net-quantity.js';
import { actorName } from '../auth/service.js';
import type { HeftContext } from '../context.js';
import { badField, notFound } from '../errors.js';
import { productAnswer, productBody, productImportAnswer, productListAnswer, productPreviewAnswer, productPreviewBody, falseAlarmAnswer, falseAlarmBody, productParams, productPatch, productVersionsAnswer } from './contract.js';
import { productView } from './views.js';
import type { Product } from './repository.js';
import { toFields, type ProductInput } from './fields.js';
import { importProducts } from './import.js';
import { createProductService } from './service.js';
import { falseAlarmProgress } from '../monitor/false-alarm-cache.js';
import { resolveRuleSet } from '../stats/rule-set.js';

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

  app.post('/api/products', { config: { roles: QUALITY_UP }, schema: { body: productBody, response: { 201: productAnswer } } }, async (req, reply) => {
    const product = products.create(toFields(req.body), actorName(requireActor(req)));
    return reply.code(201).send({ product: productView(product) });
  });

  app.patch('/api/products/:productId', { config: { roles: QUALITY_UP }, schema: { params: productParams, body: productPatch, response: { 200: productAnswer } } }, async (req) => {
    const merge = (before: Product) => toFields({ ...productView(before), ...req.body } as ProductInput, before);
    return { product: productView(products.update(req.params.productId, merge, productView, actorName(requireActor(req)))) };
  });

  app.post('/api/products/preview', { config: { roles: QUALITY_UP }, schema: { body: productPreviewBody, response: { 200: productPreviewAnswer } } }, async (req) => {
    const { nominal, unit, subgroupSize, sigma } = req.body;
    const limits = netQuantityLimits(nominal, unit);
    const s = sigma ?? null;
    return {
      preview: {
        tne: limits?.tne ?? null,
        t1: limits?.t1 ?? null,
        t2: limits?.t2 ?? null,
        sigmaOfMean: s !== null && subgroupSize ? s / Math.sqrt(subgroupSize) : null,
        lowestTarget: limits && s !== null ? lowestTarget(nominal, limits.t1, limits.t2, s) : null,
      },
    };
  });

  app.post('/api/products/false-alarm', { config: { roles: QUALITY_UP }, schema: { body: falseAlarmBody, response: { 200: falseAlarmAnswer, 202: falseAlarmAnswer } } }, async (req, reply) => {
    const progress = falseAlarmProgress(resolveRuleSet(req.body.rules), req.body.subgroupSize, req.body.samplingMinutes);
    if (progress.state === 'ready') return { falseAlarm: { state: 'ready' as const, runsDone: progress.runs, runs: progress.runs, figure: progress.figure } };
    const runsDone = progress.state === 'working' ? progress.runsDone : 0;
    return reply.code(202).send({ falseAlarm: { state: progress.state, runsDone, runs: progress.runs, figure: null } });
  });

  // a spreadsheet of products: text/csv, read whole before anything is written
  app.addContentTypeParser('text/csv', { parseAs: 'string', bodyLimit: 8 * 1024 * 1024 }, (_req, body, done) => done(null, body));
  app.post(
    '/api/products/import',
    {
      config: { roles: QUALITY_UP },
      schema: { querystring: z.strictObject({ mode: z.enum(['create', 'update'], { error: 'create or update' }).default('create') }), response: { 201: productImportAnswer } },
    },
    async (req, reply) => {
      if (typeof req.body !== 'string') throw badRequestBody();
      return reply.code(201).send(importProducts(ctx, products, req.body, req.query.mode, actorName(requireActor(req))));
    },
  );
};

const badRequestBody = () => badField('body', 'send the file as text/csv');
