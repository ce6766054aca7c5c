import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { BOARD_READ, requireActor } from '../auth/access.js';
import { actorName } from '../auth/service.js';
import type { HeftContext } from '../context.js';
import { notFound } from '../errors.js';
import { checkView } from '../monitor/views.js';
import { idParam } from '../shared/schemas.js';
import { plainJson } from '../shared/serializers.js';
import { lineParams } from '../lines/contract.js';
import { lineStatusView } from './status.js';
import { checkAnswer, checkBody, checkListAnswer, checkListQuery, correctionBody, statusAnswer } from './contract.js';

export const checksPlugin: FastifyPluginAsync<{ ctx: HeftContext }> = async (fastify, { ctx }) => {
  const app = fastify.withTypeProvider<ZodTypeProvider>();
  const { repos, monitor, commits } = ctx;

  app.post(
    '/api/lines/:lineId/checks',
    {
      config: { roles: ['operator', 'supervisor', 'quality', 'admin', 'checks-token'] },
      schema: { params: lineParams, body: checkBody, response: { '2xx': checkAnswer } },
      serializerCompiler: plainJson,
    },
    async (req, reply) => {
      const actor = requireActor(req);
      const result = await commits.submit(() => monitor.recordCheck(req.params.lineId, req.body, actorName(actor)), req);
      return reply.code(result.created ? 201 : 200).send({ check: result.check, signals: result.signals, alerts: result.alerts });
    },
  );

  app.post(
    '/api/checks/:checkId/revisions',
    {
      config: { roles: ['operator', 'supervisor', 'quality', 'admin'] },
      schema: { params: z.strictObject({ checkId: idParam }), body: correctionBody, response: { '2xx': checkAnswer } },
      serializerCompiler: plainJson,
    },
    async (req, reply) => {
      const actor = actorName(requireActor(req));
      const result = await commits.submit(() => monitor.correctCheck(req.params.checkId, req.body, actor), req);
      return reply.code(result.created ? 201 : 200).send({ check: result.check, signals: result.signals, alerts: result.alerts });
    },
  );

  app.get(
    '/api/lines/:lineId/checks',
    {
      config: { roles: BOARD_READ },
      schema: { params: lineParams, querystring: checkListQuery, response: { 200: checkListAnswer } },
    },
    async (req) => {
      if (!repos.lines.get(req.params.lineId)) throw notFound(`line ${req.params.lineId}`);
      const checks = repos.checks.list({
        lineId: req.params.lineId,
        from: req.query.from,
        to: req.query.to,
        limit: req.query.limit,
        includeSuperseded: req.query.revisions === 'all',
      });
      return { checks: checks.map((c) => checkView(c, c)) };
    },
  );

  app.get('/api/lines/:lineId/status', { config: { roles: BOARD_READ }, schema: { params: lineParams, response: { 200: statusAnswer } } }, async (req) => {
    return { status: lineStatusView(ctx, req.params.lineId) };
  });
};
