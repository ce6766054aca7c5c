import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { QUALITY_UP } from '../auth/access.js';
import type { HeftContext } from '../context.js';
import { compareBody, comparisonAnswer, reviewAnswer, reviewQuery } from './contract.js';
import { resolveRange } from './range.js';
import { createReviewService } from './service.js';

export const reviewPlugin: FastifyPluginAsync<{ ctx: HeftContext }> = async (fastify, { ctx }) => {
  const app = fastify.withTypeProvider<ZodTypeProvider>();
  const service = createReviewService(ctx);

  app.get('/api/review', { config: { roles: QUALITY_UP }, schema: { querystring: reviewQuery, response: { 200: reviewAnswer } } }, async (req) => {
    const { from, to } = resolveRange(req.query, ctx.clock.now(), ctx.config.timeZone);
    return { review: service.review(from, to, req.query.lineIds ?? null) };
  });

  app.post('/api/review/compare', { config: { roles: QUALITY_UP }, schema: { body: compareBody, response: { 200: comparisonAnswer } } }, async (req) => ({
    comparison: service.compare(req.body.lineId, req.body.a, req.body.b, req.body.productId),
  }));
};
