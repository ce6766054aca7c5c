import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { ADMIN, BOARD_READ, requireActor, SIGNED_IN } from '../auth/access.js';
import { actorName } from '../auth/service.js';
import type { HeftContext } from '../context.js';
import { lineParams } from '../lines/contract.js';
import { scaleAnswer, scaleLinesAnswer, scaleProfileBody, scaleTryAnswer, scaleTryBody } from './contract.js';
import { createScaleRepository } from './repository.js';
import { createScaleService } from './service.js';

export const scalesPlugin: FastifyPluginAsync<{ ctx: HeftContext }> = async (fastify, { ctx }) => {
  const app = fastify.withTypeProvider<ZodTypeProvider>();
  const scales = createScaleService({ ...ctx, scales: createScaleRepository(ctx.db) });

  app.get('/api/lines/:lineId/scale', { config: { roles: [...BOARD_READ, 'checks-token'] }, schema: { params: lineParams, response: { 200: scaleAnswer } } }, async (req) => ({
    scale: scales.view(req.params.lineId),
  }));

  app.put('/api/lines/:lineId/scale', { config: { roles: ADMIN }, schema: { params: lineParams, body: scaleProfileBody, response: { 200: scaleAnswer } } }, async (req) => ({
    scale: scales.replace(req.params.lineId, req.body, actorName(requireActor(req))),
  }));

  app.post('/api/lines/:lineId/scale/try', { config: { roles: SIGNED_IN }, schema: { params: lineParams, body: scaleTryBody, response: { 200: scaleTryAnswer } } }, async (req) => ({
    reading: scales.tryReading(req.params.lineId, req.body.sample, req.body),
  }));

  app.get('/api/scale-lines', { config: { roles: [...SIGNED_IN, 'checks-token'], tokenLinesInHandler: true }, schema: { response: { 200: scaleLinesAnswer } } }, async (req) => ({
    lines: scales.linesFor(requireActor(req)),
  }));
};
