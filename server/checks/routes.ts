import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { BOARD_READ, requireActor } from '../auth/access.js';
import { actorName } from '../auth/service.js';
import type { HeftContext } from '../context.js';
import { toIso } from '../clock.js';
import { notFound } from '../errors.js';
import { falseAlarmFigure } from '../monitor/false-alarm-cache.js';
import { alertViewFrom, checkView } from '../monitor/views.js';
import { productView } from '../products/routes.js';
import { freeText, idParam, isoTime, rangeQuery } from '../shared/schemas.js';
import { summarizeSample } from '../stats/sample-summary.js';

const lineParams = z.strictObject({ lineId: idParam });

export const checkBody = z.strictObject({
  weights: z
    .array(z.number().finite().positive().max(1_000_000), 'a list of 1 to 50 weights')
    .min(1, 'at least one weight')
    .max(50, 'at most 50 weights'),
  clientId: z.uuid('a UUID made by the client'),
  takenAt: isoTime.optional(),
  basis: z.enum(['net', 'gross']).optional(),
  note: freeText(500).nullable().optional(),
  confirmSuspect: z.boolean().optional(),
});

const correctionBody = z.strictObject({
  weights: checkBody.shape.weights,
  clientId: checkBody.shape.clientId,
  reason: freeText(500),
  basis: checkBody.shape.basis,
  confirmSuspect: checkBody.shape.confirmSuspect,
});

export const checksPlugin: FastifyPluginAsync<{ ctx: HeftContext }> = async (fastify, { ctx }) => {
  const app = fastify.withTypeProvider<ZodTypeProvider>();
  const { repos, monitor, clock, commits } = ctx;

  app.post(
    '/api/lines/:lineId/checks',
    {
      config: { roles: ['operator', 'supervisor', 'quality', 'admin', 'checks-token'] },
      schema: { params: lineParams, body: checkBody },
    },
    async (req, reply) => {
      const actor = requireActor(req);
      const result = await commits.submit(() => monitor.recordCheck(req.params.lineId, req.body, actorName(actor)));
      return reply.code(result.created ? 201 : 200).send({ check: result.check, signals: result.signals, alerts: result.alerts });
    },
  );

  app.post(
    '/api/checks/:checkId/revisions',
    {
      config: { roles: ['operator', 'supervisor', 'quality', 'admin'] },
      schema: { params: z.strictObject({ checkId: idParam }), body: correctionBody },
    },
    async (req, reply) => {
      const actor = actorName(requireActor(req));
      const result = await commits.submit(() => monitor.correctCheck(req.params.checkId, req.body, actor));
      return reply.code(result.created ? 201 : 200).send({ check: result.check, signals: result.signals, alerts: result.alerts });
    },
  );

  app.get(
    '/api/lines/:lineId/checks',
    {
      config: { roles: BOARD_READ },
      schema: { params: lineParams, querystring: rangeQuery.extend({ revisions: z.enum(['all', 'current']).default('current') }) },
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
      return { checks: checks.map(checkView) };
    },
  );

  app.get('/api/lines/:lineId/status', { config: { roles: BOARD_READ }, schema: { params: lineParams } }, async (req) => {
    const state = monitor.lineState(req.params.lineId);
    const { product, run } = state;
    const window = run && product ? repos.checks.latestOfRun(run.id, product.windowSize) : [];
    const pooled = window.flatMap((c) => c.weights);
    const set = state.ruleSet;
    return {
      status: {
        line: { id: state.line.id, code: state.line.code, name: state.line.name },
        state: product ? state.status : 'idle',
        product: product ? productView(product) : null,
        run: run ? { id: run.id, startedAt: toIso(run.startedAt) } : null,
        limits: state.limits,
        window:
          product && pooled.length > 0
            ? { checks: window.length, ...summarizeSample(pooled, product.target) }
            : null,
        detectors: state.limits
          ? {
              points: state.segment.count,
              ewma: set.enabled['ewma-shift'] ? { ...set.ewma, value: state.segment.ewma.value } : null,
              cusum: set.enabled['cusum-shift'] ? { ...set.cusum, upper: state.segment.cusum.upper, lower: state.segment.cusum.lower } : null,
            }
          : null,
        openAlerts: state.openAlerts.map((a) => alertViewFrom(repos.alerts, a)),
        lastCheckAt: toIso(state.lastCheckAt),
        nextCheckDue: toIso(state.nextCheckDue),
        overdue: state.overdue,
        falseAlarm: product && state.limits ? falseAlarmFigure(set, product.subgroupSize, product.samplingMinutes) : null,
        now: toIso(clock.now()),
      },
    };
  });
};
