import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { QUALITY_UP } from '../auth/access.js';
import type { HeftContext } from '../context.js';
import { toIso } from '../clock.js';
import { isoTime } from '../shared/schemas.js';

export const auditPlugin: FastifyPluginAsync<{ ctx: HeftContext }> = async (fastify, { ctx }) => {
  const app = fastify.withTypeProvider<ZodTypeProvider>();
  app.get(
    '/api/audit',
    {
      config: { roles: QUALITY_UP },
      schema: {
        querystring: z.strictObject({
          from: isoTime.optional(),
          to: isoTime.optional(),
          entity: z.enum(['line', 'product', 'alert', 'user', 'token', 'check', 'sign-in']).optional(),
          limit: z.coerce.number().int().min(1).max(5000).default(500),
        }),
      },
    },
    async (req) => ({
      entries: ctx.repos.audit.list(req.query).map((e) => ({ ...e, at: toIso(e.at) })),
    }),
  );
};
