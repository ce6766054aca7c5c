import { notificationView } from '../escalations/views.js';
import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { BOARD_READ, requireActor, SUPERVISOR_UP } from '../auth/access.js';
import { actorName } from '../auth/service.js';
import type { HeftContext } from '../context.js';
import { notFound } from '../errors.js';
import { alertView, alertViewFrom } from '../monitor/views.js';
import { acknowledgeBody, alertAnswer, alertListAnswer, alertListQuery, alertPageAnswer, alertParams, resolveBody,
  shelveBody, signalPageQuery } from './contract.js';

export const alertsPlugin: FastifyPluginAsync<{ ctx: HeftContext }> = async (fastify, { ctx }) => {
  const app = fastify.withTypeProvider<ZodTypeProvider>();
  const { repos, monitor } = ctx;

  app.get(
    '/api/alerts',
    {
      config: { roles: BOARD_READ },
      schema: {
        querystring: alertListQuery,
        response: { 200: alertListAnswer },
      },
    },
    async (req) => ({
      alerts: repos.alerts.list(req.query).map((a) => alertViewFrom(repos.alerts, a)),
    }),
  );

  // the alert in full with a page of its signals, newest page first: ?before=<signalId> pages back
  app.get(
    '/api/alerts/:id',
    {
      config: { roles: BOARD_READ },
      schema: {
        params: alertParams,
        querystring: signalPageQuery,
        response: { 200: alertPageAnswer },
      },
    },
    async (req) => {
      const alert = repos.alerts.get(req.params.id);
      if (!alert) throw notFound(`alert ${req.params.id}`);
      const page = repos.alerts.signalPage(alert.id, req.query.before ?? null, req.query.limit);
      const oldest = page[0];
      const more = oldest !== undefined && repos.alerts.signalPage(alert.id, oldest.id, 1).length > 0;
      return { alert: alertView(alert, page, repos.alerts.told(alert.id)), nextBefore: more ? (oldest?.id ?? null) : null, notifications: ctx.escalations.notificationsOf(alert.id).map(notificationView) };
    },
  );

  app.post(
    '/api/alerts/:id/acknowledge',
    { config: { roles: SUPERVISOR_UP }, schema: { params: alertParams, body: acknowledgeBody, response: { 200: alertAnswer } } },
    async (req) => ({ alert: monitor.acknowledge(req.params.id, req.body.note, actorName(requireActor(req))) }),
  );

  app.post(
    '/api/alerts/:id/shelve',
    { config: { roles: SUPERVISOR_UP }, schema: { params: alertParams, body: shelveBody, response: { 200: alertAnswer } } },
    async (req) => ({ alert: monitor.shelve(req.params.id, req.body.minutes, req.body.reason, actorName(requireActor(req))) }),
  );

  app.post(
    '/api/alerts/:id/resolve',
    {
      config: { roles: SUPERVISOR_UP },
      schema: { params: alertParams, body: resolveBody, response: { 200: alertAnswer } },
    },
    async (req) => ({ alert: monitor.resolve(req.params.id, req.body.cause, req.body.action, actorName(requireActor(req))) }),
  );
};
