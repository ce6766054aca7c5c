import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { QUALITY_UP } from '../auth/access.js';
import type { HeftContext } from '../context.js';
import { idParam, isoTime, reportRange } from '../shared/schemas.js';
import { resolveRange } from './range.js';
import { createReviewService } from './service.js';

const lineList = z
  .string()
  .regex(/^\d+(,\d+)*$/, 'line ids separated by commas')
  .transform((s) => s.split(',').map(Number));

const period = z.strictObject({ from: isoTime, to: isoTime, operators: z.array(z.string().min(1).max(40)).max(50).optional() });

export const reviewPlugin: FastifyPluginAsync<{ ctx: HeftContext }> = async (fastify, { ctx }) => {
  const app = fastify.withTypeProvider<ZodTypeProvider>();
  const service = createReviewService(ctx);

  app.get(
    '/api/review',
    { config: { roles: QUALITY_UP }, schema: { querystring: z.strictObject({ ...reportRange, lineIds: lineList.optional() }) } },
    async (req) => {
      const { from, to } = resolveRange(req.query, ctx.clock.now(), ctx.config.timeZone);
      return { review: service.review(from, to, req.query.lineIds ?? null) };
    },
  );

  app.post(
    '/api/review/compare',
    { config: { roles: QUALITY_UP }, schema: { body: z.strictObject({ lineId: idParam, productId: idParam.optional(), a: period, b: period }) } },
    async (req) => ({ comparison: service.compare(req.body.lineId, req.body.a, req.body.b, req.body.productId) }),
  );
};
