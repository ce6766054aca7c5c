import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { QUALITY_UP } from '../auth/access.js';
import type { HeftContext } from '../context.js';
import { toIso } from '../clock.js';
import { auditAnswer, auditQuery } from './contract.js';

export const auditPlugin: FastifyPluginAsync<{ ctx: HeftContext }> = async (fastify, { ctx }) => {
  const app = fastify.withTypeProvider<ZodTypeProvider>();
  app.get('/api/audit', { config: { roles: QUALITY_UP }, schema: { querystring: auditQuery, response: { 200: auditAnswer } } }, async (req) => ({
    entries: ctx.repos.audit.list(req.query).map((e) => ({ ...e, at: toIso(e.at) })),
  }));
};
