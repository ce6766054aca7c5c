import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { requireActor } from '../auth/access.js';
import { actorName } from '../auth/service.js';
import type { HeftContext } from '../context.js';
import { lineParams } from '../lines/contract.js';
import { packsAnswer, packsBody } from './contract.js';

export const checkweigherPlugin: FastifyPluginAsync<{ ctx: HeftContext }> = async (fastify, { ctx }) => {
  const app = fastify.withTypeProvider<ZodTypeProvider>();
  const { commits, checkweigher } = ctx;

  app.post(
    '/api/lines/:lineId/packs',
    {
      config: { roles: ['operator', 'supervisor', 'quality', 'admin', 'checks-token'] },
      // a checkweigher's post of up to 2,000 packs is larger than a check
      bodyLimit: 512 * 1024,
      schema: { params: lineParams, body: packsBody, response: { '2xx': packsAnswer } },
    },
    async (req, reply) => {
      const actor = actorName(requireActor(req));
      const result = await commits.submit(() => checkweigher.receive(req.params.lineId, req.body, actor), req);
      return reply.code(result.created ? 201 : 200).send(result);
    },
  );
};
