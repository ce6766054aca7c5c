import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { ADMIN, BOARD_READ, requireActor, SUPERVISOR_UP } from '../auth/access.js';
import { actorName } from '../auth/service.js';
import type { HeftContext } from '../context.js';
import { conflict, notFound } from '../errors.js';
import { code, freeText, idParam } from '../shared/schemas.js';
import { productView } from '../products/routes.js';
import type { Line } from './repository.js';

const lineBody = z.strictObject({
  code,
  name: freeText(100),
  packsPerHour: z.number().positive().max(1_000_000).nullable().optional(),
});
const linePatch = lineBody.partial();
const lineParams = z.strictObject({ lineId: idParam });

export const linesPlugin: FastifyPluginAsync<{ ctx: HeftContext }> = async (fastify, { ctx }) => {
  const app = fastify.withTypeProvider<ZodTypeProvider>();
  const { repos, monitor, clock, db } = ctx;

  const lineView = (line: Line) => {
    const state = monitor.lineState(line.id);
    return {
      id: line.id,
      code: line.code,
      name: line.name,
      packsPerHour: line.packsPerHour,
      product: state.product ? productView(state.product) : null,
      runId: state.run?.id ?? null,
      runStartedAt: state.run ? new Date(state.run.startedAt).toISOString() : null,
      status: state.product ? state.status : 'idle',
    };
  };

  app.get('/api/lines', { config: { roles: BOARD_READ } }, async () => ({ lines: repos.lines.list().map(lineView) }));

  app.get('/api/lines/:lineId', { config: { roles: BOARD_READ }, schema: { params: lineParams } }, async (req) => {
    const line = repos.lines.get(req.params.lineId);
    if (!line) throw notFound(`line ${req.params.lineId}`);
    return { line: lineView(line) };
  });

  app.post('/api/lines', { config: { roles: ADMIN }, schema: { body: lineBody } }, async (req, reply) => {
    const actor = actorName(requireActor(req));
    const now = clock.now();
    if (repos.lines.list().some((l) => l.code === req.body.code)) throw conflict(`a line with code ${req.body.code} exists already`);
    const line = db.transaction(() => {
      const created = repos.lines.create({ code: req.body.code, name: req.body.name, packsPerHour: req.body.packsPerHour ?? null }, now);
      repos.audit.record({ at: now, actor, action: 'line.create', entity: 'line', entityId: created.id, after: created });
      return created;
    }).immediate();
    monitor.reloadLine(line.id);
    return reply.code(201).send({ line: lineView(line) });
  });

  app.patch('/api/lines/:lineId', { config: { roles: ADMIN }, schema: { params: lineParams, body: linePatch } }, async (req) => {
    const actor = actorName(requireActor(req));
    const before = repos.lines.get(req.params.lineId);
    if (!before) throw notFound(`line ${req.params.lineId}`);
    const next: Line = { ...before, ...req.body, packsPerHour: req.body.packsPerHour === undefined ? before.packsPerHour : req.body.packsPerHour };
    if (next.code !== before.code && repos.lines.list().some((l) => l.code === next.code)) throw conflict(`a line with code ${next.code} exists already`);
    const now = clock.now();
    const line = db.transaction(() => {
      const updated = repos.lines.update(next, now);
      repos.audit.record({ at: now, actor, action: 'line.update', entity: 'line', entityId: before.id, before, after: updated });
      return updated;
    }).immediate();
    monitor.reloadLine(line.id);
    return { line: lineView(line) };
  });

  app.put(
    '/api/lines/:lineId/product',
    { config: { roles: SUPERVISOR_UP }, schema: { params: lineParams, body: z.strictObject({ productId: idParam }) } },
    async (req) => {
      const actor = actorName(requireActor(req));
      if (!repos.lines.get(req.params.lineId)) throw notFound(`line ${req.params.lineId}`);
      monitor.changeover(req.params.lineId, req.body.productId, actor);
      return { line: lineView(repos.lines.get(req.params.lineId) as Line) };
    },
  );
};
