import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { BOARD_READ, QUALITY_UP, requireActor } from '../auth/access.js';
import { actorName } from '../auth/service.js';
import type { HeftContext } from '../context.js';
import { toIso } from '../clock.js';
import { conflict, DomainError, notFound } from '../errors.js';
import { freeText, idParam, isoTime } from '../shared/schemas.js';
import {
  defaultSigmaMethod,
  estimateSigma,
  meanChartLimits,
  spreadChartLimits,
  type SigmaMethod,
} from '../stats/control-limits.js';
import type { LimitsVersion } from './repository.js';

const lineParams = z.strictObject({ lineId: idParam });
const method = z.enum(['rbar', 'sbar', 'pooled', 'mrbar']);
const baselineBody = z.strictObject({ from: isoTime, to: isoTime, method: method.optional() });
const approveBody = z.discriminatedUnion('basis', [
  z.strictObject({ basis: z.literal('baseline'), from: isoTime, to: isoTime, method: method.optional(), note: freeText(500).optional() }),
  z.strictObject({ basis: z.literal('standard'), centre: z.number().finite().positive(), sigma: z.number().finite().positive(), note: freeText(500).optional() }),
]);

export const MIN_BASELINE_CHECKS = 20;

const versionView = (v: LimitsVersion) => ({
  id: v.id,
  lineId: v.lineId,
  productId: v.productId,
  centre: v.centre,
  sigma: v.sigma,
  method: v.method,
  baselineFrom: toIso(v.baselineFrom),
  baselineTo: toIso(v.baselineTo),
  baselineChecks: v.baselineChecks,
  approvedBy: v.approvedBy,
  approvedAt: toIso(v.approvedAt),
  note: v.note,
});

export const limitsPlugin: FastifyPluginAsync<{ ctx: HeftContext }> = async (fastify, { ctx }) => {
  const app = fastify.withTypeProvider<ZodTypeProvider>();
  const { repos, monitor, clock, db } = ctx;

  /** Limits estimated from the running product's checks between from and to, with the baseline points that break them. */
  function propose(lineId: number, from: number, to: number, requested?: SigmaMethod) {
    const state = monitor.lineState(lineId);
    const { run, product } = state;
    if (!run || !product) throw conflict('no product is running on this line');
    if (to <= from) throw new DomainError(400, 'bad-request', 'to: must be after from', [{ field: 'to', message: 'must be after from' }]);
    const baseline = repos.checks.inRunBetween(run.id, from, to);
    if (baseline.length < MIN_BASELINE_CHECKS) {
      throw new DomainError(422, 'baseline-too-small', `the baseline holds ${baseline.length} checks of the running product; at least ${MIN_BASELINE_CHECKS} are needed`);
    }
    const chosen = requested ?? defaultSigmaMethod(product.subgroupSize);
    if (chosen !== 'mrbar' && baseline.every((c) => c.n < 2)) throw new DomainError(422, 'wrong-method', `${chosen} needs checks of two or more packs; use mrbar for individuals`);
    const estimate = estimateSigma(baseline, chosen);
    const model = { centre: estimate.centre, sigma: estimate.sigma };
    const breaking = baseline.flatMap((c) => {
      const mean = meanChartLimits(model, c.n);
      const spread = spreadChartLimits(model.sigma, c.n);
      const reasons: string[] = [];
      if (c.mean > mean.ucl) reasons.push('mean above the upper limit');
      if (c.mean < mean.lcl) reasons.push('mean below the lower limit');
      const spreadValue = spread.chart === 'S' ? c.sd : spread.chart === 'R' ? c.range : null;
      if (spreadValue !== null && spreadValue > spread.ucl) reasons.push(`${spread.chart === 'S' ? 'sd' : 'range'} above its upper limit`);
      return reasons.length ? [{ checkId: c.id, takenAt: toIso(c.takenAt), mean: c.mean, sd: c.sd, range: c.range, reasons }] : [];
    });
    return {
      lineId,
      productId: product.id,
      from: toIso(from),
      to: toIso(to),
      centre: estimate.centre,
      sigma: estimate.sigma,
      method: estimate.method,
      checks: estimate.checks,
      packs: estimate.packs,
      meanChart: meanChartLimits(model, product.subgroupSize),
      spreadChart: spreadChartLimits(model.sigma, product.subgroupSize),
      breaking,
    };
  }

  app.get('/api/lines/:lineId/limits', { config: { roles: BOARD_READ }, schema: { params: lineParams } }, async (req) => {
    if (!repos.lines.get(req.params.lineId)) throw notFound(`line ${req.params.lineId}`);
    return { limits: repos.limits.history(req.params.lineId).map(versionView) };
  });

  app.post(
    '/api/lines/:lineId/limits/proposal',
    { config: { roles: QUALITY_UP }, schema: { params: lineParams, body: baselineBody } },
    async (req) => ({ proposal: propose(req.params.lineId, req.body.from, req.body.to, req.body.method) }),
  );

  app.post(
    '/api/lines/:lineId/limits',
    { config: { roles: QUALITY_UP }, schema: { params: lineParams, body: approveBody } },
    async (req, reply) => {
      const actor = actorName(requireActor(req));
      const state = monitor.lineState(req.params.lineId);
      if (!state.product) throw conflict('no product is running on this line');
      const body = req.body;
      const fields =
        body.basis === 'baseline'
          ? (() => {
              const p = propose(req.params.lineId, body.from, body.to, body.method);
              return { centre: p.centre, sigma: p.sigma, method: p.method, baselineFrom: body.from, baselineTo: body.to, baselineChecks: p.checks };
            })()
          : { centre: body.centre, sigma: body.sigma, method: 'standard', baselineFrom: null, baselineTo: null, baselineChecks: null };
      const now = clock.now();
      // the version, its audit row and its live message commit together
      const { version, changed } = db.transaction(() => {
        const v = repos.limits.insert({ lineId: req.params.lineId, productId: state.product!.id, ...fields, approvedBy: actor, approvedAt: now, note: body.note ?? null });
        repos.audit.record({ at: now, actor, action: 'limits.approve', entity: 'line', entityId: req.params.lineId, after: versionView(v) });
        return { version: v, changed: monitor.limitsChanged(req.params.lineId) };
      }).immediate();
      changed.afterCommit();
      return reply.code(201).send({ limits: versionView(version) });
    },
  );
};
