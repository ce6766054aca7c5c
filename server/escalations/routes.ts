import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { QUALITY_UP, requireActor } from '../auth/access.js';
import { actorName } from '../auth/service.js';
import type { HeftContext } from '../context.js';
import { badField, notFound } from '../errors.js';
import { escalationAnswer, escalationBody, escalationCreated, escalationListAnswer, escalationParams, escalationPatch } from './contract.js';
import { ruleView } from './views.js';

export const escalationsPlugin: FastifyPluginAsync<{ ctx: HeftContext }> = async (fastify, { ctx }) => {
  const app = fastify.withTypeProvider<ZodTypeProvider>();
  const { escalations, repos } = ctx;
  const knownLines = (ids: number[] | null | undefined) => {
    for (const id of ids ?? []) if (!repos.lines.get(id)) throw badField('lineIds', `no line ${id}`);
  };

  app.get('/api/escalations', { config: { roles: QUALITY_UP }, schema: { response: { 200: escalationListAnswer } } }, async () => ({ rules: escalations.rules().map(ruleView) }));

  app.post('/api/escalations', { config: { roles: QUALITY_UP }, schema: { body: escalationBody, response: { 201: escalationCreated } } }, async (req, reply) => {
    knownLines(req.body.lineIds);
    const { to, lineIds, ...rest } = req.body;
    const created = escalations.createRule({ ...rest, target: to, lineIds: lineIds ?? null }, actorName(requireActor(req)));
    return reply.code(201).send({ rule: ruleView(created.rule), secret: created.secret });
  });

  app.patch('/api/escalations/:id', { config: { roles: QUALITY_UP }, schema: { params: escalationParams, body: escalationPatch, response: { 200: escalationAnswer } } }, async (req) => {
    const before = escalations.getRule(req.params.id);
    if (!before) throw notFound(`escalation rule ${req.params.id}`);
    knownLines(req.body.lineIds);
    const { to, ...rest } = req.body;
    if (to !== undefined && !escalationBody.safeParse({ name: before.name, channel: before.channel, to, severity: before.severity, afterMinutes: before.afterMinutes }).success) {
      throw badField('to', `must be ${before.channel === 'email' ? 'an e-mail address' : 'an http:// or https:// address'}`);
    }
    return { rule: ruleView(escalations.updateRule(before.id, { ...rest, ...(to === undefined ? {} : { target: to }) }, actorName(requireActor(req)))) };
  });

  app.delete('/api/escalations/:id', { config: { roles: QUALITY_UP }, schema: { params: escalationParams } }, async (req, reply) => {
    escalations.deleteRule(req.params.id, actorName(requireActor(req)));
    return reply.code(204).send();
  });
};
