import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { ADMIN, requireActor, SIGNED_IN } from '../auth/access.js';
import { actorName } from '../auth/service.js';
import type { HeftContext } from '../context.js';
import { calendarAnswer, calendarBody } from './contract.js';

export const calendarPlugin: FastifyPluginAsync<{ ctx: HeftContext }> = async (fastify, { ctx }) => {
  const app = fastify.withTypeProvider<ZodTypeProvider>();
  const { calendar } = ctx;

  app.get('/api/calendar', { config: { roles: SIGNED_IN }, schema: { response: { 200: calendarAnswer } } }, async () => ({ calendar: calendar.view() }));

  // the whole calendar at once: shifts and planned non-working days; the lines follow at the next sweep
  app.put('/api/calendar', { config: { roles: ADMIN }, schema: { body: calendarBody, response: { 200: calendarAnswer } } }, async (req) => {
    calendar.replace(req.body.shifts, req.body.closedDays, actorName(requireActor(req)));
    calendar.sweep();
    return { calendar: calendar.view() };
  });
};
