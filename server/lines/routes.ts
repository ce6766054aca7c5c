import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { ADMIN, BOARD_READ, requireActor, SIGNED_IN, SUPERVISOR_UP } from '../auth/access.js';
import { stopView } from '../checks/status.js';
import { actorName } from '../auth/service.js';
import type { HeftContext } from '../context.js';
import { notFound } from '../errors.js';
import { productView } from '../products/views.js';
import { changeoverBody, lineAnswer, lineBody, lineListAnswer, lineParams, linePatch, stopBody, type LineView } from './contract.js';
import type { Line } from './repository.js';
import { createLineService } from './service.js';

export const linesPlugin: FastifyPluginAsync<{ ctx: HeftContext }> = async (fastify, { ctx }) => {
  const app = fastify.withTypeProvider<ZodTypeProvider>();
  const { repos, monitor } = ctx;
  const lines = createLineService(ctx);

  const lineView = (line: Line): LineView => {
    const state = monitor.lineState(line.id);
    return {
      id: line.id,
      code: line.code,
      name: line.name,
      packsPerHour: line.packsPerHour,
      continuous: line.continuous,
      product: state.product ? productView(state.product) : null,
      runId: state.run?.id ?? null,
      runStartedAt: state.run ? new Date(state.run.startedAt).toISOString() : null,
      status: state.product ? state.status : 'idle',
      running: state.stop === null,
      stop: stopView(state.stop),
    };
  };

  app.get('/api/lines', { config: { roles: BOARD_READ }, schema: { response: { 200: lineListAnswer } } }, async () => ({ lines: repos.lines.list().map(lineView) }));

  app.get('/api/lines/:lineId', { config: { roles: BOARD_READ }, schema: { params: lineParams, response: { 200: lineAnswer } } }, async (req) => {
    const line = repos.lines.get(req.params.lineId);
    if (!line) throw notFound(`line ${req.params.lineId}`);
    return { line: lineView(line) };
  });

  app.post('/api/lines', { config: { roles: ADMIN }, schema: { body: lineBody, response: { 201: lineAnswer } } }, async (req, reply) => {
    const line = lines.create({ code: req.body.code, name: req.body.name, packsPerHour: req.body.packsPerHour ?? null, continuous: req.body.continuous ?? false }, actorName(requireActor(req)));
    return reply.code(201).send({ line: lineView(line) });
  });

  app.patch('/api/lines/:lineId', { config: { roles: ADMIN }, schema: { params: lineParams, body: linePatch, response: { 200: lineAnswer } } }, async (req) => ({
    line: lineView(lines.update(req.params.lineId, req.body, actorName(requireActor(req)))),
  }));

  app.put(
    '/api/lines/:lineId/product',
    { config: { roles: SUPERVISOR_UP }, schema: { params: lineParams, body: changeoverBody, response: { 200: lineAnswer } } },
    async (req) => {
      const actor = actorName(requireActor(req));
      if (!repos.lines.get(req.params.lineId)) throw notFound(`line ${req.params.lineId}`);
      monitor.changeover(req.params.lineId, req.body.productId, actor);
      return { line: lineView(repos.lines.get(req.params.lineId) as Line) };
    },
  );

  // operators and supervisors stop their line for a break, cleaning and the like, and start it again
  app.post('/api/lines/:lineId/stop', { config: { roles: SIGNED_IN }, schema: { params: lineParams, body: stopBody, response: { 200: lineAnswer } } }, async (req) => {
    const line = repos.lines.get(req.params.lineId);
    if (!line) throw notFound(`line ${req.params.lineId}`);
    monitor.stopLine(line.id, req.body.reason, req.body.note ?? null, actorName(requireActor(req)));
    return { line: lineView(line) };
  });

  app.post('/api/lines/:lineId/start', { config: { roles: SIGNED_IN }, schema: { params: lineParams, response: { 200: lineAnswer } } }, async (req) => {
    const line = repos.lines.get(req.params.lineId);
    if (!line) throw notFound(`line ${req.params.lineId}`);
    monitor.startLine(line.id, actorName(requireActor(req)));
    return { line: lineView(line) };
  });
};
