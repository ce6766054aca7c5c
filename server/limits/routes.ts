import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { BOARD_READ, QUALITY_UP, requireActor } from '../auth/access.js';
import { actorName } from '../auth/service.js';
import type { HeftContext } from '../context.js';
import { notFound } from '../errors.js';
import { lineParams } from '../lines/contract.js';
import { approveBody, baselineBody, limitsAnswer, limitsHistoryAnswer, proposalAnswer } from './contract.js';
import { createLimitsService, versionView } from './service.js';

export const limitsPlugin: FastifyPluginAsync<{ ctx: HeftContext }> = async (fastify, { ctx }) => {
  const app = fastify.withTypeProvider<ZodTypeProvider>();
  const { repos } = ctx;
  const limits = createLimitsService(ctx);

  app.get('/api/lines/:lineId/limits', { config: { roles: BOARD_READ }, schema: { params: lineParams, response: { 200: limitsHistoryAnswer } } }, async (req) => {
    if (!repos.lines.get(req.params.lineId)) throw notFound(`line ${req.params.lineId}`);
    return { limits: repos.limits.history(req.params.lineId).map(versionView) };
  });

  app.post(
    '/api/lines/:lineId/limits/proposal',
    { config: { roles: QUALITY_UP }, schema: { params: lineParams, body: baselineBody, response: { 200: proposalAnswer } } },
    async (req) => ({ proposal: limits.propose(req.params.lineId, req.body.from, req.body.to, req.body.method, req.body.exclude) }),
  );

  app.post(
    '/api/lines/:lineId/limits',
    { config: { roles: QUALITY_UP }, schema: { params: lineParams, body: approveBody, response: { 201: limitsAnswer } } },
    async (req, reply) => {
      const version = limits.approve(req.params.lineId, req.body, actorName(requireActor(req)));
      return reply.code(201).send({ limits: versionView(version) });
    },
  );
};
